"""TURBOMOLE ``aoforce`` output: frequencies, normal modes, IR intensities, relative Raman data.

What aoforce prints, and what is read (layout from memory and from the layout cclib's TURBOMOLE
parser expects; no real TURBOMOLE file was at hand, see docs/input-formats.md):

* ``atomic coordinates            atom    charge  isotop``: positions in bohr and element
  symbols; the last such block before the normal modes is used.
* ``ATOMIC WEIGHTS``: the masses used, in Da (when absent: the default masses, said so).
* ``NORMAL MODES and VIBRATIONAL FREQUENCIES (cm**(-1))``: blocks of six modes, each with the
  rows ``frequency`` (imaginary modes as ``i123.45``), ``symmetry``, ``intensity (km/mol)``,
  optionally the Raman rows, the displacement of every atom (``x``, ``y``, ``z`` lines) and
  ``reduced mass(g/mol)``.  All 3N modes are printed; those of frequency 0.00 are the overall
  translations and rotations and are dropped.
* The printed mode vectors: which normalisation aoforce uses is not known from a real file, so
  the reader finds out from the numbers: mass-weighted orthonormal vectors L (rows orthonormal
  as printed) or Cartesian displacements (rows orthogonal after multiplying by √m, any length).
  Which one was found is recorded in the provenance.
* With Raman intensities, a heading ``differential RAMAN cross sections ...`` above the first
  block names the excitation wavenumber (cm⁻¹, or a wavelength in nm) and the temperature, and
  each block has the rows ``(par,par)``, ``(ort,ort)``, ``(ort,unpol)`` (differential cross
  sections for 90° scattering in % of the most active mode) and ``depol. ratio``.  What can be
  recovered from them is relative: see :func:`relative_invariants`.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.constants import e as ELEMENTARY_CHARGE_C

from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import (
    atomic_numbers_from_symbols,
    truncated_error,
)
from vibrapol.sources.registry import Reader
from vibrapol.sources.turbomole_raman import relative_invariants
from vibrapol.textio import read_text
from vibrapol.units import BOHR_ANG, C_CM_S, HARTREE_J, PLANCK_J_S
from vibrapol.vibrations import modes_from_displacements

#: 1 eV and 1 hartree as wavenumbers, cm⁻¹ (E/(hc), scipy.constants via vibrapol.units).
EV_TO_CM1 = ELEMENTARY_CHARGE_C / (PLANCK_J_S * C_CM_S)
HARTREE_TO_CM1 = HARTREE_J / (PLANCK_J_S * C_CM_S)
TITLE = "NORMAL MODES and VIBRATIONAL FREQUENCIES (cm**(-1))"
BANNER = "a o f o r c e - program"
RAMAN_ROWS = ("(par,par)", "(ort,ort)", "(ort,unpol)", "depol. ratio")
_VERSION = re.compile(r"TURBOMOLE(?: rev\.)? V(\d+)[.-](\d+)(?:[.-](\d+))?")
_ATOM_ROW = re.compile(r"^\s*(\d+)\s+([A-Za-z]{1,3})\s+x\s+(.*)$")
_LASER_CM1 = re.compile(r"(\d+(?:\.\d*)?)\s*cm\*\*\(?-1\)?|(\d+(?:\.\d*)?)\s*cm-1")
_LASER_NM = re.compile(r"(\d+(?:\.\d*)?)\s*nm\b")
_LASER_EV = re.compile(r"(\d+(?:\.\d*)?)\s*eV\b")
_LASER_AU = re.compile(r"(\d*\.\d+)\s*(?:a\.u\.|hartree)", re.IGNORECASE)
_COORDINATES_HEAD = re.compile(r"atomic coordinates\s+atom\b")
_TEMPERATURE = re.compile(r"(\d+(?:\.\d*)?)\s*K\b")


def _error(lines: list[str], i: int, where: str, block: str) -> InputFormatError:
    """'ends early' when the file ends at line index ``i``, else 'unrecognised layout'."""
    if i >= len(lines) - 1 or not any(line.strip() for line in lines[i:]):
        return truncated_error(where, f"TURBOMOLE {block} ends early at line {i + 1}")
    text = lines[i].strip()
    shown = text if len(text) <= 60 else text[:57] + "..."
    return InputFormatError(
        f"{where}: unrecognised layout of the TURBOMOLE {block} at line {i + 1} ({shown!r}); "
        "please report it with the file"
    )


def coordinates_block(lines: list[str], stop: int, where: str) -> tuple[list[str], np.ndarray]:
    """Element symbols and positions (Å) of the last ``atomic coordinates`` block before ``stop``.

    Layout (own numbers; positions in bohr)::

                            atomic coordinates            atom    charge  isotop
                0.00000000    0.00000000    0.00000000    c      6.000     0
                0.00000000    0.00000000    2.28656861    o      8.000     0
        (blank line)
    """
    heads = [i for i in range(stop) if _COORDINATES_HEAD.search(lines[i])]
    if not heads:
        raise InputFormatError(f"{where}: no 'atomic coordinates' block before the normal modes")
    symbols, coords = [], []
    for i in range(heads[-1] + 1, stop):
        tokens = lines[i].split()
        if not tokens:
            break
        try:
            coords.append([float(t) for t in tokens[:3]])
        except ValueError:
            raise _error(lines, i, where, "atomic coordinates block") from None
        if len(tokens) < 4:
            raise _error(lines, i, where, "atomic coordinates block")
        symbols.append(tokens[3])
    if not symbols:
        raise _error(lines, heads[-1] + 1, where, "atomic coordinates block")
    return symbols, np.array(coords) * BOHR_ANG


def masses_block(lines: list[str], stop: int, n_atoms: int, where: str) -> np.ndarray | None:
    """Masses (Da) from the last ``ATOMIC WEIGHTS`` block before ``stop`` (None if absent).

    Layout (own numbers)::

                    ATOMIC WEIGHTS (average over isotope distribution)
                    ==================================================
                  atom    weight
                    1 c      12.01100
    """
    heads = [i for i in range(stop) if "ATOMIC WEIGHTS" in lines[i]]
    if not heads:
        return None
    masses = []
    for i in range(heads[-1] + 3, heads[-1] + 3 + n_atoms):
        tokens = lines[i].split() if i < len(lines) else []
        try:
            masses.append(float(tokens[2]))
        except (IndexError, ValueError):
            raise _error(lines, i, where, "ATOMIC WEIGHTS block") from None
    return np.array(masses)


def raman_conditions(lines: list[str], title: int, first: int, where: str) -> tuple | None:
    """(excitation wavenumber in cm⁻¹, temperature in K) from the Raman heading, or None.

    The heading lies between the block title and the first ``mode`` row; layout (from memory,
    wording uncertain)::

         differential RAMAN cross sections for 90 degree scattering,
         in % of the most active mode
         excitation wavenumber:    18796.99 cm**(-1)
         temperature:                298.15 K
    """
    start = next((i for i in range(title, first) if "RAMAN" in lines[i].upper()), None)
    if start is None:
        return None
    text = " ".join(lines[start:first])
    laser_cm1 = _excitation_cm1(text)
    temperature = _TEMPERATURE.search(text)
    if laser_cm1 is None or temperature is None:
        missing = "excitation wavenumber" if laser_cm1 is None else "temperature"
        raise InputFormatError(
            f"{where}: unrecognised layout of the TURBOMOLE Raman heading at line {start + 1}: "
            f"no {missing} found in it, so the cross sections cannot be converted"
        )
    return laser_cm1, float(temperature.group(1))


def _excitation_cm1(text: str) -> float | None:
    """The excitation as a wavenumber in cm⁻¹: given in cm⁻¹, nm, eV or a.u. (hartree)."""
    if found := _LASER_CM1.search(text):
        return float(found.group(1) or found.group(2))
    if found := _LASER_NM.search(text):
        return 1e7 / float(found.group(1))
    if found := _LASER_EV.search(text):
        return float(found.group(1)) * EV_TO_CM1
    if found := _LASER_AU.search(text):
        return float(found.group(1)) * HARTREE_TO_CM1
    return None


@dataclass(frozen=True)
class ModeTable:
    """What the blocks of six modes hold, for all 3N modes in aoforce's order."""

    freqs_cm1: np.ndarray
    symmetry: tuple[str, ...]
    ir_km_mol: np.ndarray | None
    raman: dict[str, np.ndarray]
    vectors: np.ndarray  # (3N modes, 3N coordinates), as printed


