"""Thin adapter over the ``pymsym`` binding of libmsym (point-group detection only).

Everything the rest of :mod:`vibrapol.symmetry` needs from the library passes through
:func:`detect`, which returns plain arrays: the Schoenflies symbol, the symmetry operations as
3×3 matrices, the conjugacy class of each operation and the library's character table.
Nothing else of the library leaks out, so it can be replaced without touching the callers.

libmsym's thresholds are dimensionless numbers that it compares with quantities of its own (not
distances in Å).  Trials on rotated copies of 17 test molecules with ±0.001 Å noise showed:
the defaults (1e-3, equivalence 5e-4) miss the symmetry of most noisy copies; ``zero``,
``geometry``, ``angle`` and ``equivalence`` near 0.01–0.02 with ``permutation`` five times
larger find it for all; 0.05 breaks the icosahedral B12H12²⁻ and, on other molecules, accepts
operations that move atoms by several hundredths of an Å.  :data:`THRESHOLD_LADDER` therefore
tries a few settings and the caller keeps only operations that pass its own check in Å.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pymsym
from ase.data import chemical_symbols

#: Scale factors tried in turn; each gives zero = geometry = angle = equivalence = f·s and
#: permutation = 5·f·s, where s = tolerance_ang / 0.01 Å (so the default tolerance gives
#: 0.01, 0.02, 0.005, 0.04).
THRESHOLD_LADDER = (0.01, 0.02, 0.005, 0.04)

#: Below these, libmsym's own checks become stricter than double-precision geometry noise.
MIN_THRESHOLD = 1e-4

_IDENTITY, _ROTATION, _IMPROPER, _REFLECTION, _INVERSION = 0, 1, 2, 3, 4


@dataclass(frozen=True, eq=False)
class MsymGroup:
    """What libmsym found for one threshold setting.

    Attributes
    ----------
    symbol : str
        Schoenflies symbol as libmsym spells it ('C2v', 'D6h', 'D0h' for D∞h, ...).
    matrices : ndarray (g, 3, 3)
        Cartesian matrix of each operation, acting on positions relative to the centre of mass.
    op_class : ndarray of int (g,)
        Column of the character table (conjugacy class) of each operation.
    op_names : tuple of str (g,)
        libmsym's name of each operation ('C3', 'σv', "C2'", 'i', ...).
    irrep_names : tuple of str
        libmsym's names of the symmetry species, in the row order of ``characters``.
    characters : ndarray (n_irreps, n_classes)
        Real characters (libmsym pairs complex-conjugate species into real ones).
    thresholds : dict
        The threshold setting that produced this result.
    """

    symbol: str
    matrices: np.ndarray
    op_class: np.ndarray
    op_names: tuple[str, ...]
    irrep_names: tuple[str, ...]
    characters: np.ndarray
    thresholds: dict


def rotation_matrix(axis: np.ndarray, angle_rad: float) -> np.ndarray:
    """Proper rotation by ``angle_rad`` about ``axis`` (right hand), Rodrigues' formula."""
    u = np.asarray(axis, dtype=float)
    u = u / np.linalg.norm(u)
    k = np.array([[0.0, -u[2], u[1]], [u[2], 0.0, -u[0]], [-u[1], u[0], 0.0]])
    return np.eye(3) + np.sin(angle_rad) * k + (1.0 - np.cos(angle_rad)) * (k @ k)


def reflection_matrix(normal: np.ndarray) -> np.ndarray:
    """Reflection through the plane with the given normal: 1 − 2nnᵀ."""
    n = np.asarray(normal, dtype=float)
    n = n / np.linalg.norm(n)
    return np.eye(3) - 2.0 * np.outer(n, n)


def _matrix(op: pymsym.SymmetryOperation) -> np.ndarray:
    v = np.array(op.vector, dtype=float)
    if op.type == _IDENTITY:
        return np.eye(3)
    if op.type == _INVERSION:
        return -np.eye(3)
    if op.type == _REFLECTION:
        return reflection_matrix(v)
    rot = rotation_matrix(v, 2.0 * np.pi * op.power / op.order)
    return rot if op.type == _ROTATION else reflection_matrix(v) @ rot


_SUPERSCRIPT = str.maketrans("0123456789", "⁰¹²³⁴⁵⁶⁷⁸⁹")


def _name(op: pymsym.SymmetryOperation) -> str:
    if op.type == _IDENTITY:
        return "E"
    if op.type == _INVERSION:
        return "i"
    if op.type == _REFLECTION:
        return "σ" + ("", "h", "v", "d")[op.orientation]
    power = "" if op.power == 1 else str(op.power).translate(_SUPERSCRIPT)
    letter = "C" if op.type == _ROTATION else "S"
    primes = ("", "", "'", "''")[op.orientation] if op.type == _ROTATION and op.order == 2 else ""
    return f"{letter}{op.order}{primes}{power}"


def thresholds_for(tolerance_ang: float) -> list[dict]:
    """Library threshold settings to try for a user tolerance in Å (see module notes)."""
    scale = tolerance_ang / 0.01
    out = []
    for f in THRESHOLD_LADDER:
        t = max(f * scale, MIN_THRESHOLD)
        out.append({"zero": t, "geometry": t, "angle": t, "equivalence": t, "permutation": 5 * t})
    return out


def detect(
    atomic_numbers: np.ndarray, centred_ang: np.ndarray, masses_da: np.ndarray, thresholds: dict
) -> MsymGroup:
    """Run libmsym once on centred coordinates.

    Raises
    ------
    pymsym.Error
        When libmsym fails for this setting (the caller tries the next one).
    """
    elements = [
        pymsym.Element(name=chemical_symbols[int(z)], coordinates=[float(c) for c in xyz])
        for z, xyz in zip(atomic_numbers, centred_ang, strict=True)
    ]
    for element, mass in zip(elements, masses_da, strict=True):
        element.mass = float(mass)
    with pymsym.Context(elements=elements) as ctx:
        ctx.set_thresholds(**thresholds)
        symbol = ctx.find_symmetry()
        ops = ctx.symmetry_operations
        table = ctx.character_table
        column = {rep.conjugacy_class: j for j, rep in enumerate(table.symmetry_operations)}
        return MsymGroup(
            symbol=symbol,
            matrices=np.array([_matrix(op) for op in ops]),
            op_class=np.array([column[op.conjugacy_class] for op in ops], dtype=int),
            op_names=tuple(_name(op) for op in ops),
            irrep_names=tuple(s.name for s in table.symmetry_species),
            characters=np.array(table.table, dtype=float, copy=True),
            thresholds=dict(thresholds),
        )
