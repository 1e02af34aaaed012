"""Effective core potentials of def2 basis sets, diffuse basis sets, and a heavy-atom run."""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.engine.compute import run_engine
from vibrapol.engine.ecp import ecp_core_electrons
from vibrapol.engine.fieldgrad import tighten_scf
from vibrapol.engine.hessian import analytic_hessian
from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf

HI_Z = np.array([1, 53])
HI_ANG = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 1.61]])


def test_def2_basis_brings_its_ecp_for_iodine_only():
    # Published fact: the def2 basis sets use a 28-electron core potential (ECP28MDF) for the
    # 5p elements such as iodine, and are all-electron up to Kr (Weigend and Ahlrichs, Phys.
    # Chem. Chem. Phys. 7, 3297 (2005)). HI then has 1 + 53 − 28 = 26 electrons.
    spec = MethodSpec("hf", "def2-svp")
    mol = build_molecule(HI_Z, HI_ANG, spec)
    assert mol.has_ecp() and mol.nelectron == 26
    assert ecp_core_electrons("def2-svp", HI_Z) == {"I": 28}
    assert ecp_core_electrons("def2-svpd", HI_Z) == {"I": 28}
    assert ecp_core_electrons("def2-svp", np.array([1, 35])) == {}  # HBr: all-electron
    assert ecp_core_electrons("6-31g*", np.array([1, 35])) == {}


@pytest.mark.slow
def test_ecp_hessian_matches_gradient_differences():
    # Reference: central differences (±1e-3 bohr, SCF converged to 1e-9 in the orbital
    # gradient) of PySCF's analytic HF/def2-SVP gradient of HI, which includes the ECP's
    # derivative integrals; the bond-stretch block of the analytic Hessian must agree.
    spec = MethodSpec("hf", "def2-svp")
    mol = build_molecule(HI_Z, HI_ANG, spec)
    mf = tighten_scf(run_scf(mol, spec), spec)
    hessian = analytic_hessian(mf)
    coords = mol.atom_coords()
    h = 1e-3
    grads = []
    for sign in (1.0, -1.0):
        x = coords.copy()
        x[1, 2] += sign * h
        m = mol.set_geom_(x, unit="Bohr", inplace=False)
        g = tighten_scf(run_scf(m, spec, dm0=mf.make_rdm1()), spec).nuc_grad_method()
        g.verbose = 0
        grads.append(np.asarray(g.kernel()))
    column = ((grads[0] - grads[1]) / (2 * h)).ravel()
    np.testing.assert_allclose(hessian[:, 5], column, atol=2e-6)
    assert hessian[5, 5] > 0.1  # a stiff bond: the check is not comparing zeros


@pytest.mark.slow
def test_hydrogen_iodide_field_and_cartesian_routes_agree(tmp_path):
    # Check between two independent routes on an ECP molecule: the field route (analytic
    # gradients in fields, which add the dipole-derivative integrals to PySCF's ECP-aware
    # gradient) and the Cartesian route (CPHF α at displaced geometries) must give the same
    # ∂α/∂x and IR intensity, HF/def2-SVP at the optimised geometry (the two runs share the
    # optimisation and the reference stage through one checkpoint file).
    store = tmp_path / "hi.sqlite"
    runs = {
        route: run_engine((HI_Z, HI_ANG), "hf", "def2-svp", route=route, checkpoint=store)
        for route in ("cartesian", "field")
    }
    cart, field = runs["cartesian"].modes, runs["field"].modes
    np.testing.assert_allclose(cart.freqs_cm1, field.freqs_cm1)
    scale = np.abs(cart.dalpha_dx).max()
    assert np.abs(cart.dalpha_dx - field.dalpha_dx).max() < 2e-4 * scale
    stretch = int(np.argmax(cart.freqs_cm1))
    a2c, g2c = cart.raman_invariants()
    a2f, g2f = field.raman_invariants()
    assert a2f[stretch] == pytest.approx(a2c[stretch], rel=5e-4)
    assert g2f[stretch] == pytest.approx(g2c[stretch], rel=5e-4)
    assert field.ir_intensity_km_mol[stretch] == pytest.approx(
        cart.ir_intensity_km_mol[stretch], rel=1e-3
    )
    assert any("effective core potential def2-svp on I (28" in n for n in cart.provenance.notes)


def test_ecp_core_electrons_do_not_count_against_the_basis_size():
    # Contract (bug found while adding ECPs): the "more electrons than orbitals" check counts
    # the electrons the calculation has. LANL2DZ gives iodine a 46-electron core potential
    # (PySCF's library) and HI 10 basis functions: 8 electrons fit, 54 would not.
    spec = MethodSpec("hf", "lanl2dz")
    mol = build_molecule(HI_Z, HI_ANG, spec)
    assert mol.nelectron == 8 and 2 * mol.nao < 54