def _cells(line: str, label: str, header: str, n: int) -> list[str]:
    """The ``n`` cells of a row whose label is ``label``, under the mode numbers of ``header``.

    With fewer fields than modes (blank species of rigid-body modes) each field goes to the
    mode number whose right end is nearest to its own.
    """
    start = line.index(label) + len(label)
    fields = list(re.finditer(r"\S+", line[start:]))
    if len(fields) >= n:
        return [f.group() for f in fields[-n:]]
    ends = [m.end() for m in re.finditer(r"\S+", header)][-n:]
    cells = [""] * n
    for f in fields:
        cells[int(np.argmin([abs(e - (start + f.end())) for e in ends]))] = f.group()
    return cells


def _number(text: str) -> float:
    """A printed cell: '12.5', 'i123.4' (imaginary: negative), '-' (none: NaN)."""
    if text in ("", "-"):
        return float("nan")
    return -float(text[1:]) if text.startswith("i") else float(text)


def _atom_rows(
    lines: list[str],
    i: int,
    atom: re.Match[str],
    index: int,
    cols: list[int],
    vectors: np.ndarray,
    where: str,
) -> None:
    """Fill the x, y, z rows of atom ``index`` (lines i, i+1, i+2) into ``vectors``."""
    follow = [lines[k].split() if k < len(lines) else [] for k in (i + 1, i + 2)]
    rows = [atom.group(3).split(), *(f[1:] for f in follow)]
    checks = [
        int(atom.group(1)) - 1 == index and len(rows[0]) == len(cols),
        follow[0][:1] == ["y"] and len(rows[1]) == len(cols),
        follow[1][:1] == ["z"] and len(rows[2]) == len(cols),
    ]
    if not all(checks):
        raise _error(lines, i + checks.index(False), where, "normal-mode block")
    for c, row in enumerate(rows):
        vectors[cols, 3 * index + c] = [float(x) for x in row]


