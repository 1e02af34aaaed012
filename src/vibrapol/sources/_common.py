"""Pieces shared by the program readers: printed-value checks, text scanning, cclib, symbols."""

from __future__ import annotations

import io
import logging
import re
import warnings
from collections.abc import Iterable, Iterator
from typing import Any

import numpy as np
from ase.data import atomic_numbers

from vibrapol import invariants as inv
from vibrapol.errors import InputFormatError, PrintedValueMismatch


def check_printed(
    quantity: str,
    computed: np.ndarray,
    printed: np.ndarray,
    *,
    where: str,
    atol: float | np.ndarray,
    rtol: float | np.ndarray = 0.0,
    origin: str = "computed from the derivatives",
    reference: str = "the printed value",
    item: str = "mode",
) -> bool:
    """Warn with :class:`PrintedValueMismatch` when computed and printed values disagree.

    Parameters
    ----------
    quantity : str
        What is compared, as the warning names it ("Raman activity").
    computed, printed : ndarray
        vibrapol's values and the file's, one entry per ``item``; NaN entries on either side
        are skipped.
    where : str
        The file, first in the warning.
    atol, rtol : float or ndarray
        Tolerance ``|computed − printed| ≤ atol + rtol·|printed|``; arrays give one tolerance
        per entry (they broadcast against ``printed``).  They should express the print
        precision of the program (half a unit of the last printed digit, plus the rounding of
        the inputs).
    origin : str
        How vibrapol got its values, after the quantity in the warning ("" for nothing).
    reference : str
        What they are compared with.
    item : str
        What one entry is ("mode", "degenerate set", "value"), for the count and the index.

    Returns
    -------
    bool
        True when they agree.

    Warns
    -----
    PrintedValueMismatch
        "<where>: <quantity> <origin> disagrees with <reference> for <n> <item>(s) (first:
        <item> <k>, <computed> vs <printed>)", or a count mismatch when the shapes differ.
    """
    c = np.asarray(computed, dtype=float)
    p = np.asarray(printed, dtype=float)
    if c.shape != p.shape:
        warnings.warn(
            f"{where}: {quantity}: {c.size} computed values but {p.size} printed",
            PrintedValueMismatch,
            stacklevel=2,
        )
        return False
    ok = np.isfinite(c) & np.isfinite(p)
    bad = ok & (np.abs(c - p) > atol + rtol * np.abs(p))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        subject = f"{quantity} {origin}" if origin else quantity
        warnings.warn(
            f"{where}: {subject} disagrees with {reference} for {int(bad.sum())} {item}(s) "
            f"(first: {item} {i + 1}, {c.flat[i]:.6g} vs {p.flat[i]:.6g})",
            PrintedValueMismatch,
            stacklevel=2,
        )
        return False
    return True


def check_printed_rho(
    a2: np.ndarray,
    gamma2: np.ndarray,
    printed_rho: np.ndarray,
    printed_activity: np.ndarray,
    *,
    min_activity: float,
    where: str,
    atol: float,
) -> bool:
    """:func:`check_printed` for ρ (linear polarization), on modes with some printed activity.

    Programs print a ratio for every mode; where the printed activity is below
    ``min_activity`` (Å⁴/amu) it rests on too few digits to compare.
    """
    compare = np.asarray(printed_activity) >= min_activity
    return check_printed(
        "depolarization ratio",
        np.where(compare, inv.rho_linear(a2, gamma2), np.nan),
        np.where(compare, printed_rho, np.nan),
        where=where,
        atol=atol,
    )


