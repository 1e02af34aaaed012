"""Symmetry-reduced Cartesian displacements and the rebuild of the full ∂α/∂x.

At a geometry x₀ with point group G, moving atom a by h along d and then applying an
operation R gives the geometry in which atom π_R(a) is moved by h along R d, and
α(D(R)(x₀ + h d_a)) = R α(x₀ + h d_a) Rᵀ.  So the central difference A = [α(+) − α(−)]/(2h)
along d at atom a gives, for every R, the derivative along R d at atom π_R(a) as R A Rᵀ
(the transformation of a second-rank tensor; e.g. J. F. Nye, *Physical Properties of
Crystals*, Oxford (1985), ch. 1).  Only one atom of each set of equivalent atoms is displaced,
along directions whose images under the atom's site group span space; when an operation of the
site group turns d into −d, the −h geometry is an image of the +h one and is not computed.
Every atom's 3 × (3 × 3) block is then a least-squares solve over the images landing on it.

CCl4 (Td) needs 3 displaced geometries instead of 30, benzene (D6h) 8 instead of 72; a C1
molecule keeps all 6N.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from vibrapol.engine.displacements import check_step
from vibrapol.errors import ShapeError

_VEC_TOL = 1e-6
#: Smallest singular value accepted for the stacked image directions of one atom.
MIN_CONDITION = 0.3


@dataclass(frozen=True, eq=False)
class SymmetricPlan:
    """Displaced geometries of the symmetry-reduced Cartesian route.

    Attributes
    ----------
    step_ang : float
    coordinates_ang : ndarray (n_tasks, N, 3)
    labels : tuple of str
    atoms : ndarray of int (n_pairs,)
        Displaced atom of each central difference.
    directions : ndarray (n_pairs, 3)
        Unit direction of each central difference.
    plus, minus : ndarray of int (n_pairs, 2)
        (task, operation) giving α at +h and at −h: the task's α turned by the operation.
    operations : ndarray (g, 3, 3)
    permutations : ndarray of int (g, N)
    centre_ang : ndarray (3,)
        The point the operations leave fixed.
    """

    step_ang: float
    coordinates_ang: np.ndarray
    labels: tuple[str, ...]
    atoms: np.ndarray
    directions: np.ndarray
    plus: np.ndarray
    minus: np.ndarray
    operations: np.ndarray
    permutations: np.ndarray
    centre_ang: np.ndarray = field(default_factory=lambda: np.zeros(3))

    route = "cartesian"

    @property
    def n_tasks(self) -> int:
        """Number of displaced geometries to compute."""
        return int(self.coordinates_ang.shape[0])


def _flipper(d: np.ndarray, site_ops: list[int], ops: np.ndarray) -> int:
    """An operation of the site group that turns d into −d, or −1."""
    for r in site_ops:
        if np.max(np.abs(ops[r] @ d + d)) < _VEC_TOL:
            return r
    return -1


def _site_choice(
    atom: int, centred: np.ndarray, ops: np.ndarray, perms: np.ndarray, frame: np.ndarray
) -> list[tuple[np.ndarray, int]]:
    """Cheapest directions for one atom: [(direction, flipping operation or −1)]."""
    site_ops = [r for r in range(len(ops)) if perms[r, atom] == atom]
    cands = list(frame)
    radial = centred[atom]
    if np.linalg.norm(radial) > 1e-3:
        cands.append(radial / np.linalg.norm(radial))
    best: tuple | None = None
    for size in (1, 2, 3):
        for subset in itertools.combinations(range(len(cands)), size):
            dirs = [cands[k] for k in subset]
            flips = [_flipper(d, site_ops, ops) for d in dirs]
            cost = sum(1 if f >= 0 else 2 for f in flips)
            images = np.array([ops[r] @ d for d in dirs for r in site_ops])
            # The smallest of the three singular values of the 3-column image matrix, from the
            # 3 × 3 Gram matrix: with fewer than three images an SVD of ``images`` itself
            # returns fewer than three values and would hide a missing direction.
            gram = images.T @ images
            sigma = np.sqrt(max(np.linalg.eigvalsh(gram)[0], 0.0) / (len(images) / 3.0))
            if sigma < MIN_CONDITION:
                continue
            if best is None or cost < best[0] or (cost == best[0] and sigma > best[1] + 1e-9):
                best = (cost, sigma, list(zip(dirs, flips, strict=True)))
        if best is not None and best[0] <= size + 1:
            break
    assert best is not None  # the three frame axes always qualify
    return best[2]


def symmetric_cartesian_plan(
    coordinates_ang: np.ndarray,
    step_ang: float,
    operations: np.ndarray,
    permutations: np.ndarray,
    centre_ang: np.ndarray,
    axes: np.ndarray | None = None,
) -> SymmetricPlan:
    """Displacements of one atom per equivalence class along its site's needed directions.

    Parameters
    ----------
    coordinates_ang : ndarray (N, 3)
        An exactly symmetric geometry (see
        :func:`~vibrapol.symmetry.symmetrize_coordinates`).
    step_ang : float
    operations, permutations : ndarray
        The point group's matrices (g, 3, 3) about ``centre_ang`` and atom permutations (g, N).
    centre_ang : ndarray (3,)
    axes : ndarray (3, 3), optional
        Rows: the symmetry frame; candidate directions are its axes and the atom's radial
        direction.  With only the identity, this is the full 6N plan.
    """
    x0 = np.asarray(coordinates_ang, dtype=float)
    step = check_step(step_ang)
    ops = np.asarray(operations, dtype=float)
    perms = np.asarray(permutations, dtype=int)
    frame = np.eye(3) if axes is None else np.asarray(axes, dtype=float)
    centred = x0 - np.asarray(centre_ang, dtype=float)
    identity = int(np.argmin([np.abs(m - np.eye(3)).max() for m in ops]))
    seen = np.zeros(x0.shape[0], dtype=bool)
    coords: list[np.ndarray] = []
    labels: list[str] = []
    atoms: list[int] = []
    dirs: list[np.ndarray] = []
    plus: list[tuple[int, int]] = []
    minus: list[tuple[int, int]] = []
    for a in range(x0.shape[0]):
        if seen[a]:
            continue
        seen[np.unique(perms[:, a])] = True
        for d, flip in _site_choice(a, centred, ops, perms, frame):
            atoms.append(a)
            dirs.append(d)
            name = "(" + ",".join(f"{c:+.3f}" for c in d) + ")"
            for sign, mark in ((1.0, "+"), (-1.0, "-")):
                if sign < 0 and flip >= 0:
                    minus.append((len(coords) - 1, flip))
                    continue
                x = x0.copy()
                x[a] += sign * step * d
                (plus if sign > 0 else minus).append((len(coords), identity))
                coords.append(x)
                labels.append(f"atom{a + 1}{name}{mark}")
    return SymmetricPlan(
        step,
        np.array(coords),
        tuple(labels),
        np.array(atoms, dtype=int),
        np.array(dirs),
        np.array(plus, dtype=int),
        np.array(minus, dtype=int),
        ops,
        perms,
        np.asarray(centre_ang, dtype=float),
    )


def rebuild_dalpha_dx(plan: SymmetricPlan, alphas_ang3: np.ndarray) -> np.ndarray:
    """The full ∂α/∂x (3N, 3, 3) in Å² from the α (n_tasks, 3, 3) of ``plan``'s tasks."""
    a = np.asarray(alphas_ang3, dtype=float)
    if a.shape != (plan.n_tasks, 3, 3):
        raise ShapeError(f"need α of shape ({plan.n_tasks}, 3, 3), got {a.shape}")
    ops, perms = plan.operations, plan.permutations
    n_atoms = perms.shape[1]

    def turned(task: int, r: int) -> np.ndarray:
        return ops[r] @ a[task] @ ops[r].T

    rows: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    values: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    for atom, d, (tp, rp), (tm, rm) in zip(
        plan.atoms, plan.directions, plan.plus, plan.minus, strict=True
    ):
        deriv = (turned(tp, rp) - turned(tm, rm)) / (2.0 * plan.step_ang)
        for r in range(len(ops)):
            rows[perms[r, atom]].append(ops[r] @ d)
            values[perms[r, atom]].append((ops[r] @ deriv @ ops[r].T).reshape(9))
    out = np.empty((n_atoms, 3, 9))
    for b in range(n_atoms):
        solution, *_ = np.linalg.lstsq(np.array(rows[b]), np.array(values[b]), rcond=None)
        out[b] = solution
    return out.reshape(3 * n_atoms, 3, 3)
