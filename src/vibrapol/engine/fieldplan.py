"""The field route: ∂α/∂x from analytic nuclear gradients in a few uniform electric fields.

With E(x, F) = E(x, 0) − μ·F − ½ F·α·F − … (see :mod:`vibrapol.engine.fieldgrad`), the
Cartesian polarizability derivative is a third derivative of the energy,

    ∂α_ab/∂x = −∂³E/∂x ∂F_a ∂F_b = −∂²g_x/∂F_a ∂F_b,      g = ∂E/∂x,

so the second field derivatives of the analytic gradient give every ∂α/∂x at once
(A. Komornicki and J. W. McIver, J. Chem. Phys. 70, 2014 (1979)).  Along a unit direction n
the central difference

    q_n = [g(+F n) + g(−F n) − 2 g(0)] / F² = Σ_ab n_a n_b ∂²g/∂F_a∂F_b + O(F²)

(W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge (2007), §5.7) is one quadratic
form of the symmetric 3×3 tensor; six independent directions determine it (the usual
13-point stencil: 0, ±F along x, y, z and along the three face diagonals).

Symmetry cuts the number of fields.  Energy is invariant when geometry and field are turned
together, so at a geometry with point group G, g(R F) = D(R) g(F) for every operation R, with
D(R) moving atom i's vector to its partner π_R(i) and rotating it: (D(R)g)_π(i) = R g_i.  One
computed field gives the gradients in its whole orbit {R F}; :func:`field_plan` picks the
cheapest set of computed fields whose orbits contain ± pairs along six well-conditioned
directions, and :func:`dalpha_dx_from_gradients` solves the quadratic forms by least squares.
Besides the zero-field gradient (the reference calculation's, or one more task when that did
not compute it, :func:`with_zero_field_task`), benzene (D6h) needs 2 field gradients, CCl4
(Td) 1, water (C2v) 4, a C1 molecule 12.

Field strength (study: ``bench/field_strength.py``, HF/3-21G, max relative activity error
against the Cartesian route at h = 0.002 Å, field SCF orbital gradient 1e-9):

=========  =======  =======  =======  =======  =======  =======  =======
F (au)     1e-4     3e-4     1e-3     2e-3     3e-3     5e-3     1e-2
=========  =======  =======  =======  =======  =======  =======  =======
water C1   7.2e-3   7.9e-4   7.3e-5   3.1e-5   4.4e-5   1.0e-4   3.6e-4
CCl4 Td    2.6e-4   6.3e-5   6.8e-5   2.7e-4   6.1e-4   1.7e-3   6.7e-3
=========  =======  =======  =======  =======  =======  =======  =======

Below 1e-3 au the SCF noise divided by F² grows (with the displacement setting, orbital
gradient 1e-7, water at 3e-4 au is 10× worse); above it the O(F²) contamination from higher
field derivatives grows, faster for the more polarizable CCl4.  1e-3 au keeps both molecules
below 1e-4; the floor near 3e-5 is partly the Cartesian reference's own O(h²) error.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, replace

import numpy as np

from vibrapol.errors import ShapeError
from vibrapol.units import BOHR2_TO_ANG2

#: Default field strength (atomic units, hartree e⁻¹ bohr⁻¹); see the module notes.
DEFAULT_FIELD_AU = 0.001

#: Smallest singular value accepted for the matrix of quadratic forms (the plain 13-point
#: stencil has 0.29); a smaller one would amplify the finite-difference noise.
MIN_CONDITION = 0.2

_VEC_TOL = 1e-6


def _candidates() -> np.ndarray:
    """Axes, face diagonals and body diagonals of the symmetry frame (13 unit vectors)."""
    axes = list(np.eye(3))
    faces = [
        (np.eye(3)[i] + s * np.eye(3)[j]) / np.sqrt(2.0)
        for i, j in ((0, 1), (0, 2), (1, 2))
        for s in (1.0, -1.0)
    ]
    bodies = [np.array([1.0, s1, s2]) / np.sqrt(3.0) for s1 in (1, -1) for s2 in (1, -1)]
    return np.array(axes + faces + bodies)


def quadratic_row(n: np.ndarray) -> np.ndarray:
    """Coefficients of (T_xx, T_yy, T_zz, T_xy, T_xz, T_yz) in nᵀ T n."""
    x, y, z = n
    return np.array([x * x, y * y, z * z, 2 * x * y, 2 * x * z, 2 * y * z])


@dataclass(frozen=True, eq=False)
class FieldPlan:
    """The fields to compute and how their gradients rebuild ∂α/∂x.

    Attributes
    ----------
    field_au : float
        Field strength F.
    fields_au : ndarray (n_points, 3)
        Field vectors (input frame); point 0 is the zero field, whose gradient comes from the
        reference calculation (or from the first task, ``zero_field_task``), the others are
        the tasks.
    labels : tuple of str
        One per task.
    operations : ndarray (g, 3, 3)
        Symmetry operations used (just E for C1 or when symmetry is off).
    permutations : ndarray of int (g, N)
    pairs : ndarray of int (m, 4)
        For each direction used: (point, operation) of +F n, then of −F n.
    directions : ndarray (m, 3)
        The unit directions n.
    zero_field_task : bool
        True: the zero-field gradient is the first task (the reference stage did not compute
        it); False: it is the reference's.
    """

    field_au: float
    fields_au: np.ndarray
    labels: tuple[str, ...]
    operations: np.ndarray
    permutations: np.ndarray
    pairs: np.ndarray
    directions: np.ndarray
    zero_field_task: bool = False

    @property
    def n_tasks(self) -> int:
        """Number of field gradients to compute (with the zero-field one or not)."""
        return int(self.fields_au.shape[0]) - (0 if self.zero_field_task else 1)

    @property
    def task_fields_au(self) -> np.ndarray:
        """The field vector of each task, shape (n_tasks, 3)."""
        return self.fields_au if self.zero_field_task else self.fields_au[1:]


def _field_label(field_au: np.ndarray) -> str:
    return "F=(" + ", ".join(f"{c:+.4f}" for c in field_au) + ")"


def with_zero_field_task(plan: FieldPlan) -> FieldPlan:
    """``plan`` with the zero-field gradient as its first task (none from the reference)."""
    if plan.zero_field_task:
        return plan
    labels = (_field_label(plan.fields_au[0]), *plan.labels)
    return replace(plan, labels=labels, zero_field_task=True)


def _known(points: list[np.ndarray], ops: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Every field vector reachable from the points, with its (point, operation) origin."""
    vecs, origin = [], []
    for k, p in enumerate(points):
        for r, m in enumerate(ops):
            vecs.append(m @ p)
            origin.append((k, r))
    return np.array(vecs), np.array(origin)


