"""Reader for DALTON Raman outputs (``.RAMAN`` with ``.VIBANA``, numerical differentiation).

What the program prints, and what vibrapol does with it:

- the geometry (``Molecular geometry (au)``; the last one printed is the reference geometry,
  after the displaced ones), the isotopic masses and the static polarizability: read with
  cclib, which reads them correctly;
- ``Vibrational Frequencies and IR Intensities`` and ``Normal Coordinates``: the 3N−6
  vibrations only, **highest frequency first**, as Cartesian displacements normalised so that
  Σ m d² = 1.  Read by our own blocks (cclib sorts the frequencies but only reverses the
  vectors, which pairs them wrongly unless the printed order is strictly descending) and put
  in ascending order; converted with :func:`vibrapol.vibrations.modes_from_displacements`;
- ``Polarizability tensor (alpha) gradient``: ∂α/∂x in atomic units (bohr²), 9 rows
  (xx, xy, xz, yx, …, zz) by 3N columns (atom-major), from which vibrapol computes every Raman
  quantity (the tensor is symmetrised: its xz and zx rows differ in the last digits);
- ``Raman related properties``: per mode ``Alpha**2`` (a′²), ``Beta(a)**2`` (γ′²), ``Pol.Int.``
  (45a′² + 4γ′²), ``Depol.Int.`` (3γ′²) and ``Dep. Ratio`` (ρ for linearly polarized light,
  printed even for modes with no intensity).  The activity is ``Pol.Int.`` + ``Depol.Int.``;
  cclib 1.8.1 reports ``Pol.Int.`` alone as the activity, which is wrong.
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
    first_line_with,
    floats,
    last_line_with,
    parse_with_cclib,
)
from vibrapol.sources._layout import layout_error
from vibrapol.sources._program_warnings import Rule, find_program_warnings, pass_on
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.units import BOHR2_TO_ANG2, BOHR3_TO_ANG3
from vibrapol.vibrations import modes_from_displacements

PROGRAM = "DALTON"

#: DALTON's warnings about its vibrational and response results.  The non-equilibrium text is
#: from the real DALTON 2015 output; the convergence phrases are generic (no real example seen).
WARNING_RULES = (
    Rule("Vibrational analysis performed at a non-equilibrium geometry", 2, "DALTON 2015 output"),
    Rule("not converged", 0, "generic phrase"),
    Rule("NOT CONVERGED", 0, "generic phrase"),
)

#: Tolerances against the printed Raman table (6 decimals, half a unit 5e-7).  The normal
#: coordinates carry 6 decimals too, which moves a′², γ′² and the activities by up to ≈ 6e-5 of
#: their values on the dvb output; rtol = 3e-4 covers that.
INVARIANT_ATOL = 1e-5
INVARIANT_RTOL = 3e-4
#: ρ: the rounding above moves it by ≤ 1e-5 for modes with a printed activity of at least
#: :data:`RHO_MIN_ACTIVITY` Å⁴/amu (the ratio printed for modes without intensity is noise).
RHO_ATOL = 1e-4
RHO_MIN_ACTIVITY = 1e-2


@dataclass(frozen=True, eq=False)
class RamanRows:
    """The ``Raman related properties`` table, in printed order (highest frequency first).

    Attributes are arrays (n,): ``freqs_cm1``, ``a2`` (Alpha**2), ``gamma2`` (Beta(a)**2),
    ``parallel`` (Pol.Int.), ``crossed`` (Depol.Int.), all in Å⁴/amu, and ``rho_linear``.
    """

    freqs_cm1: np.ndarray
    a2: np.ndarray
    gamma2: np.ndarray
    parallel: np.ndarray
    crossed: np.ndarray
    rho_linear: np.ndarray

    @property
    def activities(self) -> np.ndarray:
        """S = 45a′² + 7γ′² = Pol.Int. + Depol.Int."""
        return self.parallel + self.crossed


def sniff(head: str, tail: str) -> bool:
    """True for a DALTON output (its banner names the program)."""
    return (
        "This is output from DALTON" in head or "Dalton, a Molecular Electronic Structure" in head
    )


def read_frequencies(lines: list[str], where: str = "") -> np.ndarray:
    """Vibrational frequencies in printed order (highest first).

    Layout (values invented)::

          Vibrational Frequencies and IR Intensities
          ------------------------------------------

          mode   irrep        frequency             IR intensity
          ============================================================
                          cm-1       hartrees     km/mol   (D/A)**2/amu
          ------------------------------------------------------------
           1      A      3800.12    0.017315     12.345   0.2921
           2      A      1650.34    0.007520      0.678   0.0160

    Raises
    ------
    InputFormatError
        If the table is missing or empty (truncated output, or no vibrational analysis).
    """
    start = last_line_with(lines, "Vibrational Frequencies and IR Intensities")
    if start is None:
        raise InputFormatError(
            f"{where}: no vibrational frequencies (truncated output, or no .VIBANA?)"
        )
    freqs = [floats(tokens[2], where)[0] for tokens in _frequency_rows(lines, start, where)]
    if not freqs:
        raise InputFormatError(
            f"{where}: the vibrational frequency table is empty (truncated output?)"
        )
    return np.array(freqs)


def _frequency_rows(lines: list[str], start: int, where: str) -> list[list[str]]:
    """Tokens of the rows of the frequency table whose title is at ``start``."""
    rows: list[list[str]] = []
    dashes = 0
    for i in range(start + 2, len(lines)):
        line = lines[i]
        if line.strip().startswith("----"):
            dashes += 1
            continue
        if dashes < 1:
            continue
        if not line.strip():
            if rows:
                break
            continue
        tokens = line.split()
        if len(tokens) < 3 or not tokens[0].isdigit():
            raise layout_error(where, "the frequency table", i, f"row {line.strip()!r}")
        rows.append(tokens)
    return rows


def read_ir_intensities(lines: list[str], where: str = "") -> np.ndarray | None:
    """The km/mol column of the frequency table, in printed order; None when not printed.

    The column is found by the unit row (``cm-1  hartrees  km/mol  (D/A)**2/amu``, see
    :func:`read_frequencies`); DALTON prints the same intensity in (D/Å)²/amu beside it.
    """
    start = last_line_with(lines, "Vibrational Frequencies and IR Intensities")
    if start is None:
        return None
    units = next((line.split() for line in lines[start : start + 8] if "cm-1" in line.split()), [])
    if "km/mol" not in units:
        return None
    column = 2 + units.index("km/mol") - units.index("cm-1")
    rows = _frequency_rows(lines, start, where)
    if any(len(tokens) <= column for tokens in rows):
        return None
    return np.array([floats(tokens[column], where)[0] for tokens in rows])


def read_normal_coordinates(
    lines: list[str], n_modes: int, n_atoms: int, where: str = ""
) -> np.ndarray:
    """Displacements of each mode in printed order, shape (n_modes, 3N).

    Layout (groups of five modes, one blank-separated triple of rows per atom; invented)::

          Normal Coordinates (bohrs*amu**(1/2)):
          --------------------------------------


                        1  3800     2  1650
          ----------------------------------------------------------------------

            O      x    0.000000    0.000000
            O      y    0.000000    0.000000
            O      z   -0.068041    0.040825

            H      x    ...
    """
    start = last_line_with(lines, "Normal Coordinates (bohrs*amu**(1/2))")
    if start is None:
        raise InputFormatError(f"{where}: no normal coordinates (truncated output?)")
    n_coords = 3 * n_atoms
    out = np.full((n_modes, n_coords), np.nan)
    first_mode, row = 0, 0
    group: list[int] = []
    for i in range(start + 2, len(lines)):
        line = lines[i]
        tokens = line.split()
        if not tokens or tokens[0].startswith("---"):
            continue
        if len(tokens) >= 2 and len(tokens) % 2 == 0 and all(t.isdigit() for t in tokens[::2]):
            if row not in (0, n_coords):
                break
            group = [int(t) - 1 for t in tokens[::2]]
            first_mode, row = group[0], 0
            continue
        if not group or len(tokens) < 3 or tokens[1] not in ("x", "y", "z") or row == n_coords:
            break
        values = floats(" ".join(tokens[2:]), where)
        if len(values) != len(group) or group[-1] >= n_modes:
            if i == len(lines) - 1:
                raise InputFormatError(
                    f"{where}: normal coordinates end in a partial row (truncated output?)"
                )
            raise layout_error(
                where, "the normal coordinates", i, f"row {line.strip()!r} does not fit its group"
            )
        out[first_mode : first_mode + len(values), row] = values
        row += 1
        if row == n_coords and group[-1] == n_modes - 1:
            break
    if np.isnan(out).any():
        raise InputFormatError(f"{where}: normal coordinates incomplete (truncated output?)")
    return out


def read_dalpha_dx(
    lines: list[str], n_atoms: int, where: str = ""
) -> tuple[np.ndarray, str] | None:
    """∂α/∂x converted to Å², shape (3N, 3, 3), and the printed frequency; None when absent.

    Reads the first block (the first laser frequency requested; the dvb test output has only
    the static one, ω = 0).

    Layout (9 rows xx, xy, xz, yx, yy, yz, zx, zy, zz; columns are Cartesian coordinates in
    groups of five; values invented)::

          Polarizability tensor (alpha) gradient
          --------------------------------------

          frequency:0.0000

                       Column   1     Column   2     Column   3
               1       1.23456789    -0.12345678     0.00000000
               2      ...
               9      ...
    """
    # the first frequency, like the first Raman table
    start = first_line_with(lines, "Polarizability tensor (alpha) gradient")
    if start is None:
        return None
    n_coords = 3 * n_atoms
    grad = np.full((9, n_coords), np.nan)
    columns: list[int] = []
    label = ""
    for line in lines[start + 2 :]:
        tokens = line.split()
        if line.strip().startswith("frequency:"):
            label = line.strip()
        elif tokens and tokens[0] == "Column":
            columns = [int(t) - 1 for t in tokens[1::2]]
        elif columns and len(tokens) == len(columns) + 1 and tokens[0].isdigit():
            grad[int(tokens[0]) - 1, columns] = floats(" ".join(tokens[1:]), where)
        elif columns and tokens:
            break
        if columns and columns[-1] == n_coords - 1 and not np.isnan(grad).any():
            break
    if np.isnan(grad).any():
        raise InputFormatError(f"{where}: polarizability gradient incomplete (truncated output?)")
    tensors = grad.T.reshape(n_coords, 3, 3)
    return 0.5 * (tensors + tensors.transpose(0, 2, 1)) * BOHR2_TO_ANG2, label


def read_raman_rows(lines: list[str], where: str = "") -> RamanRows | None:
    """The first ``Raman related properties`` table, in printed order; None when absent.

    Layout (values invented)::

             Raman related properties for freq.  0.000000 au  = Infinity nm
             ---------------------------------------------------------------

         Mode    Freq.     Alpha**2   Beta(a)**2   Pol.Int.   Depol.Int.  Dep. Ratio

            1   3800.12    0.123456    1.234567   10.493628    3.703701    0.352941
            2   1650.34    0.000000    0.000000    0.000000    0.000000    0.512345
    """
    start = first_line_with(lines, "Raman related properties for freq.")
    if start is None:
        return None
    rows: list[list[float]] = []
    for line in lines[start + 2 :]:
        tokens = line.split()
        if not tokens or tokens[0] == "Mode":
            if rows:
                break
            continue
        if len(tokens) != 7 or not tokens[0].isdigit():
            break
        rows.append(floats(" ".join(tokens[1:]), where))
    if not rows:
        raise InputFormatError(f"{where}: the Raman table is empty (truncated output?)")
    return RamanRows(*np.array(rows).T)


def read_dalton(path: str | Path) -> ModeSet:
    """Read a DALTON Raman output into a :class:`~vibrapol.modeset.ModeSet` (ascending modes).

    Warns
    -----
    PrintedValueMismatch
        When a′², γ′², activities or ρ computed from the derivatives disagree with the printed
        Raman table beyond print precision.
    """
    where = str(path)
    text = read_text(path)
    lines = text.splitlines()
    freqs = read_frequencies(lines, where)
    data = parse_with_cclib(
        "DALTON", text, where, required=("atomnos", "atomcoords"), hint="truncated output?"
    )
    z = np.asarray(data.atomnos, dtype=int)
    disps = read_normal_coordinates(lines, len(freqs), len(z), where)
    order = np.argsort(freqs, kind="stable")
    printed_masses = getattr(data, "atommasses", None)
    masses = default_masses(z) if printed_masses is None else np.asarray(printed_masses, float)
    printed = read_raman_rows(lines, where)
    if printed is not None and (
        printed.freqs_cm1.shape != freqs.shape
        or not np.allclose(printed.freqs_cm1, freqs, atol=0.006, rtol=0)
    ):
        raise InputFormatError(f"{where}: the Raman table does not match the frequency table")
    gradient = read_dalpha_dx(lines, len(z), where)
    dalpha_dx = None if gradient is None else gradient[0]
    notes = [
        "modes printed highest first; stored in ascending order",
        "displacements printed with sum(m d^2) = 1, converted to mass-weighted orthonormal modes",
    ]
    notes += pass_on(find_program_warnings(lines, WARNING_RULES), where=where, program=PROGRAM)
    ir = read_ir_intensities(lines, where)
    if ir is not None:
        notes.append("IR intensities from the km/mol column of the frequency table")
    a2 = gamma2 = None
    if gradient is not None:
        label = gradient[1] or "frequency not printed"
        notes.append(f"derivatives (bohr^2, {label}) converted to angstrom^2")
    elif printed is not None:
        a2, gamma2 = printed.a2[order], printed.gamma2[order]
        notes.append("no derivatives: a2, gamma2 from the printed Alpha**2 and Beta(a)**2")
    metadata = data.metadata
    polarizabilities = getattr(data, "polarizabilities", None)
    alpha = None
    if polarizabilities is not None and len(polarizabilities):
        alpha_au = np.asarray(polarizabilities[-1], dtype=float)
        alpha = 0.5 * (alpha_au + alpha_au.T) * BOHR3_TO_ANG3
    result = ModeSet(
        atomic_numbers=z,
        coordinates_ang=np.asarray(data.atomcoords[-1]),
        freqs_cm1=freqs[order],
        modes=modes_from_displacements(disps[order], masses),
        masses_da=masses,
        dalpha_dx=dalpha_dx,
        a2=a2,
        gamma2=gamma2,
        polarizability_ang3=alpha,
        ir_intensity_km_mol=None if ir is None else ir[order],
        provenance=Provenance(
            source_file=where,
            source_kind="dalton",
            program=PROGRAM,
            program_version=_version(lines) or str(metadata.get("package_version", "")),
            method=str(metadata.get("functional") or (metadata.get("methods") or [""])[-1]),
            basis=str(metadata.get("basis_set", "")),
            masses="as printed (Isotopic Masses)"
            if printed_masses is not None
            else DEFAULT_MASSES_NOTE,
            notes=tuple(notes),
        ),
    )
    if gradient is not None and printed is not None:
        _check(result, printed, order, where)
    return result


def _version(lines: list[str]) -> str:
    """The version from the banner line.

    'This is output from DALTON 2015.0' (real 2015 output) gives '2015.0'; the later form
    'This is output from DALTON release Dalton2016.2 (2016)' (from memory) gives '2016.2'.
    """
    for line in lines[:50]:
        match = re.search(r"This is output from DALTON\s+(?:release\s+)?(?:Dalton)?(\S+)", line)
        if match:
            return match.group(1)
    return ""


def _check(modes: ModeSet, printed: RamanRows, order: np.ndarray, where: str) -> None:
    """Warn where vibrapol's invariants, activities and ratios differ from the printed ones."""
    a2, gamma2 = modes.raman_invariants()
    s = inv.activity(a2, gamma2)
    s_printed = printed.activities[order]
    checks = (
        ("a'^2 (Alpha**2)", a2, printed.a2[order]),
        ("gamma'^2 (Beta(a)**2)", gamma2, printed.gamma2[order]),
        ("Raman activity (Pol.Int. + Depol.Int.)", s, s_printed),
    )
    for quantity, computed, shown in checks:
        check_printed(
            quantity, computed, shown, where=where, atol=INVARIANT_ATOL, rtol=INVARIANT_RTOL
        )
    check_printed_rho(
        a2,
        gamma2,
        printed.rho_linear[order],
        s_printed,
        min_activity=RHO_MIN_ACTIVITY,
        where=where,
        atol=RHO_ATOL,
    )


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader("dalton", "DALTON Raman output", sniff, read_dalton)
