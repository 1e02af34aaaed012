"""Warnings that a quantum-chemistry program prints about its own results, passed on.

A program that says its vibrational analysis is not valid, that an SCF did not converge or
that the geometry is not a stationary point has told its user something vibrapol must not
swallow.  Each reader lists the :class:`Rule` s of its program (the texts found in real outputs
or in cclib's parsers; each rule says where its text comes from) and calls
:func:`pass_on`, which warns once per distinct message with
:class:`~vibrapol.errors.AccuracyWarning` and returns provenance notes with the same words.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from vibrapol.errors import AccuracyWarning

#: Longest program message passed on (characters); longer ones are cut with "...".
MAX_MESSAGE = 240


@dataclass(frozen=True)
class Rule:
    """A printed warning: a line containing ``marker`` and the lines that continue it.

    Attributes
    ----------
    marker : str
        Text of the first line (matched case-sensitively, as the program prints it).
    extra_lines : int
        Following lines that belong to the message (joined with " / ", blank ones and
        decoration lines of ``*``, ``-`` or ``=`` skipped).
    source : str
        Where the text is known from (a real output, a cclib parser, or "from memory").
    unless : str
        Regular expression; a line with the marker that matches it is not a warning (Q-Chem
        prints "This Molecule has  0 Imaginary Frequencies" for every minimum).
    """

    marker: str
    extra_lines: int = 0
    source: str = ""
    unless: str = ""

    def matches(self, line: str) -> bool:
        """True when ``line`` starts this warning."""
        return self.marker in line and not (self.unless and re.search(self.unless, line))


@dataclass(frozen=True)
class ProgramWarning:
    """One distinct message: its text, the 1-based line of its first occurrence, a count."""

    text: str
    line: int
    count: int


_DECORATION = re.compile(r"^[\s*=\-_#@]*$")


def _clean(line: str) -> str:
    """A printed line without its box decoration (``*  TEXT  *``) and runs of spaces."""
    text = line.strip()
    if len(text) > 1 and text.startswith("*") and text.endswith("*"):
        text = text.strip("*").strip()
    return re.sub(r"\s+", " ", text)


def find_program_warnings(
    lines: Sequence[str], rules: Iterable[Rule], start: int = 0, stop: int | None = None
) -> list[ProgramWarning]:
    """Messages of ``rules`` printed between ``start`` and ``stop``, in order of appearance.

    A message printed several times (GAMESS prints its stationary-point box twice) is
    reported once, with its count.
    """
    rules = tuple(rules)
    stop = len(lines) if stop is None else stop
    found: dict[str, ProgramWarning] = {}
    for i in range(start, stop):
        rule = next((r for r in rules if r.matches(lines[i])), None)
        if rule is None:
            continue
        parts = [_clean(lines[i])]
        j = i + 1
        taken = 0
        while taken < rule.extra_lines and j < min(stop, i + 1 + 3 * rule.extra_lines):
            if not _DECORATION.match(lines[j]):
                parts.append(_clean(lines[j]))
                taken += 1
            j += 1
        text = " / ".join(p for p in parts if p)
        if len(text) > MAX_MESSAGE:
            text = text[: MAX_MESSAGE - 3] + "..."
        if text in found:
            old = found[text]
            found[text] = ProgramWarning(text, old.line, old.count + 1)
        else:
            found[text] = ProgramWarning(text, i + 1, 1)
    return sorted(found.values(), key=lambda w: w.line)


def pass_on(
    found: Iterable[ProgramWarning], *, where: str, program: str, stacklevel: int = 3
) -> tuple[str, ...]:
    """Warn once per message and return the provenance notes that record them.

    Each warning reads "<where>: <program> printed a warning about its results at line <n>:
    <text>" (plus "(printed <k> times)"); the note says the same without the file name.

    Warns
    -----
    AccuracyWarning
        For every message in ``found``.
    """
    notes = []
    for w in found:
        times = f" (printed {w.count} times)" if w.count > 1 else ""
        note = f"{program} printed a warning about its results at line {w.line}: {w.text}{times}"
        warnings.warn(f"{where}: {note}", AccuracyWarning, stacklevel=stacklevel)
        notes.append(note)
    return tuple(notes)