def mode_blocks(lines: list[str], title: int, n_atoms: int, where: str) -> ModeTable:
    """Read every block of six modes after the title (see the module docstring).

    Layout of one block (own numbers; Raman rows only in runs with Raman intensities)::

               mode               7        8        9
             frequency      1271.16  1410.00  i64.95
             symmetry            b1       b2       a1
                IR              YES      YES      YES
        |dDIP/dQ|   (a.u.)   0.0651   0.1041   0.0372
        intensity (km/mol)     4.12    10.54     1.35
        intensity (  %   )     3.41     8.71     1.12
                RAMAN           YES      YES      YES
           (par,par)           4.26     8.50     7.03
           (ort,ort)           5.68    11.33    38.64
           (ort,unpol)         9.94    19.83    45.67
           depol. ratio      0.7500   0.7500   0.1820
          1   c           x  0.0000000  0.1234567  0.0000000
                          y  ...
                          z  ...
        reduced mass(g/mol)    1.345    1.120    2.871
    """
    n3 = 3 * n_atoms
    freqs: dict[int, float] = {}
    symmetry: dict[int, str] = {}
    ir: dict[int, float] = {}
    raman: dict[str, dict[int, float]] = {key: {} for key in RAMAN_ROWS}
    vectors = np.full((n3, n3), np.nan)
    i = title + 1
    while i < len(lines):
        tokens = lines[i].split()
        if "all done" in lines[i] or (lines[i].startswith(" ====") and freqs):
            break
        if not (tokens and tokens[0] == "mode" and all(t.isdigit() for t in tokens[1:])):
            i += 1
            continue
        cols, header = [int(t) - 1 for t in tokens[1:]], lines[i]
        if not cols or max(cols) >= n3:
            raise _error(lines, i, where, "normal-mode block")
        n, i = len(cols), i + 1
        atoms_seen = 0
        while i < len(lines):
            text = lines[i].strip()
            atom = _ATOM_ROW.match(lines[i])
            try:
                if text.startswith("reduced mass"):
                    break
                if text.startswith("frequency"):
                    freqs.update(
                        zip(
                            cols,
                            map(_number, _cells(lines[i], "frequency", header, n)),
                            strict=True,
                        )
                    )
                elif text.startswith("symmetry"):
                    symmetry.update(zip(cols, _cells(lines[i], "symmetry", header, n), strict=True))
                elif text.startswith("intensity (km/mol)"):
                    values = _cells(lines[i], "intensity (km/mol)", header, n)
                    ir.update(zip(cols, map(_number, values), strict=True))
                elif (key := next((k for k in RAMAN_ROWS if text.startswith(k)), None)) is not None:
                    raman[key].update(
                        zip(cols, map(_number, _cells(lines[i], key, header, n)), strict=True)
                    )
                elif atom:
                    _atom_rows(lines, i, atom, atoms_seen, cols, vectors, where)
                    atoms_seen += 1
                    i += 2
            except InputFormatError:
                raise
            except (ValueError, IndexError):
                raise _error(lines, i, where, "normal-mode block") from None
            i += 1
        if i >= len(lines) or atoms_seen != n_atoms:
            raise _error(lines, min(i, len(lines)), where, "normal-mode block")
        i += 1
    if len(freqs) != n3 or np.isnan(vectors).any():
        raise truncated_error(
            where, f"TURBOMOLE normal modes: {len(freqs)} of 3N = {n3} modes printed in full"
        )
    order = range(n3)
    got_raman = {k: np.array([v.get(j, np.nan) for j in order]) for k, v in raman.items() if v}
    if got_raman and len(got_raman) != len(RAMAN_ROWS):
        absent = next(k for k in RAMAN_ROWS if k not in got_raman)
        raise InputFormatError(
            f"{where}: unrecognised layout of the TURBOMOLE Raman rows: no {absent!r} row"
        )
    return ModeTable(
        freqs_cm1=np.array([freqs[j] for j in order]),
        symmetry=tuple(symmetry.get(j, "") for j in order),
        ir_km_mol=np.array([ir.get(j, np.nan) for j in order]) if ir else None,
        raman=got_raman,
        vectors=vectors,
    )


