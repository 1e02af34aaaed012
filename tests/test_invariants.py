"""Invariants, depolarization ratios and orientation averages.

Sources: D. A. Long, The Raman Effect, Wiley (2002), ch. 5 (invariants, isotropic averages,
ρ bounds); P. L. Polavarapu, J. Phys. Chem. 94, 8106 (1990) (activity 45a² + 7γ²).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy.spatial.transform import Rotation

from vibrapol import invariants as inv

finite = st.floats(min_value=-50, max_value=50, allow_nan=False, allow_infinity=False)


def symmetric(t: np.ndarray) -> np.ndarray:
    return 0.5 * (t + np.swapaxes(t, -1, -2))


tensors = arrays(np.float64, (3, 3), elements=finite).map(symmetric)


def test_water_like_tensor_by_hand():
    # t = diag(1, 2, 6) + t_xy = 1: a = 3; γ² = ½[(1-2)² + (2-6)² + (6-1)²] + 3·1² = 21 + 3 = 24
    # (formula of Long 2002, ch. 5, evaluated by hand).
    t = np.array([[1.0, 1.0, 0.0], [1.0, 2.0, 0.0], [0.0, 0.0, 6.0]])
    a2, g2 = inv.tensor_invariants(t[None])
    assert a2[0] == pytest.approx(9.0, rel=1e-14)
    assert g2[0] == pytest.approx(24.0, rel=1e-14)
    assert inv.activity(a2, g2)[0] == pytest.approx(45 * 9 + 7 * 24, rel=1e-14)
    assert inv.rho_linear(a2, g2)[0] == pytest.approx(72 / (405 + 96), rel=1e-14)
    assert inv.rho_natural(a2, g2)[0] == pytest.approx(144 / (405 + 168), rel=1e-14)


@given(tensors)
def test_rho_bounds(t):
    # 0 ≤ ρ_l ≤ 3/4 and 0 ≤ ρ_n ≤ 6/7 for any real symmetric tensor (Long 2002, ch. 5).
    a2, g2 = inv.tensor_invariants(t[None])
    rl, rn = inv.rho_linear(a2, g2)[0], inv.rho_natural(a2, g2)[0]
    if a2[0] + g2[0] > 1e-12:
        assert -1e-12 <= rl <= 0.75 + 1e-12
        assert -1e-12 <= rn <= 6 / 7 + 1e-12
        assert rn == pytest.approx(float(inv.rho_natural_from_linear(rl)), abs=1e-12)


@given(tensors, st.integers(min_value=0, max_value=2**31 - 1))
def test_invariants_unchanged_by_rotation(t, seed):
    # a and γ are rotational invariants of the tensor (Long 2002, ch. 5).
    r = Rotation.random(random_state=seed).as_matrix()
    a2, g2 = inv.tensor_invariants(t[None])
    a2r, g2r = inv.tensor_invariants((r @ t @ r.T)[None])
    scale = 1 + np.abs(t).max() ** 2
    assert a2r[0] == pytest.approx(a2[0], abs=1e-9 * scale)
    assert g2r[0] == pytest.approx(g2[0], abs=1e-9 * scale)


@given(st.floats(min_value=0.01, max_value=100))
def test_isotropic_tensor_is_fully_polarized(c):
    # γ = 0 for an isotropic tensor → ρ = 0 (Long 2002, ch. 5).
    t = c * np.eye(3)[None]
    a2, g2 = inv.tensor_invariants(t)
    assert inv.rho_linear(a2, g2)[0] == pytest.approx(0.0, abs=1e-14)
    assert inv.rho_natural(a2, g2)[0] == pytest.approx(0.0, abs=1e-14)


@given(tensors)
def test_traceless_tensor_gives_three_quarters(t):
    # a = 0 → ρ_l = 3/4 and ρ_n = 6/7 (Long 2002; common practice for non-totally-symmetric modes).
    traceless = t - np.trace(t) / 3 * np.eye(3)
    a2, g2 = inv.tensor_invariants(traceless[None])
    if g2[0] > 1e-9:
        assert inv.rho_linear(a2, g2)[0] == pytest.approx(0.75, abs=1e-12)
        assert inv.rho_natural(a2, g2)[0] == pytest.approx(6 / 7, abs=1e-12)


@given(
    st.floats(min_value=0.0, max_value=1e4),
    st.floats(min_value=0.0, max_value=0.75),
)
def test_activity_rho_inversion_round_trips(s, rho):
    # γ² = Sρ/(3(1+ρ)), 45a² = S − 7γ² inverts S = 45a² + 7γ², ρ = 3γ²/(45a²+4γ²) (Long 2002).
    a2, g2 = inv.invariants_from_activity(np.array([s]), np.array([rho]))
    assert inv.activity(a2, g2)[0] == pytest.approx(s, rel=1e-10, abs=1e-10)
    if s > 1e-6:
        assert inv.rho_linear(a2, g2)[0] == pytest.approx(rho, abs=1e-9)


def test_zero_tensor_has_undefined_ratio():
    a2, g2 = inv.tensor_invariants(np.zeros((1, 3, 3)))
    assert np.isnan(inv.rho_linear(a2, g2)[0])
    assert np.isnan(inv.rho_natural(a2, g2)[0])


def test_parallel_and_crossed_from_general_formula():
    # c = 1 → (45a² + 4γ²)/45; c = 0 → 3γ²/45 (Long 2002, ch. 5).
    a2, g2 = np.array([2.0]), np.array([5.0])
    vv = inv.polarized_intensity(a2, g2, [0, 0, 1], [0, 0, 1])
    vh = inv.polarized_intensity(a2, g2, [0, 0, 1], [1, 0, 0])
    assert vv[0] == pytest.approx(inv.intensity_parallel(a2, g2)[0] / 45, rel=1e-14)
    assert vh[0] == pytest.approx(inv.intensity_crossed(a2, g2)[0] / 45, rel=1e-14)
    assert vh[0] / vv[0] == pytest.approx(inv.rho_linear(a2, g2)[0], rel=1e-14)


@pytest.mark.parametrize("angle_deg", [0.0, 30.0, 45.0, 90.0])
def test_monte_carlo_orientation_average(angle_deg):
    # Average |e_s·R t Rᵀ·e_i|² over 200 000 random rotations (scipy Rotation.random) and compare
    # with the closed form a²c² + γ²(3 + c²)/45 (Long 2002, ch. 5). Statistical error ~0.5 %.
    rng = np.random.default_rng(7)
    t = symmetric(rng.normal(size=(3, 3)))
    rots = Rotation.random(200_000, random_state=11).as_matrix()
    e_i = np.array([1.0, 0.0, 0.0])
    th = np.deg2rad(angle_deg)
    e_s = np.array([np.cos(th), np.sin(th), 0.0])
    # e_s·(R t Rᵀ)·e_i = (Rᵀe_s)·t·(Rᵀe_i)
    u = np.einsum("nji,j->ni", rots, e_s)
    v = np.einsum("nji,j->ni", rots, e_i)
    mc = np.mean(np.einsum("ni,ij,nj->n", u, t, v) ** 2)
    a2, g2 = inv.tensor_invariants(t[None])
    closed = inv.intensity_at_angle(a2, g2, angle_deg)[0]
    assert mc == pytest.approx(closed, rel=0.02)


def test_degenerate_sets_by_frequency():
    sets = inv.degenerate_sets(np.array([100.0, 500.0, 100.4, 499.8, 900.0]), tol_cm1=1.0)
    assert sets == [(0, 2), (3, 1), (4,)]
    with pytest.raises(ValueError, match="tolerance"):
        inv.degenerate_sets(np.array([1.0]), tol_cm1=-1)


@settings(max_examples=50)
@given(st.integers(min_value=0, max_value=2**31 - 1))
def test_set_sum_is_independent_of_basis_inside_the_set(seed):
    # Rotating the basis of a degenerate pair mixes the members' tensors; the summed invariants
    # stay the same (Long 2002, ch. 5: only the set is physical).
    rng = np.random.default_rng(seed)
    pair = symmetric(rng.normal(size=(2, 3, 3)))
    th = rng.uniform(0, 2 * np.pi)
    mix = np.array([[np.cos(th), -np.sin(th)], [np.sin(th), np.cos(th)]])
    mixed = np.einsum("kl,lab->kab", mix, pair)
    for f in (lambda t: inv.tensor_invariants(t)[0], lambda t: inv.tensor_invariants(t)[1]):
        assert f(mixed).sum() == pytest.approx(f(pair).sum(), rel=1e-10, abs=1e-12)
