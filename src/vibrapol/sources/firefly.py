"""Reader for the GAMESS family's frequency and Raman outputs: Firefly, PC GAMESS, GAMESS-US.

The members share one layout with variants (see :mod:`vibrapol.sources._gamess_blocks`); the
file is recognised by the blocks it prints, and the banner only names the member in the
provenance.  What the programs print, and what vibrapol does with it:

- the geometry in the frame of everything that follows (``COORDINATES (BOHR)``), atomic
  weights (``ATOMIC WEIGHTS (AMU)``, 5 decimals) and the normal modes: read with cclib;
- all 3N modes, including the overall rotations and translations, which carry a spurious
  Raman activity; the program names them (``MODES 1 TO 6 ARE TAKEN AS ROTATIONS AND
  TRANSLATIONS.``) and vibrapol keeps only the 3N−6 (3N−5) vibrations;
- Cartesian displacements normalised so that Σ m d² = 1 (mass-weighted normalisation, as the
  output's closing note says); converted to mass-weighted orthonormal modes with
  :func:`vibrapol.vibrations.modes_from_displacements`;
- per mode the Raman activity (Å⁴/amu; PC GAMESS labels the row ``RAMAN INTENSITY`` but its
  heading gives the activity's unit), the depolarization ratio for linearly polarized light
  and the IR intensity in D² amu⁻¹ Å⁻², stored in km/mol (× 42.2561, :mod:`vibrapol.units`);
- where printed (Firefly), the Cartesian polarizability derivatives in bohr² (``ALPHA
  POLARIZABILITY DERIVATIVE TENSOR BOHR**2``), from which vibrapol computes every Raman
  quantity and checks the printed ones; otherwise a², γ² come from the printed activity and
  ratio;
- the program's warnings about its analysis (not a stationary point, a doubtful choice of
  rotations, SCF failures) are passed on as :class:`~vibrapol.errors.AccuracyWarning`.

The method recorded is the one in the program's echo of its options (``$CONTRL OPTIONS``),
not the input cards: a ``$DFT`` group without ``DFTTYP`` in ``$CONTRL`` leaves the job RHF.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from pathlib import Path

import numpy as np

from vibrapol import invariants as inv
from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance, default_masses
from vibrapol.sources import _gamess_blocks as blocks
from vibrapol.sources._common import (
    check_printed,
    check_printed_rho,
    invariants_from_printed,
    parse_with_cclib,
)
from vibrapol.sources._gamess_blocks import ModeTable, read_mode_table, sniff
from vibrapol.sources._gamess_tensors import (
    other_derivative_heading,
    read_dalpha_dx,
    read_method,
    read_polarizability,
)
from vibrapol.sources._layout import UnknownLayout
from vibrapol.sources._program_warnings import (
    ProgramWarning,
    Rule,
    find_program_warnings,
    pass_on,
)
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.vibrations import modes_from_displacements

__all__ = [
    "ModeTable",
    "read_dalpha_dx",
    "read_firefly",
    "read_method",
    "read_mode_table",
    "read_polarizability",
    "sniff",
]

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


def read_firefly(path: str | Path) -> ModeSet:
    """Read a GAMESS-family output (Firefly, PC GAMESS, GAMESS-US) into a ModeSet.

    Warns
    -----
    PrintedValueMismatch
        When activities or depolarization ratios computed from the printed derivatives
        disagree with the printed ones beyond print precision.
    AccuracyWarning
        For each warning the program printed about its results, and when a derivative block
        in a layout not read here is skipped.
    """
    where = str(path)
    text = read_text(path)
    lines = text.splitlines()
    member = blocks.identify(lines)
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
            f"(line {table.line + 1}); the layout of this output is not one known here"
        )
    printed_masses = getattr(data, "atommasses", None)
    masses = (
        default_masses(z) if printed_masses is None else np.asarray(printed_masses, dtype=float)
    )
    notes = [
        f"{len(table.freqs_cm1)} modes printed; modes {table.rigid[0] + 1}-"
        f"{table.rigid[-1] + 1} (rotations and translations, as the program says) dropped",
        "displacements printed with sum(m d^2) = 1, converted to mass-weighted orthonormal modes",
    ]
    notes += pass_on(_program_warnings(lines, table), where=where, program=member.program)
    dalpha_dx = _optional_block(read_dalpha_dx, lines, len(z), where, table, notes)
    a2 = gamma2 = None
    if dalpha_dx is not None:
        notes.append("derivatives read in bohr^2 and converted to angstrom^2")
    elif table.activities is not None and table.rho_linear is not None:
        a2, gamma2 = invariants_from_printed(table.activities[vib], table.rho_linear[vib])
        notes.append(
            f"no derivatives: a2, gamma2 recovered from the printed activity "
            f"({table.raman_label}, angstrom^4/amu) and DEPOLARIZATION"
        )
        notes += _unread_derivatives(lines, where)
    if table.raman_label == "RAMAN INTENSITY":
        notes.append(
            "the Raman rows are labelled RAMAN INTENSITY but printed in angstrom^4/amu: "
            "read as activities"
        )
    ir = None if table.ir_km_mol is None else table.ir_km_mol[vib]
    notes += table.notes
    metadata = data.metadata
    result = ModeSet(
        atomic_numbers=z,
        coordinates_ang=np.asarray(data.atomcoords[-1]),
        freqs_cm1=table.freqs_cm1[vib],
        modes=modes_from_displacements(data.vibdisps, masses),
        masses_da=masses,
        dalpha_dx=dalpha_dx,
        a2=a2,
        gamma2=gamma2,
        polarizability_ang3=_optional_block(read_polarizability, lines, None, where, None, notes),
        ir_intensity_km_mol=ir,
        provenance=Provenance(
            source_file=where,
            source_kind="firefly",
            program=member.program,
            program_version=member.version or str(metadata.get("package_version", "")),
            method=read_method(lines),
            basis=str(metadata.get("basis_set", "")),
            masses="as printed (ATOMIC WEIGHTS (AMU))"
            if printed_masses is not None
            else DEFAULT_MASSES_NOTE,
            notes=tuple(notes),
        ),
    )
    if dalpha_dx is not None and table.activities is not None:
        rho = None if table.rho_linear is None else table.rho_linear[vib]
        _check(result, table.activities[vib], rho, where)
    return result


#: Any warning printed inside the normal coordinate analysis or the derivative computation
#: concerns the results, whatever its text.
_ANY_WARNING = (
    Rule("WARNING", 0, "inside the analysis"),
    Rule("Warning", 0, "inside the analysis"),
)


def _program_warnings(lines: list[str], table: ModeTable) -> list[ProgramWarning]:
    """The family's known warnings anywhere, and any warning line in the result sections."""
    found = {w.text: w for w in find_program_warnings(lines, blocks.WARNING_RULES)}
    regions = [(table.line, table.end)]
    start = next((i for i, s in enumerate(lines) if blocks.DERIVATIVE_RUN in s), None)
    if start is not None:
        stop = next((i for i in range(start, len(lines)) if "DONE COMPUTING" in lines[i]), start)
        regions.append((start, stop))
    for begin, end in regions:
        rules = (*blocks.WARNING_RULES, *_ANY_WARNING)
        for w in find_program_warnings(lines, rules, start=begin, stop=end):
            found.setdefault(w.text, w)
    return sorted(found.values(), key=lambda w: w.line)