def invariants_from_printed(
    activity: np.ndarray, rho_linear: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """a′², γ′² from a printed activity and ρ (linear), ignoring ρ of modes printed inactive.

    Programs print a ratio even where the activity is zero, where it means nothing; there the
    ratio is taken as unknown (NaN) before :func:`vibrapol.invariants.invariants_from_activity`.
    """
    activity = np.asarray(activity, dtype=float)
    rho = np.where(activity > 0.0, rho_linear, np.nan)
    return inv.invariants_from_activity(activity, rho)


def floats(line: str, where: str = "") -> list[float]:
    """Parse whitespace-separated numbers (Fortran 'D' exponents accepted)."""
    try:
        return [float(tok.replace("D", "E").replace("d", "e")) for tok in line.split()]
    except ValueError as exc:
        raise InputFormatError(f"{where}: expected numbers, got {line.strip()!r}") from exc


def find_line(lines: list[str], marker: str, start: int = 0, where: str = "") -> int:
    """Index of the first line at or after ``start`` that contains ``marker``.

    Raises
    ------
    InputFormatError
        If the marker does not occur (a truncated or different output).
    """
    for i in range(start, len(lines)):
        if marker in lines[i]:
            return i
    raise InputFormatError(
        f"{where}: block {marker.strip()!r} not found (truncated or different output?)"
    )


def iter_lines_with(lines: list[str], marker: str) -> Iterator[int]:
    """Indices of every line containing ``marker``."""
    return (i for i, line in enumerate(lines) if marker in line)


def last_line_with(lines: list[str], marker: str, stop: int | None = None) -> int | None:
    """Index of the last line before ``stop`` that contains ``marker``, or None."""
    return max(iter_lines_with(lines[:stop], marker), default=None)


def first_line_with(lines: list[str], marker: str) -> int | None:
    """Index of the first line that contains ``marker``, or None."""
    return next(iter_lines_with(lines, marker), None)


def truncated_error(where: str, what: str, subject: str = "the file") -> InputFormatError:
    """One-line error for a block that ends early or holds what it should not.

    Reads "<where>: <what>; <subject> looks truncated or edited (use the complete output of
    the frequency job)".
    """
    return InputFormatError(
        f"{where}: {what}; {subject} looks truncated or edited "
        "(use the complete output of the frequency job)"
    )


def atomic_numbers_from_symbols(symbols: Iterable[str], where: str) -> np.ndarray:
    """Atomic numbers of printed element symbols (``C``, ``CL``, ``H1``: letters only count).

    Raises
    ------
    InputFormatError
        For a symbol that names no element.
    """
    try:
        return np.array([atomic_numbers[re.sub(r"[^A-Za-z]", "", s).capitalize()] for s in symbols])
    except KeyError as exc:
        raise InputFormatError(
            f"{where}: unknown element symbol {exc.args[0]!r} in the coordinates"
        ) from exc


def parse_with_cclib(
    parser: str, text: str, where: str, *, required: Iterable[str], hint: str
) -> Any:
    """Parse ``text`` (the file ``where``, decoded) with cclib's parser class ``parser``.

    ``parser`` is a class name such as ``"GAMESS"``; ``text`` comes from :func:`read_text`, so
    any encoding and line ending it takes reaches cclib as plain text.

    cclib's log is kept in a buffer, not printed on the user's terminal.  A file that ends in
    the middle of a block (cclib only logs "end of logfile" then), any exception cclib raises,
    and a missing attribute among ``required`` all become one-line errors; ``hint`` ends the
    message for a missing attribute ("truncated output?").

    Returns
    -------
    cclib.parser.data.ccData
        cclib's parsed data (untyped: cclib ships no type stubs).
    """
    import cclib

    log = io.StringIO()
    try:
        reader = getattr(cclib.parser, parser)(io.StringIO(text, newline=None), logstream=log)
        # cclib keeps one logger per parser class and input name and only gives it a handler
        # the first time; without this, a later parse logs to an earlier call's stream.
        reader.logger.handlers = [logging.StreamHandler(log)]
        reader.logger.propagate = False
        data = reader.parse()
    except Exception as exc:  # cclib raises assorted errors on damaged files
        raise InputFormatError(
            f"{where}: cclib could not parse it ({type(exc).__name__}); is the output complete?"
        ) from exc
    if "end of logfile" in log.getvalue():
        raise InputFormatError(
            f"{where}: the file ends in the middle of a block (truncated output?)"
        )
    for attr in required:
        if not hasattr(data, attr):
            raise InputFormatError(f"{where}: no {attr} found ({hint})")
    return data
