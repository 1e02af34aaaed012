"""The two displacement routes and the step size give the same Raman quantities."""

from __future__ import annotations

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine import compute_modes
from vibrapol.ramantable import raman_table


@pytest.fixture(scope="module")
def water_cartesian():
    return compute_modes(molecule("H2O"), "hf", "3-21g", route="cartesian")


def test_cartesian_and_normal_mode_routes_agree(water_cartesian):
    # Both are central differences of the same α(x); they differ only by O(h²) terms along
    # different directions, required to agree within 1% (activities) and 0.005 (ρ).
    other = compute_modes(molecule("H2O"), "hf", "3-21g", route="normal-mode")
    assert other.dalpha_dx is None
    t1, t2 = raman_table(water_cartesian), raman_table(other)
    np.testing.assert_allclose(t1.freqs_cm1, t2.freqs_cm1, atol=1e-8)
    np.testing.assert_allclose(t2.activity, t1.activity, rtol=0.01)
    np.testing.assert_allclose(t2.rho_linear, t1.rho_linear, atol=0.005)


def test_step_size_does_not_change_activities(water_cartesian):
    # Truncation error ∝ h²: halving the step from 0.005 to 0.0025 Å must change the activities
    # by less than 1%.
    half = compute_modes(molecule("H2O"), "hf", "3-21g", step_ang=0.0025)
    np.testing.assert_allclose(
        raman_table(half).activity, raman_table(water_cartesian).activity, rtol=0.01
    )
