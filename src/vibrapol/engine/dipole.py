"""Dipole derivatives (the atomic polar tensor) and IR intensities from the engine's tasks.

∂μ/∂x comes from the same tasks as ∂α/∂x:

* **field route**: with E(x, F) = E(x, 0) − μ·F − ½ F·α·F − … (see
  :mod:`vibrapol.engine.fieldgrad`), ∂²E/∂F_a∂x = −∂μ_a/∂x, so the first central difference
  of the gradients along a field direction n,
  [g(+F n) − g(−F n)]/(2F) = −Σ_a n_a ∂μ_a/∂x + O(F²),
  gives it from the gradients the field plan already computes; the directions of the plan span
  space, and a least-squares solve over them gives the three components.  Gradients in
  hartree/bohr over a field in hartree e⁻¹ bohr⁻¹ give ∂μ/∂x in e (atomic units).
* **displacement routes**: central differences of the total dipole (electrons and nuclei,
  PySCF's ``dip_moment(unit="AU")``) at the displaced geometries, in e·Å per Å = e.  With
  symmetry, the derivative along d at atom a gives the one along R d at atom π_R(a) as R ∂μ
  (the transformation of a polar vector), as for α in :mod:`vibrapol.engine.symdisplace`.

Origin: both routes use the fixed origin of the coordinate frame.  For a neutral molecule the
dipole does not depend on the origin.  For an ion, μ changes with the origin by −q·o; a fixed
origin drops out of every derivative, and the normal modes keep the centre of mass fixed, so
the intensities are those about the centre of mass (common practice); ∂μ/∂x itself then
contains the translation term q per atom (Σ_A ∂μ/∂R_A = q·1).

IR intensity of mode k in the double-harmonic approximation (E. B. Wilson, J. C. Decius and
P. C. Cross, *Molecular Vibrations*, McGraw-Hill (1955), ch. 7; quoted from memory):

    A_k = N_A π / (3 c²) · |∂μ/∂Q_k|²     (Gaussian units),

which is 42.2561 km mol⁻¹ per D² Å⁻² amu⁻¹ (the constant is
:data:`vibrapol.units.DEBYE2_PER_AMU_ANG2_TO_KM_MOL`, computed there from CODATA).
∂μ/∂Q_k = Σ_i L_ki m_i⁻¹ᐟ² ∂μ/∂x_i in e Da⁻¹ᐟ² is turned into D Å⁻¹ Da⁻¹ᐟ² with
1 e = 1 e·Å/Å = :data:`E_ANG_TO_DEBYE` D/Å.
"""

from __future__ import annotations

import numpy as np
from scipy import constants as _c

from vibrapol.engine.displacements import DisplacementPlan
from vibrapol.engine.fieldplan import FieldPlan, transform_gradient
from vibrapol.engine.symdisplace import SymmetricPlan
from vibrapol.errors import ShapeError
from vibrapol.units import DEBYE2_PER_AMU_ANG2_TO_KM_MOL, DEBYE_C_M

#: 1 e·Å in debye (≈ 4.80320).
E_ANG_TO_DEBYE: float = _c.e * 1e-10 / DEBYE_C_M


def dmu_dx_from_gradients(plan: FieldPlan, gradients: np.ndarray) -> np.ndarray:
    """∂μ/∂x (3N, 3) in e from the field gradients of ``plan``.

    ``gradients`` has shape (n_points, N, 3) in hartree/bohr, the zero-field one first (it
    is not needed for the first derivative).
    """
    g = np.asarray(gradients, dtype=float)
    n = len(plan.fields_au)
    if g.ndim != 3 or g.shape[0] != n or g.shape[2] != 3:
        raise ShapeError(f"need gradients of shape ({n}, N, 3), got {g.shape}")

    def known(k: int, r: int) -> np.ndarray:
        return transform_gradient(plan.operations[r], plan.permutations[r], g[k]).reshape(-1)

    first = np.array(
        [(known(a, b) - known(c, d)) / (2.0 * plan.field_au) for a, b, c, d in plan.pairs]
    )  # (m, 3N): Σ_a n_a ∂g/∂F_a
    comps, *_ = np.linalg.lstsq(plan.directions, first, rcond=None)  # (3, 3N)
    return -comps.T


