"""The GAMESS family (GAMESS-US, PC GAMESS, Firefly): who wrote a file, and its mode table.

(The tensor blocks and the option echo are read in :mod:`._gamess_tensors`.)

The family shares its origin and most of its printing; what differs between members and
versions, and how each variant is read:

======================  ================================================================
block                   variants
======================  ================================================================
banner                  ``Firefly version 8.0.1, build number 8540`` (real output);
                        ``PC GAMESS version 6.2, build number ...``; ``GAMESS VERSION =
                        30 SEP 2019 (R2)`` (GAMESS-US).  Only names the member: the family
                        is recognised by its ``$CONTRL OPTIONS`` echo and its normal
                        coordinate analysis (:func:`sniff`).
mode-table headings     ``RAMAN ACTIVITIES  IN ANGSTROM**4/AMU`` (Firefly 8, real);
                        ``RAMAN INTENSITIES IN ANGSTROM**4/AMU`` (PC GAMESS 6.2): the unit
                        shows both are activities 45a′² + 7γ′².
mode-table rows         ``RAMAN ACTIVITY:`` or ``RAMAN INTENSITY:`` (PC GAMESS 6.2);
                        ``SYMMETRY:`` (GAMESS-US, newer versions) and ``REDUCED MASS:``
                        (absent in PC GAMESS without Raman) are optional; ``IR
                        INTENSITY:`` in D² amu⁻¹ Å⁻² is absent for numerical Hessians.
mode numbers            26 spaces before the first (Firefly, older GAMESS-US), 28
                        (GAMESS-US 2017 and later): any line of integers only.
unit headings           a Raman row under a heading with another unit is refused; a
                        ``RAMAN ACTIVITY`` row with no Raman heading at all is read in
                        Å⁴/amu (noted); an IR row without a unit heading is left out.
======================  ================================================================

The GAMESS-US and PC GAMESS layouts are from cclib's GAMESS parser (its comments quote both)
and from memory; only the Firefly 8.0.1 layout is checked against a real output here.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.sources._common import floats, last_line_with, truncated_error
from vibrapol.sources._layout import layout_error
from vibrapol.sources._program_warnings import Rule
from vibrapol.units import DEBYE2_PER_AMU_ANG2_TO_KM_MOL

ANALYSIS = "NORMAL COORDINATE ANALYSIS IN THE HARMONIC APPROXIMATION"
DERIVATIVE_BLOCK = "ALPHA POLARIZABILITY DERIVATIVE TENSOR"
#: Firefly's heading of the finite-field computation of the derivatives (real 8.0.1 output).
DERIVATIVE_RUN = "NUMERICAL COMPUTATION OF POLARIZABILITY DERIVATIVE"
_ROTATION_LINE = re.compile(r"MODES\s+(\d+)\s+TO\s*(\d+)\s+ARE TAKEN AS ROTATIONS AND TRANSLATIONS")
_MEMBER = re.compile(r"(Firefly|PC GAMESS) version\s+([\d.]+)(?:.*?build number\s+(\d+))?")
_ROW = re.compile(r"^\s*([A-Z][A-Z .]*[A-Z]):\s*(.*)$")
#: Lines after which the normal-mode groups are over.
_ANALYSIS_END = (
    "DONE WITH NORMAL COORDINATE ANALYSIS",
    "REFERENCE ON SAYVETZ CONDITIONS",
    "THERMOCHEMISTRY AT T=",
)
#: Lines that show the job went on after the analysis (so it is not cut inside it).
_JOB_WENT_ON = (*_ANALYSIS_END, "TERMINATED NORMALLY", "TERMINATED -ABNORMALLY-")
_RAMAN_LABELS = ("RAMAN ACTIVITY", "RAMAN INTENSITY")
_KNOWN_ROWS: tuple[str, ...] = (
    "FREQUENCY",
    "SYMMETRY",
    "REDUCED MASS",
    "IR INTENSITY",
    *_RAMAN_LABELS,
)
_KNOWN_ROWS += ("DEPOLARIZATION",)

#: Warnings the family prints about its frequency results.  The stationary-point box and the
#: mode-choice warning are quoted in cclib 1.8.1's GAMESS parser (from its regression files);
#: the SCF failure line is from memory of GAMESS-US outputs.
WARNING_RULES = (
    Rule("THIS IS NOT A STATIONARY POINT ON THE MOLECULAR PES", 1, "cclib GAMESS parser"),
    Rule("* * * WARNING, MODE", 2, "cclib GAMESS parser"),
    Rule("SCF IS UNCONVERGED", 0, "from memory"),
    Rule("GEOMETRY SEARCH IS NOT CONVERGED", 0, "cclib GAMESS parser"),
    Rule("IMAGINARY FREQUENCY VIBRATION", 1, "cclib GAMESS parser"),
)


@dataclass(frozen=True)
class Member:
    """Which member of the family wrote a file, from its banner."""

    program: str
    version: str


def identify(lines: Sequence[str]) -> Member:
    """The family member and version its banner names (first 200 lines).

    Layouts (the Firefly one from a real output; the others from memory)::

          *      Firefly version 8.0.1, build number 8540      *
          *       PC GAMESS version 6.2, build number 2068     *
          *         GAMESS VERSION = 30 SEP 2019 (R2)          *
    """
    for line in lines[:200]:
        match = _MEMBER.search(line)
        if match:
            version = match.group(2) + (f"+{match.group(3)}" if match.group(3) else "")
            return Member(match.group(1), version)
        match = re.search(r"GAMESS VERSION\s*=\s*([^*]+?)\s*\*?\s*$", line)
        if match:
            return Member("GAMESS-US", match.group(1))
    return Member("GAMESS (member not named in the banner)", "")


def sniff(head: str, tail: str) -> bool:
    """True for an output of the GAMESS family, recognised by the blocks it prints.

    Every member echoes its ``$CONTRL OPTIONS`` group (``SCFTYP=... RUNTYP=...``) near the
    top and prints its frequencies under ``NORMAL COORDINATE ANALYSIS IN THE HARMONIC
    APPROXIMATION``; either identifies the family (GAMESS-UK prints neither).
    """
    if "G A M E S S - U K" in head:
        return False
    echo = re.search(r"\$CONTRL OPTIONS\s*\n\s*-+\s*\n\s*SCFTYP=", head) is not None
    return echo or ANALYSIS in head or ANALYSIS in tail


@dataclass(frozen=True, eq=False)
class ModeTable:
    """Per-mode rows of the normal-coordinate analysis, for every printed mode.

    Attributes
    ----------
    freqs_cm1 : ndarray (n_printed,)
        Imaginary frequencies (printed with a trailing ``I``) are negative.
    activities : ndarray (n_printed,) or None
        ``RAMAN ACTIVITY`` (or PC GAMESS's ``RAMAN INTENSITY``) row, Å⁴/amu; None when the
        job printed no Raman data.
    rho_linear : ndarray (n_printed,) or None
        ``DEPOLARIZATION`` row (linearly polarized incident light).
    ir_km_mol : ndarray (n_printed,) or None
        ``IR INTENSITY`` row converted to km/mol (see :mod:`vibrapol.units`).
    rigid : tuple of int
        0-based indices of the modes the program took as rotations and translations.
    raman_label : str
        The label of the Raman row as printed ("" without one).
    line, end : int
        0-based indices of the analysis heading and of the line that ends its mode groups.
    notes : tuple of str
        What the reading assumed or left out (units taken from a row label, IR not read).
    """

    freqs_cm1: np.ndarray
    activities: np.ndarray | None
    rho_linear: np.ndarray | None
    ir_km_mol: np.ndarray | None
    rigid: tuple[int, ...]
    raman_label: str = ""
    line: int = 0
    end: int = 0
    notes: tuple[str, ...] = ()

    @property
    def vibrations(self) -> np.ndarray:
        """Indices of the vibrational modes, in printed order."""
        keep = np.ones(len(self.freqs_cm1), dtype=bool)
        keep[list(self.rigid)] = False
        return np.flatnonzero(keep)


def _row_values(text: str, where: str) -> list[float]:
    """Numbers of a row; a lone ``I`` marks the previous one imaginary."""
    values: list[float] = []
    for token in text.split():
        if token == "I" and values:
            values[-1] = -values[-1]
        else:
            values.extend(floats(token, where))
    return values


def _job_went_on(lines: Sequence[str], start: int) -> bool:
    return any(any(m in line for m in _JOB_WENT_ON) for line in lines[start:])


def read_mode_table(lines: Sequence[str], where: str = "") -> ModeTable:
    """Frequencies, Raman activities, ratios and IR intensities of every printed mode.

    Reads the last normal-coordinate analysis.  Layout (groups of five modes; the symmetry,
    reduced-mass, IR and Raman rows may be absent; values invented)::

         MODES 1 TO 6 ARE TAKEN AS ROTATIONS AND TRANSLATIONS.

             FREQUENCIES IN CM**-1, IR INTENSITIES IN DEBYE**2/AMU-ANGSTROM**2
             RAMAN ACTIVITIES  IN ANGSTROM**4/AMU, DEPOLARIZATIONS ARE DIMENSIONLESS

                                  7           8           9
               FREQUENCY:       812.44 I    101.20      1650.87
                SYMMETRY:         A1          B2          A1
            REDUCED MASS:      1.23456     2.34567     1.08000
            IR INTENSITY:      0.01234     0.00000     0.56789
          RAMAN ACTIVITY:        0.000      12.345       3.210
          DEPOLARIZATION:        0.750       0.123       0.750

    Raises
    ------
    InputFormatError
        If the analysis is missing, cut short, or printed in a layout not known here (a Raman
        row without its Å⁴/amu heading, a row of Raman data with another label, rows that do
        not fit their group).
    """
    start = last_line_with(list(lines), ANALYSIS)
    if start is None:
        raise InputFormatError(
            f"{where}: no normal coordinate analysis (not a frequency job, or the output "
            "stops before it)"
        )
    complete = _job_went_on(lines, start + 1)
    block = "the normal coordinate analysis"
    rows: dict[str, list[float]] = {label: [] for label in _KNOWN_ROWS if label != "SYMMETRY"}
    rigid: tuple[int, ...] | None = None
    headings: list[tuple[int, str]] = []
    group = 0
    raman_label = ""
    i = start
    for i in range(start + 1, len(lines)):
        line = lines[i]
        if any(marker in line for marker in _ANALYSIS_END):
            break
        match = _ROTATION_LINE.search(line)
        if match:
            rigid = tuple(range(int(match.group(1)) - 1, int(match.group(2))))
            continue
        tokens = line.split()
        if tokens and all(t.isdigit() for t in tokens):  # the mode numbers of a group
            group = len(tokens)
            continue
        if " IN " in line and ("INTENSITIES" in line or "ACTIVITIES" in line):
            headings.append((i, line))
            continue
        row = _ROW.match(line)
        if row is None or not row.group(2).strip():
            continue
        label = row.group(1).strip()
        if label not in _KNOWN_ROWS:
            if "RAMAN" in label or "DEPOLAR" in label:
                raise layout_error(where, block, i, f"row {label!r} is not one known here")
            continue
        if label == "SYMMETRY":
            continue
        values = _row_values(row.group(2), f"{where}: line {i + 1}")
        if len(values) != group:
            if i == len(lines) - 1 or not complete:
                raise truncated_error(where, f"line {i + 1}: {label} row cut short")
            raise layout_error(where, block, i, f"{len(values)} {label} values for {group} modes")
        if label in _RAMAN_LABELS:
            if raman_label and label != raman_label:
                raise layout_error(where, block, i, f"both {raman_label} and {label} rows")
            raman_label = label
        rows[label].extend(values)
    if rigid is None:
        if not complete:
            raise truncated_error(where, "the normal coordinate analysis ends early")
        raise layout_error(
            where, block, start, "no 'MODES ... ARE TAKEN AS ROTATIONS AND TRANSLATIONS' line"
        )
    freqs = rows["FREQUENCY"]
    n = len(freqs)
    if not freqs or max(rigid, default=-1) >= n or not complete:
        raise truncated_error(where, "the normal-mode table is empty or cut short")
    for label, values in rows.items():
        if values and len(values) != n:
            raise layout_error(where, block, start, f"{len(values)} {label} values for {n} modes")
    activities, raman_note = _raman_row(rows, raman_label, headings, where, start)
    ir, ir_note = _ir_row(rows["IR INTENSITY"], headings)
    rho = rows["DEPOLARIZATION"]
    if rho and activities is None:
        raise layout_error(where, block, start, "DEPOLARIZATION rows without Raman rows")
    return ModeTable(
        freqs_cm1=np.array(freqs),
        activities=activities,
        rho_linear=np.array(rho) if rho else None,
        ir_km_mol=ir,
        rigid=rigid,
        raman_label=raman_label,
        line=start,
        end=i,
        notes=tuple(note for note in (raman_note, ir_note) if note),
    )


def _raman_row(
    rows: dict[str, list[float]],
    label: str,
    headings: list[tuple[int, str]],
    where: str,
    start: int,
) -> tuple[np.ndarray | None, str]:
    """The Raman row in Å⁴/amu, and a note when its unit comes from its label alone.

    A heading that names the unit must say ANGSTROM**4/AMU.  Without any Raman heading, a row
    labelled ``RAMAN ACTIVITY`` is read in the family's unit for activities (noted); a row
    labelled ``RAMAN INTENSITY`` could be anything and is refused.
    """
    if not label:
        return None, ""
    raman = [(i, h) for i, h in headings if "RAMAN" in h]
    if any("ANGSTROM**4/AMU" in h for _, h in raman):
        return np.array(rows[label]), ""
    if not raman and label == "RAMAN ACTIVITY":
        note = "no unit heading for the RAMAN ACTIVITY rows: read in angstrom^4/amu"
        return np.array(rows[label]), note
    raise layout_error(
        where,
        "the normal coordinate analysis",
        raman[0][0] if raman else start,
        f"{label} rows without a heading giving their unit as ANGSTROM**4/AMU",
    )


def _ir_row(values: list[float], headings: list[tuple[int, str]]) -> tuple[np.ndarray | None, str]:
    """The IR row in km/mol (converted from D² amu⁻¹ Å⁻², or as printed in km/mol), and a note.

    A row whose unit no heading states is left out (IR intensities are optional), with a note.
    """
    if not values:
        return None, ""
    ir_headings = [h for _, h in headings if "IR INTENSITIES" in h]
    if any("DEBYE**2/AMU-ANGSTROM**2" in h for h in ir_headings):
        note = "IR intensities printed in debye^2/(amu angstrom^2), converted to km/mol"
        return np.array(values) * DEBYE2_PER_AMU_ANG2_TO_KM_MOL, note
    if any("KM/MOL" in h.upper() for h in ir_headings):
        return np.array(values), "IR intensities printed in km/mol"
    return None, "IR INTENSITY rows not read: no heading states their unit"
