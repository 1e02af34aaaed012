"""Sign convention of the modes vibrapol computes itself (vibrations.canonical_signs).

Contracts checked: (1) every Raman quantity is unchanged when a mode's sign is flipped — the
sign is a convention, the quantities are quadratic in ∂α/∂Q_k; (2) the convention holds: the
largest component of each mode is positive, ties going to the first in coordinate order;
(3) it makes the modes reproducible: Hessians that differ only by rounding (1e-12 hartree
bohr⁻²) give the same signs.  The Hessian is PySCF's (reference library), water HF/STO-3G.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.ramantable import raman_table
from vibrapol.sources.modes_json import read_modes_json
from vibrapol.spectrum.orientation import aligned, oriented_channel_activity
from vibrapol.vibrations import SIGN_TIE_RTOL, canonical_signs, harmonic_analysis

WATER_MODES = PROJECT_ROOT / "examples" / "water.modes.json"  # engine output of our own


@pytest.fixture(scope="module")
def water_hessian():
    pyscf = pytest.importorskip("pyscf")
    mol = pyscf.gto.M(
        atom="O 0 0 0.1173; H 0 0.7572 -0.4692; H 0 -0.7572 -0.4692", basis="sto-3g", verbose=0
    )
    mf = pyscf.scf.RHF(mol).run()
    hessian = mf.Hessian().kernel().transpose(0, 2, 1, 3).reshape(9, 9)
    masses = np.array([15.99491462, 1.00782503, 1.00782503])
    return hessian, masses, mol.atom_coords(unit="Angstrom")


def test_every_raman_quantity_is_unchanged_when_a_mode_is_flipped():
    modes = read_modes_json(WATER_MODES)
    flip = np.ones(modes.n_modes)
    flip[1] = -1.0
    flipped = dataclasses.replace(
        modes, modes=modes.modes * flip[:, None], dalpha_dq=None
    )  # ∂α/∂Q recomputed from ∂α/∂x and the flipped vectors
    assert np.array_equal(flipped.dalpha_dq[1], -modes.dalpha_dq[1])
    a, b = raman_table(modes), raman_table(flipped)
    for name in ("a2", "gamma2", "activity", "rho_linear", "rho_natural", "polarized"):
        np.testing.assert_allclose(getattr(b, name), getattr(a, name), rtol=1e-14, atol=0)
    oriented = aligned("z", "z")  # a fixed orientation: tensor components, not invariants
    channels = ("vv", "vh", "p45a-45")
    np.testing.assert_allclose(
        oriented_channel_activity(flipped.dalpha_dq, channels, oriented),
        oriented_channel_activity(modes.dalpha_dq, channels, oriented),
        rtol=1e-14,
    )


def _holds(modes: np.ndarray) -> bool:
    for row in modes:
        top = np.abs(row).max()
        first = np.flatnonzero(np.abs(row) >= top * (1 - SIGN_TIE_RTOL))[0]
        if row[first] <= 0:
            return False
    return True


def test_the_convention_holds_with_ties_to_the_first_component():
    row = np.array([0.0, 0.5, -0.5, 0.5, -0.5 * (1 + 1e-12)])  # ties within rounding
    assert np.array_equal(canonical_signs(-row[None])[0], row)
    assert np.array_equal(canonical_signs(row[None])[0], row)
    assert np.array_equal(canonical_signs(np.array([[0.1, -0.9, 0.3]]))[0], [-0.1, 0.9, -0.3])


def test_hessians_equal_to_rounding_give_the_same_mode_signs(water_hessian):
    hessian, masses, coords = water_hessian
    rng = np.random.default_rng(0)
    first = harmonic_analysis(hessian, masses, coords).modes
    assert _holds(first)
    for _ in range(20):
        noise = rng.normal(scale=1e-12, size=hessian.shape)
        modes = harmonic_analysis(hessian + noise + noise.T, masses, coords).modes
        assert _holds(modes)
        # The antisymmetric stretch has equal and opposite H components: without a tie-break
        # rounding picks the sign.  With it the vectors agree to the rounding of the input.
        np.testing.assert_allclose(modes, first, atol=1e-8)
