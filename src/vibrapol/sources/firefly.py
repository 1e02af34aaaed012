"""Reader for Firefly (GAMESS family) Raman outputs (``RUNTYP=RAMAN``).

What the program prints, and what vibrapol does with it:

- the geometry in the frame of everything that follows (``COORDINATES (BOHR)``), atomic
  weights (``ATOMIC WEIGHTS (AMU)``, 5 decimals) and the normal modes: read with cclib;
- all 3N modes, including the overall rotations and translations, which carry a spurious
  Raman activity; the program names them (``MODES 1 TO 6 ARE TAKEN AS ROTATIONS AND
  TRANSLATIONS.``) and vibrapol keeps only the 3N−6 (3N−5) vibrations;
- Cartesian displacements normalised so that Σ m d² = 1 (mass-weighted normalisation, as the
  output's closing note says); converted to mass-weighted orthonormal modes with
  :func:`vibrapol.vibrations.modes_from_displacements`;
- the Cartesian polarizability derivatives in bohr² (``ALPHA POLARIZABILITY DERIVATIVE TENSOR
  BOHR**2``), from which vibrapol computes every Raman quantity, and the printed activity and
  depolarization ratio per mode, against which it checks them.

The method recorded is the one in the program's echo of its options (``$CONTRL OPTIONS``),
not the input cards: a ``$DFT`` group without ``DFTTYP`` in ``$CONTRL`` leaves the job RHF.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol import invariants as inv
from vibrapol.errors import InputFormatError
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance, default_masses
from vibrapol.sources._common import (
    check_printed,
    check_printed_rho,
    find_line,
    floats,
    last_line_with,
    parse_with_cclib,
)
from vibrapol.sources.registry import Reader, read_text, register
from vibrapol.units import BOHR2_TO_ANG2
from vibrapol.vibrations import modes_from_displacements

PROGRAM = "Firefly"

#: Tolerances for comparing vibrapol's numbers with the printed ones.  Activities are printed
#: with 3 decimals (half a unit: 5e-4 Å⁴/amu); the derivatives they come from carry 4 decimals
#: in bohr², which moves an activity by a few 1e-4 for weak modes and by up to ≈ 2e-5 of its
#: value for strong ones (measured on the dvb output).  atol = twice the half unit, rtol = 1e-4.
ACTIVITY_ATOL = 1e-3
ACTIVITY_RTOL = 1e-4
#: ρ is printed with 3 decimals (half a unit 5e-4); 1e-3 allows for the rounding of the inputs.
RHO_ATOL = 1e-3
#: ρ is compared only for modes whose printed activity is at least this (Å⁴/amu): below it the
#: 3-decimal activity and 4-decimal derivatives leave ρ itself uncertain at the 1e-3 level.
RHO_MIN_ACTIVITY = 0.5

_ROTATION_LINE = re.compile(r"MODES\s+(\d+)\s+TO\s*(\d+)\s+ARE TAKEN AS ROTATIONS AND TRANSLATIONS")


@dataclass(frozen=True, eq=False)
class ModeTable:
    """Per-mode rows of the normal-coordinate analysis, for every printed mode.

    Attributes
    ----------
    freqs_cm1 : ndarray (n_printed,)
        Imaginary frequencies (printed with a trailing ``I``) are negative.
    activities : ndarray (n_printed,) or None
        ``RAMAN ACTIVITY`` row, Å⁴/amu (None when the job printed no Raman data).
    rho_linear : ndarray (n_printed,) or None
        ``DEPOLARIZATION`` row (linearly polarized incident light).
    rigid : tuple of int
        0-based indices of the modes the program took as rotations and translations.
    """

    freqs_cm1: np.ndarray
    activities: np.ndarray | None
    rho_linear: np.ndarray | None
    rigid: tuple[int, ...]

    @property
    def vibrations(self) -> np.ndarray:
        """Indices of the vibrational modes, in printed order."""
        keep = np.ones(len(self.freqs_cm1), dtype=bool)
        keep[list(self.rigid)] = False
        return np.flatnonzero(keep)


def sniff(head: str, tail: str) -> bool:
    """True for a Firefly output (its banner names the program and its GAMESS origin)."""
    return "Firefly version" in head and "GAMESS" in head


def _row_values(line: str, label: str, where: str) -> list[float]:
    """Numbers after ``label`` on a row; a lone ``I`` marks the previous one imaginary."""
    values: list[float] = []
    for token in line.split(label, 1)[1].split():
        if token == "I" and values:
            values[-1] = -values[-1]
        else:
            values.extend(floats(token, where))
    return values


def read_mode_table(lines: list[str], where: str = "") -> ModeTable:
    """Frequencies, Raman activities and depolarization ratios of every printed mode.

    Reads the last normal-coordinate analysis.  Layout (groups of five modes; the reduced
    mass and IR rows may be absent; values invented)::

         MODES 1 TO 6 ARE TAKEN AS ROTATIONS AND TRANSLATIONS.
         ...
                                  7           8           9
               FREQUENCY:       812.44 I    101.20      1650.87
            REDUCED MASS:      1.23456     2.34567     1.08000
            IR INTENSITY:      0.01234     0.00000     0.56789
          RAMAN ACTIVITY:        0.000      12.345       3.210
          DEPOLARIZATION:        0.750       0.123       0.750

    Raises
    ------
    InputFormatError
        If the analysis, its rotation/translation line or the frequencies are missing.
    """
    start = last_line_with(lines, "NORMAL COORDINATE ANALYSIS IN THE HARMONIC")
    if start is None:
        raise InputFormatError(
            f"{where}: no normal coordinate analysis (truncated output, or not a frequency job?)"
        )
    freqs: list[float] = []
    activities: list[float] = []
    rhos: list[float] = []
    rigid: tuple[int, ...] | None = None
    for line in lines[start:]:
        if "DONE WITH NORMAL COORDINATE ANALYSIS" in line:
            break
        match = _ROTATION_LINE.search(line)
        if match:
            first, last = int(match.group(1)), int(match.group(2))
            rigid = tuple(range(first - 1, last))
        elif "FREQUENCY:" in line:
            freqs.extend(_row_values(line, "FREQUENCY:", where))
        elif "RAMAN ACTIVITY:" in line:
            activities.extend(_row_values(line, "RAMAN ACTIVITY:", where))
        elif "DEPOLARIZATION:" in line:
            rhos.extend(_row_values(line, "DEPOLARIZATION:", where))
    if rigid is None:
        raise InputFormatError(
            f"{where}: no 'MODES ... ARE TAKEN AS ROTATIONS AND TRANSLATIONS' line"
        )
    if not freqs or max(rigid, default=-1) >= len(freqs):
        raise InputFormatError(
            f"{where}: normal-mode table is empty or cut short (truncated output?)"
        )
    n = len(freqs)
    for name, row in (("RAMAN ACTIVITY", activities), ("DEPOLARIZATION", rhos)):
        if row and len(row) != n:
            raise InputFormatError(
                f"{where}: {len(row)} {name} values for {n} modes (truncated output?)"
            )
    return ModeTable(
        freqs_cm1=np.array(freqs),
        activities=np.array(activities) if activities else None,
        rho_linear=np.array(rhos) if rhos else None,
        rigid=rigid,
    )


def read_dalpha_dx(lines: list[str], n_atoms: int, where: str = "") -> np.ndarray | None:
    """Cartesian polarizability derivatives, converted from bohr² to Å², shape (3N, 3, 3).

    Returns None when the block is absent (no Raman job).  Layout (values invented)::

                  ALPHA POLARIZABILITY DERIVATIVE TENSOR     BOHR**2
                  --------------------------------------     -------

           ATOM               ALP-XX     ALP-XY     ALP-YY     ALP-XZ     ALP-YZ     ALP-ZZ
         O          D/DX      1.2345     0.0000     0.5000     0.0000     0.0000    -0.1234
                    D/DY      0.0000     2.3456     0.0000     0.0000     0.0000     0.0000
                    D/DZ      0.0000     0.0000     0.0000     0.9876     0.0000     0.0000
         H          D/DX     ...
    """
    start = last_line_with(lines, "ALPHA POLARIZABILITY DERIVATIVE TENSOR")
    if start is None:
        return None
    rows: list[list[float]] = []
    for line in lines[start + 1 :]:
        if len(rows) == 3 * n_atoms:
            break
        if re.search(r"D/D[XYZ]", line):
            values = floats(line.split("D/D", 1)[1][1:], where)
            if len(values) != 6:
                raise InputFormatError(
                    f"{where}: polarizability derivative row has {len(values)} values, expected 6"
                )
            rows.append(values)
    if len(rows) != 3 * n_atoms:
        raise InputFormatError(
            f"{where}: polarizability derivative block has {len(rows)} rows, "
            f"expected {3 * n_atoms} (truncated output?)"
        )
    xx, xy, yy, xz, yz, zz = np.array(rows).T
    tensors = np.stack(
        [np.stack([xx, xy, xz], -1), np.stack([xy, yy, yz], -1), np.stack([xz, yz, zz], -1)], -2
    )
    return tensors * BOHR2_TO_ANG2


def read_polarizability(lines: list[str], where: str = "") -> np.ndarray | None:
    """Static polarizability in Å³ (lower triangle printed), or None when absent.

    Layout (values invented)::

                  ALPHA POLARIZABILITY TENSOR (ANGSTROMS**3)
                  ------------------------------------------

                               X              Y              Z
                  X         1.23456
                  Y         0.00000        2.34567
                  Z         0.00000        0.00000        3.45678
    """
    start = last_line_with(lines, "ALPHA POLARIZABILITY TENSOR (ANGSTROMS**3)")
    if start is None:
        return None
    alpha = np.zeros((3, 3))
    row = 0
    for line in lines[start + 1 :]:
        parts = line.split()
        if parts and parts[0] in ("X", "Y", "Z") and len(parts) == row + 2:
            alpha[row, : row + 1] = floats(" ".join(parts[1:]), where)
            row += 1
            if row == 3:
                return np.tril(alpha) + np.tril(alpha, -1).T
    raise InputFormatError(
        f"{where}: polarizability tensor block is incomplete (truncated output?)"
    )


def read_method(lines: list[str]) -> str:
    """Method from the program's echo of ``$CONTRL OPTIONS`` (DFT functional, MPn or SCF type).

    Layout::

             $CONTRL OPTIONS
             ---------------
             SCFTYP=RHF          RUNTYP=RAMAN        EXETYP=RUN
             MPLEVL=       0     LOCAL =NONE         UNITS =ANGS
             ...
             DFTTYP=NONE
    """
    try:
        start = find_line(lines, "$CONTRL OPTIONS")
    except InputFormatError:
        return ""
    block = " ".join(lines[start : start + 16])

    def option(key: str) -> str:
        match = re.search(rf"\b{key}\s*=\s*(\S+)", block)
        return match.group(1) if match else ""

    if option("DFTTYP") not in ("", "NONE"):
        return option("DFTTYP")
    if option("MPLEVL") not in ("", "0"):
        return f"MP{option('MPLEVL')}"
    return option("SCFTYP")


def read_firefly(path: str | Path) -> ModeSet:
    """Read a Firefly Raman output into a :class:`~vibrapol.modeset.ModeSet`.

    Warns
    -----
    PrintedValueMismatch
        When activities or depolarization ratios computed from the printed derivatives
        disagree with the printed ones beyond print precision.
    """
    where = str(path)
    text = read_text(path)
    lines = text.splitlines()
    table = read_mode_table(lines, where)
    data = parse_with_cclib(
        "GAMESS",
        text,
        where,
        required=("atomnos", "atomcoords", "vibfreqs", "vibdisps"),
        hint="truncated output, or not a frequency job?",
    )
    z = np.asarray(data.atomnos, dtype=int)
    vib = table.vibrations
    if (
        len(vib) != len(data.vibfreqs)
        or np.max(np.abs(table.freqs_cm1[vib] - data.vibfreqs), initial=0) > 1e-6
    ):
        raise InputFormatError(
            f"{where}: the vibrations read by cclib do not match the printed mode table "
            "(truncated output?)"
        )
    printed_masses = getattr(data, "atommasses", None)
    masses = (
        default_masses(z) if printed_masses is None else np.asarray(printed_masses, dtype=float)
    )
    modes = modes_from_displacements(data.vibdisps, masses)
    dalpha_dx = read_dalpha_dx(lines, len(z), where)
    a2 = gamma2 = None
    if dalpha_dx is None and table.activities is not None and table.rho_linear is not None:
        a2, gamma2 = inv.invariants_from_activity(table.activities[vib], table.rho_linear[vib])
    metadata = data.metadata
    provenance = Provenance(
        source_file=where,
        source_kind="firefly",
        program=PROGRAM,
        program_version=str(metadata.get("package_version", "")),
        method=read_method(lines),
        basis=str(metadata.get("basis_set", "")),
        masses="as printed (ATOMIC WEIGHTS (AMU))"
        if printed_masses is not None
        else DEFAULT_MASSES_NOTE,
        notes=(
            f"{len(table.freqs_cm1)} modes printed; modes {table.rigid[0] + 1}-"
            f"{table.rigid[-1] + 1} (rotations and translations, as the program says) dropped",
            "displacements printed with sum(m d^2) = 1, converted to mass-weighted "
            "orthonormal modes",
            "derivatives read in bohr^2 and converted to angstrom^2"
            if dalpha_dx is not None
            else "no derivatives: a2, gamma2 recovered from the printed activity and rho",
        ),
    )
    result = ModeSet(
        atomic_numbers=z,
        coordinates_ang=np.asarray(data.atomcoords[-1]),
        freqs_cm1=table.freqs_cm1[vib],
        modes=modes,
        masses_da=masses,
        dalpha_dx=dalpha_dx,
        a2=a2,
        gamma2=gamma2,
        polarizability_ang3=read_polarizability(lines, where),
        provenance=provenance,
    )
    if dalpha_dx is not None and table.activities is not None:
        rho = None if table.rho_linear is None else table.rho_linear[vib]
        _check(result, table.activities[vib], rho, where)
    return result


def _check(
    modes: ModeSet, printed_activity: np.ndarray, printed_rho: np.ndarray | None, where: str
) -> None:
    """Warn where the activities and ratios from the derivatives differ from the printed ones."""
    a2, gamma2 = modes.raman_invariants()
    activity = inv.activity(a2, gamma2)
    check_printed(
        "Raman activity",
        activity,
        printed_activity,
        where=where,
        atol=ACTIVITY_ATOL,
        rtol=ACTIVITY_RTOL,
    )
    if printed_rho is not None:
        check_printed_rho(
            a2,
            gamma2,
            printed_rho,
            printed_activity,
            min_activity=RHO_MIN_ACTIVITY,
            where=where,
            atol=RHO_ATOL,
        )


register(Reader("firefly", "Firefly (GAMESS family) Raman output", sniff, read_firefly))
