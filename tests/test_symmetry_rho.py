"""Depolarization ratios in cubic groups from real derivatives (PySCF engine, HF/STO-3G).

Fact of the trade (D. A. Long, The Raman Effect, 2002, ch. 5): in cubic point groups the
polarizability derivative of a totally symmetric mode is isotropic (γ = 0), so ρ = 0 exactly;
every other Raman-active mode has a = 0 and ρ_linear = 3/4.
"""

from __future__ import annotations

import numpy as np
import pytest

import symmetry_geometries as geo
from vibrapol.engine import compute_modes
from vibrapol.ramantable import raman_table
from vibrapol.symmetry import mode_symmetry


def cubic_rho_check(modes, symmetrize=False):
    sym = mode_symmetry(modes, symmetrize=symmetrize)
    table = raman_table(sym.modes, symmetry=sym)
    ts = sym.totally_symmetric
    assert ts.sum() == 1
    assert np.all(np.abs(table.rho_linear[ts]) < 1e-6)
    others = sym.raman_active & ~ts
    assert others.sum() > 0
    np.testing.assert_allclose(table.rho_linear[others], 0.75, atol=1e-6)
    np.testing.assert_allclose(table.rho_natural[others], 6 / 7, atol=1e-6)
    # inactive species (T1 in Td; T1u, T2u in Oh) scatter nothing: activity ≈ 0
    assert np.all(table.activity[~sym.raman_active] < 1e-6 * table.activity.max())
    return sym, table


def test_methane_td_rho():
    z, x = geo.moved(*geo.methane(), seed=8)
    modes = compute_modes((z, x), "hf", "sto-3g", optimize=False, progress=False)
    sym, _ = cubic_rho_check(modes)
    assert sym.group.symbol == "Td"


def test_noisy_methane_rho_after_symmetrizing():
    # With ±0.001 Å noise the A1 mode's tensor is slightly anisotropic; averaging the Hessian
    # and ∂α/∂x over Td restores ρ = 0 and 3/4 to 1e-6.
    z, x = geo.moved(*geo.methane(), seed=9, noise_ang=0.001)
    modes = compute_modes((z, x), "hf", "sto-3g", optimize=False, progress=False)
    sym, _ = cubic_rho_check(modes, symmetrize=True)
    assert sym.symmetrized


@pytest.mark.slow
def test_sf6_oh_rho():
    z, x = geo.moved(*geo.sf6(), seed=8)
    modes = compute_modes((z, x), "hf", "sto-3g", optimize=False, progress=False)
    sym, _ = cubic_rho_check(modes)
    assert sym.group.symbol == "Oh"
