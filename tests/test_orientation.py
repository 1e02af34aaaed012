"""Oriented samples and polar sweeps against closed forms."""

import math

import numpy as np
import pytest

from spectrum_helpers import analytic_modeset
from vibrapol.errors import VibrapolError
from vibrapol.invariants import tensor_invariants
from vibrapol.spectrum import orientation as o
from vibrapol.spectrum import stick_spectrum
from vibrapol.spectrum.channels import isotropic_channel_activity
from vibrapol.spectrum.sweep import polar_sweep

CHANNELS = ["vv", "vh", "hv", "hh", "vu", "nv", "nh", "nu", "p30a-60", "p17a41"]


def random_tensors(n=4, seed=7):
    rng = np.random.default_rng(seed)
    t = rng.normal(size=(n, 3, 3))
    return 0.5 * (t + np.swapaxes(t, 1, 2))


@pytest.mark.parametrize("geometry", [90, 180])
def test_isotropic_quadrature_reproduces_closed_form(geometry):
    # Long (2002) ch. 5: ⟨|e_s·α′·e_i|²⟩ = a²c² + γ²(3 + c²)/45; the quadrature is exact for
    # degree-4 integrands, so agreement is to rounding.
    t = random_tensors()
    a2, g2 = tensor_invariants(t)
    closed = isotropic_channel_activity(a2, g2, CHANNELS, geometry)
    quad = o.oriented_channel_activity(t, CHANNELS, o.isotropic(), geometry)
    np.testing.assert_allclose(quad, closed, rtol=1e-11, atol=1e-12)


def test_uniaxial_without_preferred_tilt_is_isotropic():
    # A uniform tilt, azimuth and twist cover all orientations: closed form again (Long 2002).
    t = random_tensors(seed=3)
    a2, g2 = tensor_invariants(t)
    dist = o.uniaxial([1.0, 2.0, -0.5], "x", tilt_spread_deg=math.inf, n_tilt=4)
    quad = o.oriented_channel_activity(t, CHANNELS, dist)
    np.testing.assert_allclose(
        quad, isotropic_channel_activity(a2, g2, CHANNELS), rtol=1e-11, atol=1e-12
    )


def test_aligned_single_component_gives_cos4_and_sin2cos2():
    # Textbook polar dependence: only α′_zz ≠ 0, molecular z along V (lab y); polarizer at θ
    # from V with the analyzer parallel gives α′²cos⁴θ, crossed α′²sin²θcos²θ (×45 here).
    t = np.zeros((1, 3, 3))
    t[0, 2, 2] = 2.0
    m = analytic_modeset(t, [1000.0])
    angles = np.arange(0.0, 361.0, 15.0)
    sw = polar_sweep(m, orientation=o.aligned("z", "y"), angles_deg=angles, quantity="activity")
    th = np.deg2rad(angles)
    np.testing.assert_allclose(sw.parallel[:, 0], 45 * 4 * np.cos(th) ** 4, atol=1e-10)
    np.testing.assert_allclose(
        sw.crossed[:, 0], 45 * 4 * (np.sin(th) * np.cos(th)) ** 2, atol=1e-10
    )


def test_isotropic_sweep_is_flat_with_rho():
    # Isotropic sample in back-scattering: parallel = 45a² + 4γ², crossed = 3γ² at every angle.
    m = analytic_modeset([np.diag([1.0, 2.0, 3.0])], [1000.0])
    sw = polar_sweep(
        m, orientation=o.isotropic(), angles_deg=[0, 20, 45, 90, 133], quantity="activity"
    )
    np.testing.assert_allclose(sw.parallel[:, 0], 192.0, rtol=1e-11)
    np.testing.assert_allclose(sw.crossed[:, 0], 9.0, rtol=1e-11)


def test_fixed_rotation_equals_rotating_the_tensor():
    # Rotating the molecule by R is the same as using the tensor R α′ Rᵀ with no rotation.
    t = random_tensors(n=2, seed=11)
    r = o.euler_zyz(20.0, 65.0, -140.0)
    rotated = np.einsum("ij,kjl,ml->kim", r, t, r)
    a = o.oriented_channel_activity(t, CHANNELS, o.fixed(r))
    b = o.oriented_channel_activity(rotated, CHANNELS, o.fixed(np.eye(3)))
    np.testing.assert_allclose(a, b, rtol=1e-12)


def test_narrow_tilt_distribution_approaches_fixed_tilt():
    # A Gaussian tilt of 0.05° spread is, to ~1e-6, the sharp tilt of the same mean.
    t = random_tensors(n=2, seed=5)
    sharp = o.uniaxial("z", "y", tilt_deg=35.0)
    narrow = o.uniaxial("z", "y", tilt_deg=35.0, tilt_spread_deg=0.05)
    a = o.oriented_channel_activity(t, CHANNELS, sharp)
    b = o.oriented_channel_activity(t, CHANNELS, narrow)
    np.testing.assert_allclose(b, a, rtol=1e-4, atol=1e-6)


def test_oriented_spectrum_sums_degenerate_members():
    # Intensities add over a degenerate pair for any orientation (Long 2002): one stick whose
    # height is the sum of the members' oriented heights.
    t = random_tensors(n=2, seed=2)
    m = analytic_modeset(t, [700.0, 700.0])
    dist = o.uniaxial("x", "y", tilt_deg=20.0, tilt_spread_deg=10.0)
    s = stick_spectrum(m, orientation=dist, quantity="activity")
    per_mode = o.oriented_channel_activity(t, ["vv", "vh"], dist)
    assert s.n_bands == 1
    np.testing.assert_allclose(s.heights[0], per_mode.sum(axis=0), rtol=1e-12)


def test_bad_orientations_are_refused():
    with pytest.raises(VibrapolError, match="proper orthogonal"):
        o.fixed(np.diag([1.0, 1.0, -1.0]))
    with pytest.raises(VibrapolError, match="axis must be"):
        o.aligned("w", "z")
    with pytest.raises(VibrapolError, match="at least 5"):
        o.uniaxial(n_azimuth=3)
