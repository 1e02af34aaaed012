"""CPHF/CPKS static polarizability against finite field, and the displacement plans."""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.engine.displacements import cartesian_plan, central_differences, normal_mode_plan
from vibrapol.engine.polarizability import cphf_polarizability, finite_field_polarizability
from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf
from vibrapol.errors import ShapeError

# Water distorted to C1 so that every tensor component is independent (no symmetry zeros).
WATER_Z = np.array([8, 1, 1])
WATER_C1_ANG = np.array([[0.03, 0.01, 0.1173], [0.0, 0.7772, -0.4192], [-0.04, -0.7572, -0.4692]])


@pytest.mark.parametrize("method", ["hf", "b3lyp"])
def test_cphf_matches_finite_field(method):
    # Reference: central difference of the SCF dipole moment with a field of ±0.001 a.u. added
    # to the core Hamiltonian; CPHF must agree to 4 significant digits (the finite-field value
    # carries an O(F²) truncation error of ~1e-6 relative).
    spec = MethodSpec(method, "6-31g")
    mf = run_scf(build_molecule(WATER_Z, WATER_C1_ANG, spec), spec)
    alpha_cphf = cphf_polarizability(mf)
    alpha_ff = finite_field_polarizability(mf, field_au=1e-3)
    scale = np.abs(alpha_ff).max()
    assert np.abs(alpha_cphf - alpha_ff).max() < 5e-5 * scale
    # Rotation invariants as well (cclib-style check): isotropic mean and eigenvalues.
    np.testing.assert_allclose(
        np.linalg.eigvalsh(alpha_cphf), np.linalg.eigvalsh(alpha_ff), rtol=5e-5
    )
    # Physical sanity: α is positive definite and symmetric.
    assert np.all(np.linalg.eigvalsh(alpha_cphf) > 0)
    np.testing.assert_allclose(alpha_cphf, alpha_cphf.T, atol=1e-12)


def test_polarizability_is_rotation_covariant():
    # α transforms as a rank-2 tensor: α(R·x) = R α(x) Rᵀ (a property of the physics, not of
    # the code); checks the dipole-integral origin and index order.
    spec = MethodSpec("hf", "sto-3g")
    angle = 0.7
    rot = np.array(
        [[np.cos(angle), -np.sin(angle), 0], [np.sin(angle), np.cos(angle), 0], [0, 0, 1]]
    )
    rot = rot @ np.array([[1, 0, 0], [0, np.cos(0.4), -np.sin(0.4)], [0, np.sin(0.4), np.cos(0.4)]])
    a1 = cphf_polarizability(run_scf(build_molecule(WATER_Z, WATER_C1_ANG, spec), spec))
    a2 = cphf_polarizability(run_scf(build_molecule(WATER_Z, WATER_C1_ANG @ rot.T, spec), spec))
    np.testing.assert_allclose(a2, rot @ a1 @ rot.T, atol=1e-6)


def test_central_differences_of_a_quadratic_are_exact():
    # Analytic case: α(x) = A + Σ_i B_i x_i + C x_1² (a made-up field). Central differences
    # remove the even terms, so ∂α/∂x_i = B_i (+ 2C x_1 for i = 1) exactly, at any step.
    rng = np.random.default_rng(5)
    x0 = rng.normal(size=(2, 3))
    b = rng.normal(size=(6, 3, 3))
    c = rng.normal(size=(3, 3))
    plan = cartesian_plan(x0, 0.01)

    def alpha(x):
        flat = x.reshape(-1)
        return np.einsum("i,iab->ab", flat, b) + c * flat[0] ** 2

    deriv = central_differences(plan, np.array([alpha(x) for x in plan.coordinates_ang]))
    expected = b.copy()
    expected[0] += 2 * c * x0.reshape(-1)[0]
    np.testing.assert_allclose(deriv, expected, atol=1e-10)


def test_normal_mode_plan_steps_have_the_requested_length():
    # Each displaced geometry is h (Cartesian length, Å) away from the reference, along L_k/√m.
    rng = np.random.default_rng(1)
    x0 = rng.normal(size=(3, 3))
    q, _ = np.linalg.qr(rng.normal(size=(9, 3)))
    plan = normal_mode_plan(x0, q.T, np.array([16.0, 1.0, 1.0]), 0.005)
    lengths = np.linalg.norm((plan.coordinates_ang - x0).reshape(plan.n_tasks, -1), axis=1)
    np.testing.assert_allclose(lengths, 0.005, rtol=1e-12)
    assert plan.labels[:2] == ("q1+", "q1-")


def test_bad_step_is_refused():
    with pytest.raises(ShapeError, match="step"):
        cartesian_plan(np.zeros((2, 3)), 0.0)