def _find(vecs: np.ndarray, v: np.ndarray) -> int:
    d = np.max(np.abs(vecs - v[None, :]), axis=1)
    k = int(np.argmin(d))
    return k if d[k] < _VEC_TOL else -1


def _design(points: list[np.ndarray], ops: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Directions with both signs known, and their (point, op) pairs."""
    vecs, origin = _known(points, ops)
    dirs: list[np.ndarray] = []
    pairs: list[tuple[int, ...]] = []
    for i, v in enumerate(vecs):
        if np.linalg.norm(v) < _VEC_TOL:
            continue
        j = _find(vecs, -v)
        if j < 0:
            continue
        n = v / np.linalg.norm(v)
        if any(np.max(np.abs(n - d)) < _VEC_TOL or np.max(np.abs(n + d)) < _VEC_TOL for d in dirs):
            continue
        dirs.append(n)
        pairs.append((*origin[i], *origin[j]))
    return np.array(dirs).reshape(-1, 3), np.array(pairs, dtype=int).reshape(-1, 4)


def _sigma_min(dirs: np.ndarray) -> float:
    if len(dirs) < 6:
        return 0.0
    rows = np.array([quadratic_row(n) for n in dirs])
    return float(np.linalg.svd(rows, compute_uv=False)[-1] / np.sqrt(len(dirs) / 6.0))


def _points_for(subset: np.ndarray, ops: np.ndarray, field: float) -> list[np.ndarray]:
    points = [np.zeros(3)]
    for n in subset:
        for sign in (1.0, -1.0):
            vecs, _ = _known(points, ops)
            if _find(vecs, sign * field * n) < 0:
                points.append(sign * field * n)
    return points


def field_plan(
    field_au: float = DEFAULT_FIELD_AU,
    operations: np.ndarray | None = None,
    permutations: np.ndarray | None = None,
    axes: np.ndarray | None = None,
    n_atoms: int | None = None,
) -> FieldPlan:
    """The cheapest well-conditioned set of fields for the group given by ``operations``.

    Parameters
    ----------
    field_au : float
        Field strength F in atomic units, in (0, 0.05].
    operations, permutations : ndarray, optional
        The point group's Cartesian matrices (g, 3, 3) and atom permutations (g, N) at the
        (exactly symmetric) geometry; default: identity only (13 fields).
    axes : ndarray (3, 3), optional
        Rows: the symmetry frame's x, y, z in the input frame; candidate directions (axes, face
        and body diagonals) are taken in it.
    n_atoms : int, optional
        Needed when ``operations`` is not given.
    """
    f = float(field_au)
    if not 0.0 < f <= 0.05:
        raise ShapeError(f"field strength must be in (0, 0.05] au, got {field_au}")
    if operations is None:
        if n_atoms is None:
            raise ShapeError("give the operations and permutations, or n_atoms")
        operations, permutations = np.eye(3)[None], np.arange(n_atoms)[None]
    ops = np.asarray(operations, dtype=float)
    frame = np.eye(3) if axes is None else np.asarray(axes, dtype=float)
    cands = _candidates() @ frame
    best: tuple | None = None
    if len(ops) == 1:  # no symmetry: the six face diagonals, the best-conditioned 13 points
        points = _points_for(cands[3:9], ops, f)
        dirs, pairs = _design(points, ops)
        best = (len(points), _sigma_min(dirs), points, dirs, pairs)
    for size in range(1, 7 if best is None else 1):
        if best is not None and size > best[0] - 1:
            break
        for subset in itertools.combinations(range(len(cands)), size):
            points = _points_for(cands[list(subset)], ops, f)
            cost = len(points)
            if best is not None and cost > best[0]:
                continue
            dirs, pairs = _design(points, ops)
            sigma = _sigma_min(dirs)
            if sigma < MIN_CONDITION:
                continue
            if best is None or cost < best[0] or sigma > best[1] + 1e-9:
                best = (cost, sigma, points, dirs, pairs)
    assert best is not None  # the 13-point stencil always qualifies
    best_points = np.array(best[2])
    labels = tuple(_field_label(p) for p in best_points[1:])
    return FieldPlan(
        f, best_points, labels, ops, np.asarray(permutations, dtype=int), best[4], best[3]
    )


def transform_gradient(matrix: np.ndarray, perm: np.ndarray, grad: np.ndarray) -> np.ndarray:
    """D(R) g for a gradient (N, 3): atom i's vector, rotated, goes to atom π(i)."""
    out = np.empty_like(grad)
    out[perm] = grad @ matrix.T
    return out


