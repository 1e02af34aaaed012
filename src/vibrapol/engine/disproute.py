"""The displacement route: Hessian, ∂α/∂x and ∂μ/∂x from one set of displaced-geometry tasks.

Each task computes, at one displaced geometry, the SCF, the analytic nuclear gradient, the
total dipole and the CPHF polarizability (:class:`GradientDipoleAlphaJob`).  From the same
tasks:

* the Hessian by central differences of the gradients,
  H_ij = [g_j(x + h e_i) − g_j(x − h e_i)] / (2h) + O(h²)
  (W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge (2007), §5.7), made symmetric
  as H ← (H + Hᵀ)/2 (the two halves differ by the finite-difference and SCF noise only);
* ∂α/∂x and ∂μ/∂x by central differences of α and μ, as on the Cartesian route
  (:mod:`vibrapol.engine.displacements`, :mod:`vibrapol.engine.dipole`).

No analytic Hessian is computed, so nothing runs serially after the reference SCF: with W
workers the tasks take ceil(n_tasks / W) task times.

With symmetry the geometries are those of the reduced Cartesian plan
(:mod:`vibrapol.engine.symdisplace`).  The gradient is a polar vector on every atom: at the
image D(R)x of a geometry x, g(D(R)x) = D(R) g(x), with (D(R) g)_{π_R(i)} = R g_i; so the
gradient difference G along d at atom a gives the one along R d at atom π_R(a) as D(R) G (the
operation acts on both indices of the Hessian: on the displaced atom and direction through
R d and π_R(a), on the gradient through D(R)).  Each atom's 3 rows of H are then a
least-squares solve over the images landing on it, as each atom's block of ∂α/∂x is.  The
gradient does not depend on the origin, so the centre of the operations does not enter.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from vibrapol.engine.displacements import DisplacementPlan
from vibrapol.engine.fieldplan import transform_gradient
from vibrapol.engine.scf import MethodSpec
from vibrapol.engine.symdisplace import SymmetricPlan
from vibrapol.errors import ShapeError
from vibrapol.units import BOHR3_TO_ANG3, BOHR_ANG

#: How the route's Hessian is made (recorded in the provenance).
HESSIAN_NOTE = (
    "Hessian by central differences of analytic gradients at the displaced geometries "
    "(displacement route), symmetrized as H = (H + H^T)/2"
)


@dataclass(frozen=True, eq=False)
class DisplacementRoutePlan:
    """The displaced geometries of the displacement route.

    Attributes
    ----------
    geometries : DisplacementPlan or SymmetricPlan
        The Cartesian plan (all 6N geometries, or the symmetry-reduced ones).
    """

    geometries: DisplacementPlan | SymmetricPlan

    route: ClassVar[str] = "displacement"

    @property
    def n_tasks(self) -> int:
        """Number of displaced geometries to compute."""
        return self.geometries.n_tasks

    @property
    def coordinates_ang(self) -> np.ndarray:
        """Geometry of each task, shape (n_tasks, N, 3)."""
        return self.geometries.coordinates_ang

    @property
    def labels(self) -> tuple[str, ...]:
        """A readable name per task."""
        return self.geometries.labels

    @property
    def step_ang(self) -> float:
        """The displacement h in Å."""
        return self.geometries.step_ang


@dataclass(frozen=True, eq=False)
class GradientDipoleAlphaJob:
    """SCF, analytic gradient, total dipole and CPHF α at one displaced geometry.

    The result is one (N + 4, 3) array: α in Å³ (rows 0–2), the dipole in e·Å (row 3) and the
    gradient in hartree/bohr (rows 4 …), so that it is stored and checkpointed like every
    other task result.

    Attributes
    ----------
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
    spec : MethodSpec
    dm0 : ndarray (nao, nao), optional
        Starting density (the reference geometry's).
    threads : int, optional
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    dm0: np.ndarray | None = None
    threads: int | None = None

    kind: ClassVar[str] = "gradient-dipole-alpha"
    result_name: ClassVar[str] = "alpha_ang3_dipole_e_ang_gradient_hartree_bohr"

    def result_shape(self) -> tuple[int, ...]:
        """Shape of the result array."""
        return (len(self.atomic_numbers) + 4, 3)

    def run(self) -> np.ndarray:
        """α (Å³), μ (e·Å) and the gradient (hartree/bohr) stacked, shape (N + 4, 3)."""
        from vibrapol.engine.evaluate import threads_limited
        from vibrapol.engine.polarizability import cphf_polarizability
        from vibrapol.engine.scf import build_molecule, run_scf

        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = run_scf(mol, self.spec, dm0=self.dm0, where="displaced geometry")
            grad = mf.nuc_grad_method()
            grad.verbose = 0
            if hasattr(grad, "grid_response"):  # DFT: the energy's own derivative
                grad.grid_response = True
            gradient = np.asarray(grad.kernel())
            dipole = mf.dip_moment(unit="AU", origin=(0.0, 0.0, 0.0), verbose=0) * BOHR_ANG
            alpha = cphf_polarizability(mf) * BOHR3_TO_ANG3
            return np.vstack([alpha, dipole[None, :], gradient])


def split_results(results: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """α (n, 3, 3) in Å³, μ (n, 3) in e·Å and gradients (n, N, 3) in hartree/bohr."""
    stacked = np.asarray(results, dtype=float)
    return stacked[:, :3], stacked[:, 3], stacked[:, 4:]


def hessian_from_gradients(
    plan: DisplacementRoutePlan, gradients_hartree_bohr: np.ndarray
) -> tuple[np.ndarray, float]:
    """The symmetrized Hessian (3N, 3N) in hartree/bohr² and its largest asymmetry.

    Parameters
    ----------
    plan : DisplacementRoutePlan
    gradients_hartree_bohr : ndarray (n_tasks, N, 3)
        The gradient at each task's geometry, in the order of the plan.

    Returns
    -------
    hessian : ndarray (3N, 3N)
        (H + Hᵀ)/2 of the central differences.
    asymmetry : float
        max |H − Hᵀ| / 2 before symmetrizing, hartree/bohr² (a measure of the noise).
    """
    g = np.asarray(gradients_hartree_bohr, dtype=float)
    geo = plan.geometries
    n_atoms = geo.coordinates_ang.shape[1]
    if g.shape != (geo.n_tasks, n_atoms, 3):
        raise ShapeError(f"need gradients of shape ({geo.n_tasks}, {n_atoms}, 3), got {g.shape}")
    step_bohr = geo.step_ang / BOHR_ANG
    if isinstance(geo, SymmetricPlan):
        raw = _rebuild_hessian(geo, g, step_bohr)
    else:
        pairs = g.reshape(-1, 2, 3 * n_atoms)
        raw = (pairs[:, 0] - pairs[:, 1]) / (2.0 * step_bohr)
    asymmetry = float(np.max(np.abs(raw - raw.T)) / 2.0)
    return 0.5 * (raw + raw.T), asymmetry


def _rebuild_hessian(plan: SymmetricPlan, g: np.ndarray, step_bohr: float) -> np.ndarray:
    """Rows of H for every atom from the symmetry-unique gradient differences (module notes)."""
    ops, perms = plan.operations, plan.permutations
    n_atoms = perms.shape[1]

    def image(task: int, r: int) -> np.ndarray:
        return transform_gradient(ops[r], perms[r], g[task])

    rows: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    values: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    for atom, d, (tp, rp), (tm, rm) in zip(
        plan.atoms, plan.directions, plan.plus, plan.minus, strict=True
    ):
        deriv = (image(tp, rp) - image(tm, rm)) / (2.0 * step_bohr)  # (N, 3) along d at atom
        for r in range(len(ops)):
            rows[perms[r, atom]].append(ops[r] @ d)
            values[perms[r, atom]].append(transform_gradient(ops[r], perms[r], deriv).reshape(-1))
    out = np.empty((n_atoms, 3, 3 * n_atoms))
    for b in range(n_atoms):
        out[b], *_ = np.linalg.lstsq(np.array(rows[b]), np.array(values[b]), rcond=None)
    return out.reshape(3 * n_atoms, 3 * n_atoms)