def _modes(vectors: np.ndarray, masses: np.ndarray, where: str) -> tuple[np.ndarray, str]:
    """Mass-weighted orthonormal modes from the printed vectors, and what they were.

    Printed to 5–7 decimals, true L vectors are orthonormal to about 1e-5; Cartesian
    displacements become orthogonal after multiplying by √m (any length).  The tolerance 5e-3
    allows for masses printed to fewer digits than were used.
    """
    sqrt_m = np.repeat(np.sqrt(masses), 3)
    weighted = vectors * sqrt_m[None, :]
    weighted = weighted / np.linalg.norm(weighted, axis=1, keepdims=True)
    n = len(vectors)
    cartesian_err = np.abs(weighted @ weighted.T - np.eye(n)).max()
    mass_weighted_err = np.abs(vectors @ vectors.T - np.eye(n)).max()
    if cartesian_err <= 5e-3 and cartesian_err <= mass_weighted_err:
        return modes_from_displacements(vectors, masses), (
            "TURBOMOLE printed Cartesian displacements (orthogonal once multiplied by √m; "
            f"largest overlap {cartesian_err:.1g}), converted to mass-weighted modes"
        )
    if mass_weighted_err <= 5e-3:  # finite: the errors above are finite only then
        u, _, vt = np.linalg.svd(vectors, full_matrices=False)
        return u @ vt, (
            "TURBOMOLE printed mass-weighted orthonormal mode vectors (largest deviation "
            f"{mass_weighted_err:.1g}), used as they are"
        )
    raise InputFormatError(
        f"{where}: the printed TURBOMOLE mode vectors are neither orthonormal nor orthogonal "
        "after mass weighting; cannot tell their normalisation (file edited?)"
    )


