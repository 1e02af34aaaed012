"""Point groups of linear molecules (D∞h, C∞v) through their finite subgroups D2h and C2v.

The groups D∞h and C∞v are infinite, and the vibrations of a linear molecule only span Σ⁺ and
Π species (each atom's displacements along and across the axis).  The analysis uses the finite
subgroup D2h (or C2v) with z along the molecular axis, whose species correlate one to one with
those that occur: Σg⁺ ← Ag, Σu⁺ ← B1u, Πg ← B2g + B3g, Πu ← B2u + B3u, Σg⁻ ← B1g, Σu⁻ ← Au
(and for C∞v: Σ⁺ ← A1, Σ⁻ ← A2, Π ← B1 + B2) (G. Herzberg, *Molecular Spectra and Molecular
Structure II*, 1945, correlation of D∞h with D2h; common practice).  Δ species never occur
among the fundamentals.
"""

from __future__ import annotations

import numpy as np

from vibrapol.symmetry.group import PointGroup, match_atoms

# Characters of the D2h subgroup on E, C2(z), C2(y), C2(x), i, σ(xy), σ(xz), σ(yz) and of the C2v
# subgroup on E, C2(z), σ(xz), σ(yz) (standard tables), merged into the species of D∞h / C∞v.
_D2H_DIAG = [
    (1, 1, 1),
    (-1, -1, 1),
    (-1, 1, -1),
    (1, -1, -1),
    (-1, -1, -1),
    (1, 1, -1),
    (1, -1, 1),
    (-1, 1, 1),
]
_D2H_LABELS = ("E", "C2(z)", "C2(y)", "C2(x)", "i", "σ(xy)", "σ(xz)", "σ(yz)")
_DINFH = {
    "Σg⁺": (1, 1, 1, 1, 1, 1, 1, 1),
    "Σg⁻": (1, 1, -1, -1, 1, 1, -1, -1),
    "Πg": (2, -2, 0, 0, 2, -2, 0, 0),
    "Σu⁺": (1, 1, -1, -1, -1, -1, 1, 1),
    "Σu⁻": (1, 1, 1, 1, -1, -1, -1, -1),
    "Πu": (2, -2, 0, 0, -2, 2, 0, 0),
}
_C2V_PICK = (0, 1, 6, 7)
_CINFV = {"Σ⁺": (1, 1, 1, 1), "Σ⁻": (1, 1, -1, -1), "Π": (2, -2, 0, 0)}


def linear_axis(centred: np.ndarray, masses: np.ndarray) -> tuple[np.ndarray, float]:
    """Axis of the best line through the centre of mass, and the largest distance from it."""
    inertia = np.einsum("i,ij,ik->jk", masses, centred, centred)
    _, vecs = np.linalg.eigh(inertia)
    axis = vecs[:, -1]  # largest second moment = direction of the line
    off = centred - np.outer(centred @ axis, axis)
    return axis, float(np.max(np.linalg.norm(off, axis=1)))


def linear_group(
    centred: np.ndarray, species: np.ndarray, masses: np.ndarray, axis: np.ndarray, tolerance: float
) -> PointGroup | None:
    """D∞h or C∞v (as its subgroup) for a molecule already found to lie on ``axis``.

    Returns None when an operation of the subgroup fails the tolerance (not linear after all).
    """
    frame = _msym_free_frame(axis)
    mats = np.array([frame.T @ np.diag(d) @ frame for d in _D2H_DIAG])
    centro = match_atoms(-np.eye(3), centred, species, tolerance)[0] is not None
    picks = range(8) if centro else _C2V_PICK
    table = _DINFH if centro else _CINFV
    perms, worst = [], 0.0
    for k in picks:
        perm, dev = match_atoms(mats[k], centred, species, tolerance)
        if perm is None:
            return None
        perms.append(perm)
        worst = max(worst, dev)
    n = len(picks)
    return PointGroup(
        symbol="D∞h" if centro else "C∞v",
        operations=mats[list(picks)],
        permutations=np.array(perms),
        operation_classes=np.arange(n),
        class_labels=tuple(_D2H_LABELS[k] for k in picks),
        irreps=tuple(table),
        characters=np.array(list(table.values()), dtype=float),
        centre_ang=np.zeros(3),
        axes=frame,
        tolerance_ang=tolerance,
        max_deviation_ang=worst,
        convention="linear molecule: z along the molecular axis; operations of the "
        + ("D2h" if centro else "C2v")
        + " subgroup, species correlated to "
        + ("D∞h" if centro else "C∞v"),
        notes=(),
        linear=True,
    )


def _msym_free_frame(axis: np.ndarray) -> np.ndarray:
    z = axis / np.linalg.norm(axis)
    trial = np.eye(3)[int(np.argmin(np.abs(z)))]
    x = trial - (trial @ z) * z
    x /= np.linalg.norm(x)
    return np.array([x, np.cross(z, x), z])
