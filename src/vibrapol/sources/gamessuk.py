"""Reader for GAMESS-UK Raman outputs (``RUNTYPE RAMAN``).

What the program prints after the Raman step, and what vibrapol does with it:

- ``molecular geometry (angstrom)``: coordinates in Å in the program's reoriented frame (the
  frame of the modes and derivatives; the input geometry "prior to orientation" is another
  frame), the nucleus of each atom (``c-12``) and its mass (10 decimals): all three are used;
- ``cartesians to normal mode coordinates transformation matrix``: all 3N modes, the overall
  rotations and translations included, as Cartesian displacements normalised so that
  Σ m d² = 1 (6 decimals).  vibrapol drops the 6 (5) modes with the largest overlap with the
  rigid-body motions of that geometry and converts the rest with
  :func:`vibrapol.vibrations.modes_from_displacements`.  Its frequencies carry 2 decimals; the
  same vibrations were printed with 4 decimals after the Hessian step (``harmonic frequencies
  (cm**-1) and normalised normal coordinates``), which are used when they agree;
- the Cartesian polarizability derivatives, twice: in atomic units (bohr²) and in Å² as a
  3×3 tensor per coordinate.  vibrapol converts the a.u. block with its own constants (the
  program's Å² block used an older bohr) and checks the Å² block against it;
- ``raman data``: per mode (all 3N, in the order of the mode block) the isotropic part a′
  (signed), the anisotropy γ′, the activity 45a′² + 7γ′² and ρ for linearly polarized light.

- the infrared table (``normal mode / transition dipole / dipole strength / intensity``, the
  intensity in km/mole): one row per printed frequency, matched to the vibrations by that
  frequency → ``ModeSet.ir_intensity_km_mol``.

The program's warnings are passed on where they concern the vibrations (:data:`WARNING_RULES`);
the real 8.0 output prints two that do not, and they are left alone: "Symmetry assignment was
only partially successfull" (orbital symmetry labels) and "warning-- 10 modes are below the
threshold 900.000 ... vibrations may cause significant error" (the thermochemistry's treatment
of low modes in its partition functions, which vibrapol does not use).

cclib 1.8.1 reads this program's lower-precision first mode block (no rotations, so not in
the order of the Raman rows) and no masses, so everything here is read by our own blocks.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from ase.data import atomic_numbers

from vibrapol import invariants as inv
from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.sources._common import (
    check_printed,
    check_printed_rho,
    find_line,
    floats,
    last_line_with,
)
from vibrapol.sources._layout import layout_error
from vibrapol.sources._program_warnings import Rule, find_program_warnings, pass_on
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.units import BOHR2_TO_ANG2
from vibrapol.vibrations import modes_from_displacements, rigid_body_vectors

PROGRAM = "GAMESS-UK"

#: GAMESS-UK warnings about its results: "not converging" is the geometry-optimisation failure
#: cclib 1.8.1's GAMESS-UK parser reads; "not converged" is a generic phrase (the real output
#: prints only "converged" lines).
WARNING_RULES = (
    Rule("not converging", 0, "cclib GAMESS-UK parser"),
    Rule("not converged", 0, "generic phrase"),
)
IR_TITLE = "transition dipole"

#: Tolerances against the printed ``raman data``.  Everything there has 8 decimals (half a unit
#: 5e-9), so the rounding of the inputs dominates: the modes carry 6 decimals, which moves a′
#: and γ′ (Å² amu⁻¹ᐟ²) by up to ≈ 1e-5 on the dvb output.  An activity moves by about
#: 2(45|a′| + 7γ′)·1e-5: ≈ 1e-4 for weak modes, ≈ 3e-6 of the value for strong ones.
INVARIANT_ATOL = 5e-5
ACTIVITY_ATOL = 5e-4
ACTIVITY_RTOL = 2e-5
RHO_ATOL = 1e-4
#: The two derivative blocks: the a.u. one carries 7 decimals (half a unit 5e-8 bohr²), the Å²
#: one 8; the program converted with bohr = 0.52917725 Å (older CODATA), 1.5e-7 relative off
#: the bohr² of CODATA 2018/2022.  vibrapol converts the a.u. block with its own constants.
DERIVATIVE_ATOL = 5e-8
DERIVATIVE_RTOL = 1e-6
#: ρ is compared only where the printed activity is at least this (Å⁴/amu); the program prints
#: ρ = 0 for its inactive modes.
RHO_MIN_ACTIVITY = 1e-2
#: A mode counts as a rotation/translation when more than this fraction of its mass-weighted
#: vector lies in the rigid-body space (the printed modes have either ≈ 1 or ≈ 0).
RIGID_OVERLAP = 0.5

_AXES = "xyz"
MODE_BLOCK = "cartesians to normal mode coordinates transformation matrix"


@dataclass(frozen=True, eq=False)
class Geometry:
    """The ``molecular geometry (angstrom)`` block."""

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    masses_da: np.ndarray


@dataclass(frozen=True, eq=False)
class RamanRows:
    """The ``raman data`` block: one row per printed mode (rotations included).

    Attributes are arrays (n_printed,): ``freqs_cm1``, ``isotropic`` (a′, Å² amu⁻¹ᐟ², signed),
    ``anisotropy`` (γ′), ``activities`` (Å⁴/amu) and ``rho_linear``.
    """

    freqs_cm1: np.ndarray
    isotropic: np.ndarray
    anisotropy: np.ndarray
    activities: np.ndarray
    rho_linear: np.ndarray


def sniff(head: str, tail: str) -> bool:
    """True for a GAMESS-UK output (its banner spells the name out)."""
    return "G A M E S S - U K" in head


def _last_line(lines: list[str], marker: str, where: str, before: int | None = None) -> int:
    found = last_line_with(lines, marker, before)
    if found is None:
        raise InputFormatError(
            f"{where}: block {marker!r} not found (truncated output, or not a RUNTYPE RAMAN job?)"
        )
    return found


def read_geometry(lines: list[str], where: str = "", before: int | None = None) -> Geometry:
    """Atoms, coordinates (Å) and masses from the last ``molecular geometry (angstrom)`` block.

    Layout (values invented; inner spacing narrowed to fit here)::

                     molecular geometry (angstrom)
                     *****************************

      atom            x                 y                 z           nucleus  atomic weight

         1      0.0000000000      0.0000000000      0.1234567890   o-16     15.9949146200
         2      0.7654321000      0.0000000000     -0.4567890120   h-1       1.0078250000
    """
    start = _last_line(lines, "molecular geometry (angstrom)", where, before)
    z, coords, masses = [], [], []
    for line in lines[start + 1 :]:
        parts = line.split()
        if len(parts) == 6 and parts[0].isdigit():
            element = parts[4].split("-")[0].capitalize()
            if element not in atomic_numbers:
                raise InputFormatError(f"{where}: unknown nucleus {parts[4]!r} in the geometry")
            z.append(atomic_numbers[element])
            coords.append(floats(" ".join(parts[1:4]), where))
            masses.append(float(parts[5]))
        elif z and not line.strip():
            break
    if not z:
        raise InputFormatError(f"{where}: the molecular geometry (angstrom) block is empty")
    return Geometry(np.array(z), np.array(coords), np.array(masses))


def read_mode_vectors(
    lines: list[str], n_atoms: int, where: str = ""
) -> tuple[np.ndarray, np.ndarray]:
    """All printed modes of the transformation-matrix block: (freqs_cm1, displacements (n, 3N)).

    Layout (groups of up to eight modes; values invented)::

                        cartesians to normal mode coordinates transformation matrix
                        ===========================================================


                         1          2          3


                       -0.02       0.01    1650.12


      1  o        x   0.000000   0.250000   0.000000
                  y   0.235702   0.000000   0.000000
                  z   0.000000   0.000000  -0.068041
      2  h        x   ...
    """
    start = _last_line(lines, MODE_BLOCK, where)
    n_coords = 3 * n_atoms
    freqs: list[float] = []
    columns: list[np.ndarray] = []
    i: int | None = start + 1  # the underline; a group starts with its mode numbers
    while len(freqs) < n_coords:
        i = _next_nonblank(lines, i)
        header = lines[i].split() if i is not None else []
        if not header or not all(t.isdigit() for t in header):
            break
        i = _next_nonblank(lines, i)
        group = floats(lines[i], where) if i is not None else []
        rows: list[list[float]] = []
        while i is not None and len(rows) < n_coords:
            i = _next_nonblank(lines, i)
            tokens = lines[i].split() if i is not None else []
            axis = next((k for k, t in enumerate(tokens) if t in _AXES), None)
            if axis is None:
                break
            rows.append(floats(" ".join(tokens[axis + 1 :]), where))
        if not group or len(group) != len(header) or len(rows) != n_coords:
            if i is None or i >= len(lines) - 1:
                raise InputFormatError(f"{where}: normal-mode block cut short (truncated output?)")
            raise layout_error(where, "the normal-mode block", i, "a group that does not fit")
        if any(len(row) != len(group) for row in rows):
            raise layout_error(where, "the normal-mode block", i or 0, "rows of unequal length")
        freqs.extend(group)
        columns.append(np.array(rows).T)
    if len(freqs) < n_coords - 6:
        raise InputFormatError(
            f"{where}: normal-mode block has {len(freqs)} modes for {n_atoms} atoms (truncated?)"
        )
    return np.array(freqs), np.vstack(columns)


def _next_nonblank(lines: list[str], i: int | None) -> int | None:
    """Index of the first non-blank line after ``i`` (None at the end)."""
    if i is None:
        return None
    for j in range(i + 1, len(lines)):
        if lines[j].strip():
            return j
    return None


def read_precise_frequencies(lines: list[str], where: str = "") -> np.ndarray | None:
    """Vibrational frequencies (4 decimals) from the Hessian step, or None when absent.

    Layout (values invented)::

              harmonic frequencies (cm**-1) and normalised normal coordinates
              ...
         frequencies ----       1650.1234 3800.5678 3900.4321
    """
    try:
        start = find_line(lines, "harmonic frequencies (cm**-1) and normalised normal coordinates")
    except InputFormatError:
        return None
    values: list[float] = []
    for line in lines[start:]:
        if "frequencies ----" in line:
            values.extend(floats(line.split("----", 1)[1], where))
        elif "thermochemical analysis" in line or "cartesian polarizability" in line:
            break
    return np.array(values) if values else None


def _component_table(lines: list[str], start: int, n_coords: int, where: str) -> np.ndarray:
    """Entries 'a b k value' (component ab, coordinate k) after ``start`` into (3N, 3, 3)."""
    out = np.full((n_coords, 3, 3), np.nan)
    started = False
    for line in lines[start + 1 :]:
        tokens = line.split()
        if len(tokens) >= 4 and len(tokens) % 4 == 0 and tokens[0] in _AXES:
            started = True
            for a, b, k, value in zip(*[iter(tokens)] * 4, strict=True):
                out[int(k) - 1, _AXES.index(a), _AXES.index(b)] = floats(value, where)[0]
            if not np.isnan(out).any():
                return out
        elif started and tokens:
            break
    raise InputFormatError(
        f"{where}: polarizability derivative table incomplete (truncated output?)"
    )


def read_dalpha_dx_ang2(lines: list[str], n_atoms: int, where: str = "") -> np.ndarray | None:
    """Cartesian polarizability derivatives in Å², shape (3N, 3, 3), or None when absent.

    Layout (one 3×3 tensor per Cartesian coordinate; values invented)::

                        * cartesian polarizability derivatives *
                        *         units of angstrom**2         *

          x    x      1       0.12345678      x    y      1       0.00000000      x    z      1 ...
          y    x      1       0.00000000      y    y      1       2.34567890      y    z      1 ...
          z    x      1 ...
    """
    start = last_line_with(lines, "units of angstrom**2")
    return None if start is None else _component_table(lines, start, 3 * n_atoms, where)


def read_dalpha_dx_au(lines: list[str], n_atoms: int, where: str = "") -> np.ndarray | None:
    """The same derivatives in atomic units (bohr²), converted to Å²; None when absent.

    Layout (component first, then three coordinates per line; values invented)::

                        * cartesian polarizability derivatives *
                        *           (atomic units)             *

               x  x    1      0.4408000           x  x    2      0.0000000           x  x    3 ...
    """
    hits = [i for i, line in enumerate(lines) if "(atomic units)" in line and "*" in line]
    hits = [i for i in hits if "polarizability derivatives" in lines[i - 1]]
    if not hits:
        return None
    return _component_table(lines, hits[-1], 3 * n_atoms, where) * BOHR2_TO_ANG2


def read_raman_rows(lines: list[str], where: str = "") -> RamanRows | None:
    """The ``raman data`` block, or None when absent.

    Layout (one row per printed mode, rotations first; values invented; spacing narrowed)::

          **********************
          *     raman data     *
          **********************

       mode       isotropic         anisotropic       intensity         depolarization ratio

      -0.02       0.00000000        0.01234567        0.00106696        0.75000000

    1650.12       0.51234567        0.81234567       16.43183264        0.23166352
    """
    start = last_line_with(lines, "*     raman data     *")
    if start is None:
        return None
    rows = []
    for i in range(start + 3, len(lines)):
        line = lines[i]
        if line.strip().startswith("*"):
            break
        tokens = line.split()
        if len(tokens) == 5:
            rows.append(floats(line, where))
        elif tokens and tokens[0] != "mode":
            if i == len(lines) - 1:
                raise InputFormatError(
                    f"{where}: the raman data block ends in a partial row (truncated output?)"
                )
            raise layout_error(where, "the raman data block", i, f"row {line.strip()!r}")
    if not rows:
        raise InputFormatError(f"{where}: the raman data block is empty (truncated output?)")
    return RamanRows(*np.array(rows).T)


def read_ir_table(lines: list[str], where: str = "") -> tuple[np.ndarray, np.ndarray] | None:
    """Frequencies and IR intensities (km/mol) of the infrared table, or None when absent.

    Layout (values invented; the table lists the vibrations and some rigid modes)::

     =========================================================================================
     =      normal mode           transition dipole           dipole strength    intensity =
     =                                 debyes                       debyes**2      km/mole =
     =                      x            y            z                                    =
     =========================================================================================
     =         -0.06   -0.16403E-06  0.00000E+00  0.00000E+00  0.32069E-13        0.00000 =
     =       1650.12    0.00000E+00  0.00000E+00  0.66955E-01  0.44830E-02        4.69000 =
     =========================================================================================
    """
    start = last_line_with(lines, IR_TITLE)
    if start is None or "normal mode" not in lines[start]:
        return None
    if "km/mole" not in lines[start + 1]:
        raise layout_error(where, "the infrared table", start + 1, "no km/mole unit")
    rows: list[list[float]] = []
    for i in range(start + 4, len(lines)):
        tokens = lines[i].replace("=", " ").split()
        if lines[i].strip().startswith("====") and rows:
            break
        if not tokens:
            continue
        if len(tokens) != 6:
            raise layout_error(where, "the infrared table", i, f"{len(tokens)} values in a row")
        rows.append(floats(" ".join(tokens), where))
    else:
        raise InputFormatError(f"{where}: the infrared table ends early (truncated output?)")
    table = np.array(rows)
    return table[:, 0], table[:, 5]


def match_ir(
    ir_freqs: np.ndarray, ir_km_mol: np.ndarray, vib_freqs: np.ndarray
) -> np.ndarray | None:
    """IR intensities of the vibrations, matched in order by printed frequency (2 decimals).

    Returns None when some vibration has no row of its frequency.
    """
    out = np.empty(len(vib_freqs))
    j = 0
    for k, freq in enumerate(vib_freqs):
        while j < len(ir_freqs) and abs(ir_freqs[j] - freq) > 0.0051:
            j += 1
        if j == len(ir_freqs):
            return None
        out[k] = ir_km_mol[j]
        j += 1
    return out


def rigid_modes(displacements: np.ndarray, geometry: Geometry) -> np.ndarray:
    """Indices of the printed modes that are overall rotations or translations.

    The mass-weighted vector of each printed mode is projected onto the rigid-body motions of
    the geometry; the ``n_printed − (3N − n_rigid)`` modes with the largest overlap are taken.
    """
    masses = geometry.masses_da
    rigid = rigid_body_vectors(geometry.coordinates_ang, masses)
    weighted = displacements * np.repeat(np.sqrt(masses), 3)[None, :]
    weighted /= np.linalg.norm(weighted, axis=1, keepdims=True)
    overlap = np.sum((weighted @ rigid.T) ** 2, axis=1)
    n_drop = len(displacements) - (displacements.shape[1] - len(rigid))
    drop = np.sort(np.argsort(overlap)[::-1][: max(n_drop, 0)])
    keep = np.setdiff1d(np.arange(len(displacements)), drop)
    if np.any(overlap[drop] < RIGID_OVERLAP) or np.any(overlap[keep] > RIGID_OVERLAP):
        raise InputFormatError("rotations and translations cannot be told apart from vibrations")
    return drop


def read_metadata(lines: list[str]) -> dict[str, str]:
    """Version, method and basis from the banner and the job options.

    Layout::

         *               ===   Opteron version  8.0  ===                *
                                            Revision    6248
         * SCF TYPE                                rhf      *
         * basis selected is sto     sto3g      *
    """
    text = "\n".join(lines[:2000])
    version = re.search(r"version\s+(\d+(?:\.\d+)*)\s+===", text)
    revision = re.search(r"Revision\s+(\S+)", text)
    scf = re.search(r"\* SCF TYPE\s+(\S+)", text)
    basis = re.search(r"basis selected is\s+\S+\s+(\S+)", text)
    program_version = version.group(1) if version else ""
    if version and revision:
        program_version += f" (revision {revision.group(1)})"
    return {
        "program_version": program_version,
        "method": scf.group(1).upper() if scf else "",
        "basis": basis.group(1) if basis else "",
    }


def read_gamessuk(path: str | Path) -> ModeSet:
    """Read a GAMESS-UK Raman output into a :class:`~vibrapol.modeset.ModeSet`.

    Warns
    -----
    PrintedValueMismatch
        When |a′|, γ′, activities or ρ computed from the derivatives disagree with the
        printed ``raman data``, or the two printed derivative blocks disagree.
    """
    where = str(path)
    lines = read_text(path).splitlines()
    geometry = read_geometry(lines, where, before=_last_line(lines, MODE_BLOCK, where))
    n_atoms = len(geometry.atomic_numbers)
    freqs_all, disps_all = read_mode_vectors(lines, n_atoms, where)
    try:
        drop = rigid_modes(disps_all, geometry)
    except InputFormatError as exc:
        raise InputFormatError(f"{where}: {exc}") from exc
    vib = np.setdiff1d(np.arange(len(freqs_all)), drop)
    freqs = freqs_all[vib]
    notes = [
        f"{len(freqs_all)} modes printed; {len(drop)} with rigid-body overlap > "
        f"{RIGID_OVERLAP} dropped",
        "displacements printed with sum(m d^2) = 1, converted to mass-weighted orthonormal modes",
    ]
    notes += pass_on(find_program_warnings(lines, WARNING_RULES), where=where, program=PROGRAM)
    ir = None
    ir_table = read_ir_table(lines, where)
    if ir_table is not None:
        ir = match_ir(*ir_table, freqs)
        notes.append(
            "IR intensities (km/mole) from the infrared table, matched by frequency"
            if ir is not None
            else "IR intensities not read: the infrared table's frequencies do not match"
        )
    precise = read_precise_frequencies(lines, where)
    if (
        precise is not None
        and precise.shape == freqs.shape
        and np.allclose(precise, freqs, atol=0.0051, rtol=0)
    ):
        freqs = precise
        notes.append("frequencies from the Hessian step (4 decimals)")
    printed = read_raman_rows(lines, where)
    if printed is not None and (
        printed.freqs_cm1.shape != freqs_all.shape
        or not np.allclose(printed.freqs_cm1, freqs_all, atol=0.0051, rtol=0)
    ):
        raise InputFormatError(f"{where}: the raman data rows do not match the printed modes")
    dalpha_dx = read_dalpha_dx_au(lines, n_atoms, where)
    dalpha_ang2 = read_dalpha_dx_ang2(lines, n_atoms, where)
    if dalpha_dx is None:
        dalpha_dx = dalpha_ang2
    elif dalpha_ang2 is not None:
        check_printed(
            "polarizability derivative",
            dalpha_dx.ravel(),
            dalpha_ang2.ravel(),
            where=where,
            atol=DERIVATIVE_ATOL,
            rtol=DERIVATIVE_RTOL,
            origin="of the atomic-unit block (converted with CODATA bohr)",
            reference="the angstrom^2 block",
            item="value",
        )
    a2 = gamma2 = None
    if dalpha_dx is not None:
        notes.append("derivatives from the atomic-unit block, converted with CODATA bohr")
    elif printed is not None:
        a2, gamma2 = printed.isotropic[vib] ** 2, printed.anisotropy[vib] ** 2
        notes.append("no derivatives: a2, gamma2 from the printed isotropic and anisotropic parts")
    result = ModeSet(
        atomic_numbers=geometry.atomic_numbers,
        coordinates_ang=geometry.coordinates_ang,
        freqs_cm1=freqs,
        modes=modes_from_displacements(disps_all[vib], geometry.masses_da),
        masses_da=geometry.masses_da,
        dalpha_dx=dalpha_dx,
        a2=a2,
        gamma2=gamma2,
        ir_intensity_km_mol=ir,
        provenance=Provenance(
            source_file=where,
            source_kind="gamess-uk",
            program=PROGRAM,
            masses="as printed (molecular geometry (angstrom), atomic weight)",
            notes=tuple(notes),
            **read_metadata(lines),
        ),
    )
    if dalpha_dx is not None and printed is not None:
        _check(result, printed, vib, where)
    return result


def _check(modes: ModeSet, printed: RamanRows, vib: np.ndarray, where: str) -> None:
    """Warn where vibrapol's invariants, activities and ratios differ from the printed ones."""
    a2, gamma2 = modes.raman_invariants()
    s = inv.activity(a2, gamma2)
    s_printed = printed.activities[vib]
    check_printed(
        "|a'|", np.sqrt(a2), np.abs(printed.isotropic[vib]), where=where, atol=INVARIANT_ATOL
    )
    check_printed(
        "gamma'", np.sqrt(gamma2), printed.anisotropy[vib], where=where, atol=INVARIANT_ATOL
    )
    check_printed(
        "Raman activity", s, s_printed, where=where, atol=ACTIVITY_ATOL, rtol=ACTIVITY_RTOL
    )
    check_printed_rho(
        a2,
        gamma2,
        printed.rho_linear[vib],
        s_printed,
        min_activity=RHO_MIN_ACTIVITY,
        where=where,
        atol=RHO_ATOL,
    )


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader("gamess-uk", "GAMESS-UK Raman output", sniff, read_gamessuk)
