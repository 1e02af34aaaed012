"""Parsers of the single blocks of an ORCA output (used by :mod:`vibrapol.sources.orca`).

Each function reads one printed block from the list of lines, given the index of its title, and
says in its docstring what the block looks like.  A block that stops where the file stops is
reported as truncated; a block whose lines are there but laid out in a way these parsers do not
know is reported as an unrecognised layout, with the line number.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.sources._common import floats, truncated_error

_FREQ_LINE = re.compile(r"^\s*(\d+):\s+(-?\d+\.\d+)\s+cm\*\*-1(.*)$")
_TABLE_ROW = re.compile(r"^\s*(\d+):\s+(.*)$")
#: A species label as ORCA prints it with symmetry on: running count, dash, species ("2-Au").
_IRREP = re.compile(r"^(\d+)-([A-Za-z][A-Za-z0-9'\"]*)$")
_POINT_GROUP = re.compile(r"^\s*Point group:\s*([A-Za-z0-9]+)", re.IGNORECASE)


def find_titles(lines: list[str], title: str, stop: int | None = None) -> list[int]:
    """Indices of the lines (before ``stop``) that are exactly ``title``, underlined by dashes."""
    end = len(lines) if stop is None else stop
    return [
        i
        for i in range(min(end, len(lines) - 1))
        if lines[i].strip() == title and lines[i + 1].lstrip().startswith("---")
    ]


def block_error(lines: list[str], i: int, where: str, block: str) -> InputFormatError:
    """The error for a block that cannot be read at line index ``i``.

    "ends early" when the file ends there (nothing but blank lines from ``i`` on, or ``i`` is
    the last line, perhaps cut in the middle); otherwise "unrecognised layout", quoting the line:
    a layout variant is not a truncated file.
    """
    if i >= len(lines) - 1 or not any(line.strip() for line in lines[i:]):
        return truncated_error(where, f"ORCA {block} block ends early at line {i + 1}")
    text = lines[i].strip()
    shown = text if len(text) <= 60 else text[:57] + "..."
    return InputFormatError(
        f"{where}: unrecognised layout of the ORCA {block} block at line {i + 1} ({shown!r}); "
        "this ORCA version or option prints it differently: please report it with the file"
    )


def coordinates_block(lines: list[str], title: int, where: str) -> tuple[list[str], np.ndarray]:
    """Element symbols and positions in Å.  ``title`` is the index of the title line.

    Layout (own numbers)::

        ---------------------------------
        CARTESIAN COORDINATES (ANGSTROEM)
        ---------------------------------
          O      0.000000    0.000000    0.118300
          H      0.000000    0.761200   -0.473200
        (blank line)
    """
    symbols, coords = [], []
    for i in range(title + 2, len(lines)):
        tokens = lines[i].split()
        if not tokens:
            break
        if len(tokens) != 4:
            raise InputFormatError(
                f"{where}: line {i + 1}: expected 'symbol x y z', got {lines[i].strip()!r}"
            )
        symbols.append(tokens[0])
        coords.append(floats(" ".join(tokens[1:]), f"{where}: line {i + 1}"))
    if not symbols:
        raise block_error(lines, title + 2, where, "CARTESIAN COORDINATES (ANGSTROEM)")
    return symbols, np.array(coords)


def masses_block(lines: list[str], title: int, n_atoms: int, where: str) -> np.ndarray:
    """Atomic masses in Da from the a.u. coordinate table.

    Layout (own numbers)::

        ----------------------------
        CARTESIAN COORDINATES (A.U.)
        ----------------------------
          NO LB      ZA    FRAG     MASS         X           Y           Z
           0 O     8.0000    0    15.999    0.000000    0.000000    0.223553
    """
    masses = []
    for i in range(title + 3, title + 3 + n_atoms):
        tokens = lines[i].split() if i < len(lines) else []
        if len(tokens) < 8:
            raise block_error(lines, i, where, "CARTESIAN COORDINATES (A.U.)")
        masses.append(floats(tokens[4], f"{where}: line {i + 1}")[0])
    return np.array(masses)


@dataclass(frozen=True)
class Frequencies:
    """The VIBRATIONAL FREQUENCIES block.

    Attributes
    ----------
    freqs_cm1 : ndarray
        All 3N wavenumbers in ORCA's mode order (imaginary ones negative).
    irreps : tuple of str
        Species printed after each wavenumber with symmetry on ("Au" of "2-Au"), '' where none.
    point_group : str
        From a ``Point group:`` line inside the block ('' when absent).
    """

    freqs_cm1: np.ndarray
    irreps: tuple[str, ...]
    point_group: str


def frequencies_block(lines: list[str], title: int, where: str) -> Frequencies:
    """All 3N wavenumbers in cm⁻¹ and, with symmetry on, their species.

    Layout without symmetry (ORCA 5.0.0 / 6.0.1; an imaginary mode is flagged, from memory)::

        -----------------------
        VIBRATIONAL FREQUENCIES
        -----------------------

        Scaling factor for frequencies =  1.000000000 (already applied!)

           0:         0.00 cm**-1
           6:      -120.40 cm**-1 ***imaginary mode***
           7:      1650.25 cm**-1

    With ``usesym`` ORCA 6 adds a ``Point group:`` line and an ``Irrep`` heading before the list
    and a label (running count within the species, dash, species) after each wavenumber::

        Point group:  C2h
                                     Irrep
           6:        77.70 cm**-1     1-Au
    """
    freqs: list[float] = []
    labels: list[str] = []
    group = ""
    for i in range(title + 2, len(lines)):
        match = _FREQ_LINE.match(lines[i])
        if match:
            if int(match.group(1)) != len(freqs):
                raise InputFormatError(
                    f"{where}: line {i + 1}: frequencies out of order in ORCA output"
                )
            freqs.append(float(match.group(2)))
            found = [m for m in map(_IRREP.match, match.group(3).split()) if m]
            labels.append(found[-1].group(2) if found else "")
        elif freqs:
            break
        elif pg := _POINT_GROUP.match(lines[i]):
            group = pg.group(1)
    if not freqs:
        raise block_error(lines, title + 2, where, "VIBRATIONAL FREQUENCIES")
    return Frequencies(np.array(freqs), tuple(labels), group)


def _is_header(line: str) -> bool:
    tokens = line.split()
    return bool(tokens) and all(t.isdigit() for t in tokens)


def _label_row(line: str, header: str, cols: list[int]) -> dict[int, str] | None:
    """Column → species of a label row under a mode-number row (None if ``line`` is not one).

    Each label is matched to the mode number whose right end is nearest to its own, so rows
    that leave some columns empty (rigid-body modes) are read right; a blank line there is a
    row of empty labels (a block of rigid-body modes only).
    """
    tokens = list(re.finditer(r"\S+", line))
    if not tokens:
        return {}
    labels = [(t.end(), _IRREP.match(t.group())) for t in tokens]
    ends = [m.end() for m in re.finditer(r"\S+", header)]
    out: dict[int, str] = {}
    for end, label in labels:
        if label is None:
            return None
        j = int(np.argmin([abs(e - end) for e in ends]))
        out[cols[j]] = label.group(2)
    return out


def normal_modes_block(
    lines: list[str], title: int, n_coords: int, where: str
) -> tuple[np.ndarray, dict[int, str]]:
    """The 3N × 3N matrix of printed mode vectors (one column per mode) and printed species.

    Layout (own numbers; six columns per block, blocks follow each other directly)::

        ------------
        NORMAL MODES
        ------------

        These modes are the Cartesian displacements weighted by the diagonal matrix
        M(i,i)=1/sqrt(m[i]) where m[i] is the mass of the displaced atom
        Thus, these vectors are normalized but *not* orthogonal

                          0          1          2          3          4          5
              0       0.000000   0.000000   0.000000   0.000000   0.000000   0.000000
              ...

    With ``usesym`` ORCA 6 prints a ``Point group:`` line before the first row of mode numbers
    and, under every row of mode numbers, a row of species labels (``1-Ag   1-Bu ...``).

    Returns
    -------
    matrix : ndarray (3N, 3N)
    irreps : dict
        Mode index → species from the label rows (empty without symmetry).
    """
    matrix = np.full((n_coords, n_coords), np.nan)
    irreps: dict[int, str] = {}
    i = title + 2
    while i < len(lines) and not _is_header(lines[i]):
        if lines[i].lstrip().startswith("---") or "SPECTRUM" in lines[i]:
            raise block_error(lines, i, where, "NORMAL MODES")
        i += 1
    while i < len(lines) and _is_header(lines[i]):
        header = lines[i]
        cols = [int(t) for t in header.split()]
        if max(cols) >= n_coords:
            raise InputFormatError(f"{where}: line {i + 1}: mode index beyond 3N = {n_coords}")
        if i + 1 < len(lines) and (labels := _label_row(lines[i + 1], header, cols)) is not None:
            irreps.update(labels)
            i += 1
        for row in range(n_coords):
            i += 1
            tokens = lines[i].split() if i < len(lines) else []
            if len(tokens) != len(cols) + 1 or tokens[0] != str(row):
                raise block_error(lines, i, where, "NORMAL MODES")
            matrix[row, cols] = floats(" ".join(tokens[1:]), f"{where}: line {i + 1}")
        i += 1
    if np.isnan(matrix).any():
        raise block_error(lines, i, where, "NORMAL MODES")
    return matrix, irreps


def _mode_table(
    lines: list[str], title: int, n_values: int, block: str, where: str
) -> dict[int, list[float]]:
    """Rows ``k: v1 v2 ...`` after the dashed rule under a column header, up to a blank line.

    Species labels (``1-Au``) and brackets in a row are skipped.
    """
    i = title + 2
    while i < len(lines) and not lines[i].startswith("---"):
        i += 1
    rows: dict[int, list[float]] = {}
    for j in range(i + 1, len(lines)):
        match = _TABLE_ROW.match(lines[j])
        if not match:
            break
        tokens = match.group(2).replace("(", " ").replace(")", " ").split()
        values = [t for t in tokens if not _IRREP.match(t)][:n_values]
        if len(values) < n_values:
            if j < len(lines) - 1:
                raise block_error(lines, j, where, block)
            raise truncated_error(
                where, f"ORCA {block} row at line {j + 1} has {len(values)} of {n_values} numbers"
            )
        rows[int(match.group(1))] = floats(" ".join(values), f"{where}: line {j + 1}")
    if not rows:
        raise block_error(lines, i + 1, where, block)
    return rows


def raman_block(lines: list[str], title: int, where: str) -> dict[int, tuple[float, float, float]]:
    """Mode index → (wavenumber cm⁻¹, activity Å⁴/amu, depolarization ratio, plane-polarized).

    Layout (own numbers)::

        --------------
        RAMAN SPECTRUM
        --------------

         Mode    freq (cm**-1)   Activity   Depolarization
        -------------------------------------------------------------------
           6:      1650.25      5.123456      0.692110
    """
    rows = _mode_table(lines, title, 3, "RAMAN SPECTRUM", where)
    return {k: (v[0], v[1], v[2]) for k, v in rows.items()}


def ir_spectrum_block(lines: list[str], title: int, where: str) -> dict[int, float] | None:
    """Mode index → IR intensity in km/mol, from the column headed ``Int`` over ``km/mol``.

    Layout (ORCA 5.0.0 and 6.0.1, own numbers)::

        -----------
        IR SPECTRUM
        -----------

         Mode   freq       eps      Int      T**2         TX        TY        TZ
               cm**-1   L/(mol*cm) km/mol    a.u.
        ----------------------------------------------------------------------------
          6:   1650.25   0.012345   62.39  0.003740  ( 0.000000 -0.061155  0.000000)

    Returns None when the heading has no ``Int`` column with the unit ``km/mol`` under it
    (older ORCA versions print another set of columns; their units are not guessed).
    """
    heading = next(
        (k for k in range(title + 2, min(title + 8, len(lines))) if "Mode" in lines[k].split()),
        None,
    )
    if heading is None or heading + 1 >= len(lines):
        return None
    names = lines[heading].split()[1:]
    units = lines[heading + 1].split()
    if "Int" not in names:
        return None
    column = names.index("Int")
    if column >= len(units) or units[column] != "km/mol":
        return None
    rows = _mode_table(lines, title, column + 1, "IR SPECTRUM", where)
    return {k: v[column] for k, v in rows.items()}


def polarizability_block(lines: list[str], title: int, where: str) -> np.ndarray:
    """Static polarizability, raw Cartesian tensor in a.u. (bohr³).

    Layout (own numbers; ORCA 6 prints more digits and a few description lines first)::

        -------------------------
        THE POLARIZABILITY TENSOR
        -------------------------

        The raw cartesian tensor (atomic units):
            8.51230      0.00000      0.00000
            0.00000      6.92401      0.00000
            0.00000      0.00000      7.71050
    """
    for i in range(title, min(title + 30, len(lines))):
        if lines[i].strip().startswith("The raw cartesian tensor"):
            rows = [
                floats(lines[i + k], f"{where}: line {i + k + 1}")
                for k in (1, 2, 3)
                if i + k < len(lines)
            ]
            if len(rows) != 3 or any(len(r) != 3 for r in rows):
                raise block_error(lines, i + 1 + len(rows), where, "POLARIZABILITY TENSOR")
            return np.array(rows)
    raise block_error(lines, title + 2, where, "POLARIZABILITY TENSOR")
