"""Harmonic analysis against PySCF's and ASE's, and invariance of the Raman table.

Reference implementations: ``pyscf.hessian.thermo.harmonic_analysis`` (PySCF 2.x) and
``ase.vibrations.VibrationsData`` (ASE 3.2x), run on the same Hessian with the same masses.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from vibrapol.modeset import ModeSet
from vibrapol.ramantable import raman_table
from vibrapol.units import HARTREE_BOHR2_TO_EV_ANG2
from vibrapol.vibrations import harmonic_analysis, modes_from_displacements, project_dalpha

GEOMETRIES = {
    # HF/STO-3G-ish geometries in Å; they need not be minima for these comparisons.
    "water": ("O 0 0 0.1173; H 0 0.7572 -0.4692; H 0 -0.7572 -0.4692", False),
    "ammonia": ("N 0 0 0.1; H 0.94 0 -0.25; H -0.47 0.814 -0.25; H -0.47 -0.814 -0.25", False),
    "co2": ("C 0 0 0; O 0 0 1.16; O 0 0 -1.16", True),
}


@pytest.fixture(scope="module", params=sorted(GEOMETRIES))
def pyscf_job(request):
    from pyscf import gto

    atom, linear = GEOMETRIES[request.param]
    mol = gto.M(atom=atom, basis="sto-3g", verbose=0)
    mf = mol.RHF().run(conv_tol=1e-11)
    hess = mf.Hessian().kernel()  # (N, N, 3, 3) hartree/bohr²
    return mol, hess, linear


def _masses(mol):
    return mol.atom_mass_list(isotope_avg=True)


def test_frequencies_match_pyscf_harmonic_analysis(pyscf_job):
    from pyscf.hessian import thermo

    mol, hess, linear = pyscf_job
    masses = _masses(mol)
    ref = thermo.harmonic_analysis(mol, hess, imaginary_freq=False, mass=masses)
    ours = harmonic_analysis(hess.transpose(0, 2, 1, 3), masses, mol.atom_coords(unit="Angstrom"))
    assert ours.linear == linear
    # frequencies within 0.01 cm⁻¹ (issue requirement); PySCF uses its own CODATA constants.
    np.testing.assert_allclose(ours.freqs_cm1, np.sort(ref["freq_wavenumber"]), atol=0.01)
    np.testing.assert_allclose(
        ours.reduced_masses_da, ref["reduced_mass"][np.argsort(ref["freq_wavenumber"])], rtol=1e-6
    )


def test_unprojected_frequencies_match_ase(pyscf_job):
    # ASE's VibrationsData does no projection: compare with project=False (all 3N modes).
    from ase import Atoms
    from ase.vibrations import VibrationsData

    mol, hess, _ = pyscf_job
    masses = _masses(mol)
    coords = mol.atom_coords(unit="Angstrom")
    atoms = Atoms(numbers=mol.atom_charges(), positions=coords, masses=masses)
    n = mol.natm
    h_ev = hess.transpose(0, 2, 1, 3).reshape(3 * n, 3 * n) * HARTREE_BOHR2_TO_EV_ANG2
    ref = VibrationsData.from_2d(atoms, h_ev).get_frequencies()
    ref_signed = np.where(np.abs(ref.imag) > 0, -np.abs(ref.imag), ref.real)
    ours = harmonic_analysis(hess.transpose(0, 2, 1, 3), masses, coords, project=False)
    np.testing.assert_allclose(ours.freqs_cm1, np.sort(ref_signed), atol=0.01)


def test_modes_are_orthonormal_and_printed_displacements_convert_back(pyscf_job):
    mol, hess, _ = pyscf_job
    masses = _masses(mol)
    ha = harmonic_analysis(hess.transpose(0, 2, 1, 3), masses, mol.atom_coords(unit="Angstrom"))
    np.testing.assert_allclose(ha.modes @ ha.modes.T, np.eye(len(ha.freqs_cm1)), atol=1e-12)
    # Programs print Cartesian displacements L/√m with arbitrary per-mode scale: converting back
    # must recover L up to sign.
    d = ha.modes / np.repeat(np.sqrt(masses), 3) * np.linspace(0.3, 3.0, len(ha.modes))[:, None]
    back = modes_from_displacements(d, masses)
    np.testing.assert_allclose(np.abs(np.sum(back * ha.modes, axis=1)), 1.0, atol=1e-12)


@pytest.fixture(scope="module")
def water_model():
    """Water HF/STO-3G Hessian with a random symmetric ∂α/∂x (invariance checks need no physics)."""
    from pyscf import gto

    mol = gto.M(atom=GEOMETRIES["water"][0], basis="sto-3g", verbose=0)
    hess = mol.RHF().run(conv_tol=1e-11).Hessian().kernel().transpose(0, 2, 1, 3).reshape(9, 9)
    rng = np.random.default_rng(3)
    d = rng.normal(size=(9, 3, 3))
    d = 0.5 * (d + d.transpose(0, 2, 1))
    return mol.atom_charges(), mol.atom_coords(unit="Angstrom"), hess, d


def _table(z, coords, hess, dalpha, masses=None):
    masses = np.array([15.995, 1.008, 1.008]) if masses is None else masses
    ha = harmonic_analysis(hess, masses, coords)
    ms = ModeSet(z, coords, ha.freqs_cm1, ha.modes, masses_da=masses, dalpha_dx=dalpha)
    return raman_table(ms)


@settings(max_examples=25, deadline=None)
@given(st.integers(min_value=0, max_value=2**31 - 1))
def test_table_unchanged_by_rotating_the_molecule(water_model, seed):
    z, coords, hess, d = water_model
    r = Rotation.random(random_state=seed).as_matrix()
    big_r = np.kron(np.eye(3), r)  # rotates every atom's (x, y, z)
    # x' = R x; α' = R α Rᵀ; ∂α'/∂x'_(i,a) = Σ_b R_ab R (∂α/∂x_(i,b)) Rᵀ
    d_rot = np.einsum("ij,jab->iab", big_r, np.einsum("ac,ncd,bd->nab", r, d, r))
    ref = _table(z, coords, hess, d)
    rot = _table(z, coords @ r.T, big_r @ hess @ big_r.T, d_rot)
    np.testing.assert_allclose(rot.freqs_cm1, ref.freqs_cm1, atol=1e-6)
    np.testing.assert_allclose(rot.activity, ref.activity, rtol=1e-8)
    np.testing.assert_allclose(rot.rho_linear, ref.rho_linear, atol=1e-10)


def test_table_unchanged_by_permuting_atoms(water_model):
    z, coords, hess, d = water_model
    perm = np.array([2, 0, 1])
    idx = (3 * perm[:, None] + np.arange(3)).ravel()
    masses = np.array([15.995, 1.008, 1.008])
    ref = _table(z, coords, hess, d, masses)
    per = _table(z[perm], coords[perm], hess[np.ix_(idx, idx)], d[idx], masses[perm])
    np.testing.assert_allclose(per.freqs_cm1, ref.freqs_cm1, atol=1e-8)
    np.testing.assert_allclose(per.activity, ref.activity, rtol=1e-10)
    np.testing.assert_allclose(per.rho_natural, ref.rho_natural, atol=1e-12)


def test_table_unchanged_by_mode_sign_flip(water_model):
    z, coords, hess, d = water_model
    masses = np.array([15.995, 1.008, 1.008])
    ha = harmonic_analysis(hess, masses, coords)
    flipped = ha.modes * np.array([-1.0, 1.0, -1.0])[:, None]
    a = raman_table(ModeSet(z, coords, ha.freqs_cm1, ha.modes, masses_da=masses, dalpha_dx=d))
    b = raman_table(ModeSet(z, coords, ha.freqs_cm1, flipped, masses_da=masses, dalpha_dx=d))
    np.testing.assert_allclose(b.activity, a.activity, rtol=1e-12)
    np.testing.assert_allclose(b.rho_linear, a.rho_linear, atol=1e-14)


def test_projection_of_derivatives_by_hand():
    # One atom of mass 4 Da moving along x: Q = √m x, so ∂α/∂Q = (1/√m) ∂α/∂x = ½ ∂α/∂x.
    d = np.zeros((3, 3, 3))
    d[0] = np.diag([2.0, 4.0, 6.0])
    dq = project_dalpha(d, np.array([[1.0, 0.0, 0.0]]), np.array([4.0]))
    np.testing.assert_allclose(dq[0], np.diag([1.0, 2.0, 3.0]))
