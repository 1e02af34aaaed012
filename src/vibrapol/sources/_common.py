"""Pieces shared by the program readers: printed-value checks, text scanning."""

from __future__ import annotations

import warnings
from collections.abc import Iterator

import numpy as np

from vibrapol.errors import InputFormatError, PrintedValueMismatch


def check_printed(
    quantity: str,
    computed: np.ndarray,
    printed: np.ndarray,
    *,
    where: str,
    atol: float,
    rtol: float = 0.0,
) -> bool:
    """Warn with :class:`PrintedValueMismatch` when computed and printed values disagree.

    ``atol``/``rtol`` should express the print precision of the program (half a unit of the
    last printed digit, plus the rounding of the inputs).  NaN entries on either side are
    skipped.  Returns True when they agree.
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
        warnings.warn(
            f"{where}: {quantity} computed from the derivatives disagrees with the printed "
            "value for "
            f"{int(bad.sum())} mode(s) (first: mode {i + 1}, {c[i]:.6g} vs printed {p[i]:.6g})",
            PrintedValueMismatch,
            stacklevel=2,
        )
        return False
    return True


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
