"""Tensor blocks and options of the GAMESS family: ∂α/∂x, the static α, the method.

Only Firefly 8.0.1's layouts are known from a real output; a derivative block in another unit,
column order or row layout is refused as an unrecognised layout rather than read wrongly.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import numpy as np

from vibrapol.sources._common import floats, last_line_with, truncated_error
from vibrapol.sources._gamess_blocks import ANALYSIS, DERIVATIVE_BLOCK
from vibrapol.sources._layout import layout_error
from vibrapol.units import BOHR2_TO_ANG2

_DERIVATIVE_COLUMNS = ["ALP-XX", "ALP-XY", "ALP-YY", "ALP-XZ", "ALP-YZ", "ALP-ZZ"]


def read_dalpha_dx(lines: Sequence[str], n_atoms: int, where: str = "") -> np.ndarray | None:
    """Cartesian polarizability derivatives, converted from bohr² to Å², shape (3N, 3, 3).

    Returns None when the block is absent (no Raman job, or a member that does not print
    it).  Layout (Firefly 8.0.1; values invented)::

                  ALPHA POLARIZABILITY DERIVATIVE TENSOR     BOHR**2
                  --------------------------------------     -------

           ATOM               ALP-XX     ALP-XY     ALP-YY     ALP-XZ     ALP-YZ     ALP-ZZ
         O          D/DX      1.2345     0.0000     0.5000     0.0000     0.0000    -0.1234
                    D/DY      0.0000     2.3456     0.0000     0.0000     0.0000     0.0000
                    D/DZ      0.0000     0.0000     0.0000     0.9876     0.0000     0.0000
         H          D/DX     ...

    Raises
    ------
    InputFormatError
        For a block cut short, and for one in another unit, column order or row layout.
    """
    start = last_line_with(list(lines), DERIVATIVE_BLOCK)
    if start is None:
        return None
    block = "the polarizability derivative block"
    if "BOHR**2" not in lines[start]:
        raise layout_error(where, block, start, "its unit is not BOHR**2")
    rows: list[list[float]] = []
    columns_seen = False
    i = start
    for i in range(start + 1, len(lines)):
        line = lines[i]
        if len(rows) == 3 * n_atoms or ANALYSIS in line:
            break
        if "ALP-XX" in line:
            if line.split()[-6:] != _DERIVATIVE_COLUMNS:
                raise layout_error(where, block, i, f"columns {' '.join(line.split()[1:])}")
            columns_seen = True
            continue
        match = re.search(r"D/D([XYZ])", line)
        if match:
            if not columns_seen or match.group(1) != "XYZ"[len(rows) % 3]:
                raise layout_error(where, block, i, f"unexpected row {line.strip()!r}")
            values = floats(line[match.end() :], f"{where}: line {i + 1}")
            if len(values) != 6:
                if i == len(lines) - 1:
                    raise truncated_error(where, f"line {i + 1}: derivative row cut short")
                raise layout_error(where, block, i, f"{len(values)} values in a row, expected 6")
            rows.append(values)
        elif rows and line.strip():
            break
    if len(rows) != 3 * n_atoms:
        if i >= len(lines) - 1:
            raise truncated_error(where, f"the derivative block ends after {len(rows)} rows")
        raise layout_error(where, block, start, f"{len(rows)} rows for {n_atoms} atoms")
    xx, xy, yy, xz, yz, zz = np.array(rows).T
    tensors = np.stack(
        [np.stack([xx, xy, xz], -1), np.stack([xy, yy, yz], -1), np.stack([xz, yz, zz], -1)], -2
    )
    return tensors * BOHR2_TO_ANG2


def other_derivative_heading(lines: Sequence[str]) -> int | None:
    """Index of a polarizability-derivative heading not in the layout read here, or None.

    Firefly's own lines ("NUMERICAL COMPUTATION OF POLARIZABILITY DERIVATIVE MATRIX", the
    block :func:`read_dalpha_dx` reads) do not count.
    """
    for i, line in enumerate(lines):
        upper = line.upper()
        if (
            "POLARIZABILITY DERIVATIVE" in upper
            and DERIVATIVE_BLOCK not in line
            and "NUMERICAL COMPUTATION OF" not in upper
        ):
            return i
    return None


def read_polarizability(lines: Sequence[str], where: str = "") -> np.ndarray | None:
    """Static polarizability in Å³ (lower triangle printed), or None when absent.

    Layout (values invented)::

                  ALPHA POLARIZABILITY TENSOR (ANGSTROMS**3)
                  ------------------------------------------

                               X              Y              Z
                  X         1.23456
                  Y         0.00000        2.34567
                  Z         0.00000        0.00000        3.45678
    """
    start = last_line_with(list(lines), "ALPHA POLARIZABILITY TENSOR (ANGSTROMS**3)")
    if start is None:
        return None
    alpha = np.zeros((3, 3))
    row = 0
    for line in lines[start + 1 : start + 12]:
        parts = line.split()
        if parts and parts[0] in ("X", "Y", "Z") and len(parts) == row + 2:
            alpha[row, : row + 1] = floats(" ".join(parts[1:]), where)
            row += 1
            if row == 3:
                return np.tril(alpha) + np.tril(alpha, -1).T
    if start + 12 > len(lines):
        raise truncated_error(where, "the polarizability tensor block ends early")
    raise layout_error(where, "the polarizability tensor block", start, f"{row} of 3 rows found")


def read_method(lines: Sequence[str]) -> str:
    """Method from the program's echo of ``$CONTRL OPTIONS`` (DFT functional, MPn or SCF type).

    Layout::

             $CONTRL OPTIONS
             ---------------
             SCFTYP=RHF          RUNTYP=RAMAN        EXETYP=RUN
             MPLEVL=       0     LOCAL =NONE         UNITS =ANGS
             ...
             DFTTYP=NONE
    """
    start = next((i for i, line in enumerate(lines) if "$CONTRL OPTIONS" in line), None)
    if start is None:
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