def dmu_from_displacements(plan: DisplacementPlan, dipoles_e_ang: np.ndarray) -> np.ndarray:
    """Central differences of the dipoles (n_tasks, 3), e·Å, of a displacement plan.

    Returns ∂μ/∂x (3N, 3) in e (Cartesian route) or ∂μ/∂Q (n_modes, 3) in e Da⁻¹ᐟ²
    (normal-mode route).
    """
    mu = np.asarray(dipoles_e_ang, dtype=float)
    if mu.shape != (plan.n_tasks, 3):
        raise ShapeError(f"need dipoles of shape ({plan.n_tasks}, 3), got {mu.shape}")
    pairs = mu.reshape(-1, 2, 3)
    return (pairs[:, 0] - pairs[:, 1]) / (2.0 * plan.step_ang) * plan.scale[:, None]


def rebuild_dmu_dx(plan: SymmetricPlan, dipoles_e_ang: np.ndarray, charge: int = 0) -> np.ndarray:
    """The full ∂μ/∂x (3N, 3) in e from the dipoles (n_tasks, 3), e·Å, of ``plan``'s tasks.

    The dipoles are about the frame origin.  For an ion (``charge`` q ≠ 0) they are first moved
    to the centre c of the operations, μ_c = μ − q c: only about a point that every operation
    leaves fixed is μ(R x) = R μ(x); about another point the images differ by q (1 − R) c,
    which the ±h difference of two differently turned tasks would not cancel.
    """
    mu = np.asarray(dipoles_e_ang, dtype=float)
    if mu.shape != (plan.n_tasks, 3):
        raise ShapeError(f"need dipoles of shape ({plan.n_tasks}, 3), got {mu.shape}")
    mu = mu - float(charge) * np.asarray(plan.centre_ang, dtype=float)[None, :]
    ops, perms = plan.operations, plan.permutations
    n_atoms = perms.shape[1]
    rows: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    values: list[list[np.ndarray]] = [[] for _ in range(n_atoms)]
    for atom, d, (tp, rp), (tm, rm) in zip(
        plan.atoms, plan.directions, plan.plus, plan.minus, strict=True
    ):
        deriv = (ops[rp] @ mu[tp] - ops[rm] @ mu[tm]) / (2.0 * plan.step_ang)
        for r in range(len(ops)):
            rows[perms[r, atom]].append(ops[r] @ d)
            values[perms[r, atom]].append(ops[r] @ deriv)
    out = np.empty((n_atoms, 3, 3))
    for b in range(n_atoms):
        out[b], *_ = np.linalg.lstsq(np.array(rows[b]), np.array(values[b]), rcond=None)
    return out.reshape(3 * n_atoms, 3)


def project_dmu(dmu_dx: np.ndarray, modes: np.ndarray, masses_da: np.ndarray) -> np.ndarray:
    """∂μ/∂Q_k = Σ_i L_ki m_i⁻¹ᐟ² ∂μ/∂x_i, shape (n_modes, 3), e Da⁻¹ᐟ²."""
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(np.asarray(masses_da, dtype=float)), 3)
    return np.einsum("ki,i,ia->ka", np.asarray(modes), inv_sqrt_m, np.asarray(dmu_dx))


def ir_intensities_km_mol(dmu_dq_e: np.ndarray) -> np.ndarray:
    """IR intensities (km mol⁻¹) from ∂μ/∂Q (n_modes, 3) in e Da⁻¹ᐟ² (see the module notes)."""
    d = np.asarray(dmu_dq_e, dtype=float) * E_ANG_TO_DEBYE
    return DEBYE2_PER_AMU_ANG2_TO_KM_MOL * np.sum(d * d, axis=1)