def parse_turbomole(text: str, where: str = "TURBOMOLE output") -> ModeSet:
    """Build a :class:`ModeSet` from the text of an aoforce output (see the module docstring).

    Raises
    ------
    InputFormatError
        When there is no normal-mode block, or a block is cut short or laid out unknowingly.

    Warns
    -----
    AccuracyWarning
        When the Raman data are relative (always, for aoforce Raman rows).
    """
    lines = text.splitlines()
    titles = [i for i, line in enumerate(lines) if TITLE in line]
    if not titles:
        raise InputFormatError(
            f"{where}: TURBOMOLE output has no '{TITLE}' block; use the aoforce output of a "
            "frequency job"
        )
    title = titles[-1]
    symbols, coords = coordinates_block(lines, title, where)
    z = atomic_numbers_from_symbols(symbols, where)
    masses = masses_block(lines, title, len(z), where)
    table = mode_blocks(lines, title, len(z), where)
    vib = np.flatnonzero(table.freqs_cm1 != 0.0)
    rigid = 3 * len(z) - vib.size
    if rigid not in (5, 6):
        raise InputFormatError(
            f"{where}: {rigid} TURBOMOLE modes have frequency 0.00 where 5 or 6 (overall "
            "translations and rotations) were expected; cannot tell which are vibrations"
        )
    mass_values = default_masses(z) if masses is None else masses
    modes, modes_note = _modes(table.vectors[vib], mass_values, where)
    notes = [f"TURBOMOLE printed all {3 * len(z)} modes; the {rigid} of frequency 0.00 dropped"]
    notes.append(modes_note)
    first_mode = next(i for i in range(title, len(lines)) if lines[i].split()[:1] == ["mode"])
    conditions = raman_conditions(lines, title, first_mode, where)
    a2 = gamma2 = None
    message = ""
    if table.raman and conditions is None:
        raise InputFormatError(
            f"{where}: unrecognised layout of the TURBOMOLE Raman block: Raman rows but no "
            "heading with the excitation wavenumber and temperature above them"
        )
    if table.raman and conditions is not None:
        rows = {k: v[vib] for k, v in table.raman.items()}
        if any(np.isnan(v).any() for v in rows.values()):
            raise InputFormatError(f"{where}: a TURBOMOLE Raman row has an empty cell")
        laser, temperature = conditions
        a2, gamma2, normalisation = relative_invariants(
            table.freqs_cm1[vib], rows, laser, temperature, where
        )
        notes += [
            f"TURBOMOLE Raman rows: differential cross sections for 90° scattering at "
            f"{laser:.2f} cm-1 and {temperature:g} K, {normalisation}",
            "RELATIVE Raman data: a2, gamma2 and activities recovered from the (ort,unpol) row "
            "with the factors (nu0-nu)^4/(nu [1-exp(-hc nu/kT)]) divided out and the depol. "
            "ratio; scaled so that the most active mode has activity 100 (not Å4/amu)",
        ]
        message = (
            f"{where}: TURBOMOLE prints Raman intensities relative to its most active mode: "
            "a², γ² and activities are relative (largest activity = 100), not Å⁴/amu; ratios "
            "are exact to print precision, absolute cross sections are not available"
        )
    else:
        notes.append("no Raman rows (aoforce without Raman intensities): frequencies, modes, IR")
    ir = None if table.ir_km_mol is None else table.ir_km_mol[vib]
    if ir is not None and np.isnan(ir).any():
        raise InputFormatError(f"{where}: a TURBOMOLE 'intensity (km/mol)' cell is empty")
    irreps = tuple(table.symmetry[k] for k in vib)
    version = next((m for m in map(_VERSION.search, lines[:400]) if m), None)
    provenance = Provenance(
        source_file=where,
        source_kind="turbomole",
        program="TURBOMOLE",
        program_version=".".join(g for g in version.groups() if g) if version else "",
        masses="as printed by TURBOMOLE (ATOMIC WEIGHTS)" if masses is not None else "",
        notes=tuple(notes),
        raman_scale="relative" if a2 is not None else "absolute",
    )
    result = ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=table.freqs_cm1[vib],
        modes=modes,
        masses_da=masses,
        a2=a2,
        gamma2=gamma2,
        provenance=provenance,
        ir_intensity_km_mol=ir,
        program_irreps=irreps if all(irreps) else None,
    )
    if message:
        warnings.warn(message, AccuracyWarning, stacklevel=2)
    return result


def read_turbomole(path: str | Path) -> ModeSet:
    """Read a TURBOMOLE aoforce output file (see the module docstring for what is read)."""
    return parse_turbomole(read_text(path), where=str(path))


def sniff_turbomole(head: str, tail: str) -> bool:
    """True for TURBOMOLE aoforce output.

    Its banner, or else the normal-mode block with its ``reduced mass`` rows: the blocks decide,
    so output whose banner was cut off or that another tool re-printed is recognised too.
    """
    if BANNER in head:
        return True
    return any(TITLE in part and "reduced mass(g/mol)" in part for part in (head, tail))


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "turbomole",
    "TURBOMOLE aoforce output (frequencies, modes, IR, relative Raman cross sections)",
    sniff_turbomole,
    read_turbomole,
)