def dalpha_dx_from_gradients(plan: FieldPlan, gradients: np.ndarray) -> np.ndarray:
    """∂α/∂x (3N, 3, 3) in Å² from the gradients of ``plan``'s points.

    ``gradients`` has shape (n_points, N, 3) in hartree/bohr: the zero-field gradient
    first, then one per task.
    """
    g = np.asarray(gradients, dtype=float)
    n = len(plan.fields_au)
    if g.ndim != 3 or g.shape[0] != n or g.shape[2] != 3:
        raise ShapeError(f"need gradients of shape ({n}, N, 3), got {g.shape}")
    n_atoms = g.shape[1]

    def known(k: int, r: int) -> np.ndarray:
        return transform_gradient(plan.operations[r], plan.permutations[r], g[k]).reshape(-1)

    g0 = g[0].reshape(-1)
    q = np.array(
        [(known(a, b) + known(c, d) - 2.0 * g0) / plan.field_au**2 for a, b, c, d in plan.pairs]
    )
    rows = np.array([quadratic_row(n) for n in plan.directions])
    comps, *_ = np.linalg.lstsq(rows, q, rcond=None)  # (6, 3N)
    t = np.empty((3 * n_atoms, 3, 3))
    for (a, b), row in zip(((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)), comps, strict=True):
        t[:, a, b] = t[:, b, a] = row
    return -t * BOHR2_TO_ANG2