def _optional_block(
    read: Callable[..., np.ndarray | None],
    lines: list[str],
    n_atoms: int | None,
    where: str,
    table: ModeTable | None,
    notes: list[str],
) -> np.ndarray | None:
    """A tensor block, or None with a warning when it is printed in a layout not known here.

    The derivatives are skipped only when the printed activities and ratios can stand in for
    them; the static polarizability is optional.
    """
    try:
        return read(lines, where=where) if n_atoms is None else read(lines, n_atoms, where)
    except UnknownLayout as exc:
        if table is not None and (table.activities is None or table.rho_linear is None):
            raise
        instead = "; the printed activities and ratios are used instead" if table else ""
        note = f"{str(exc).removeprefix(where + ': ')}; the block is not read{instead}"
    warnings.warn(f"{where}: {note}", AccuracyWarning, stacklevel=3)
    notes.append(note)
    return None


def _unread_derivatives(lines: list[str], where: str) -> list[str]:
    """Warn when the file has a derivative block in a layout not read here."""
    other = other_derivative_heading(lines)
    if other is None:
        return []
    note = (
        f"a polarizability-derivative block at line {other + 1} is in a layout not read "
        "here; the printed activities and ratios are used instead"
    )
    warnings.warn(f"{where}: {note}", AccuracyWarning, stacklevel=3)
    return [note]


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


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "firefly",
    "GAMESS family (Firefly, PC GAMESS, GAMESS-US) frequency and Raman output",
    sniff,
    read_firefly,
)
