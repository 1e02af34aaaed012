"""Dispersion suffixes on the method (-d3, -d3bj, -d4): parsing, energy, Hessian, provenance."""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.engine.fieldgrad import tighten_scf
from vibrapol.engine.hessian import analytic_hessian
from vibrapol.engine.scf import EngineInputError, MethodSpec, build_molecule, run_scf
from vibrapol.errors import VibrapolWarning
from vibrapol.vibrations import harmonic_analysis

WATER_Z = np.array([8, 1, 1])
# Slightly away from the minimum and from C2v, so that every Hessian block is non-zero.
WATER_ANG = np.array([[0.01, 0.0, 0.1173], [0.0, 0.7772, -0.4592], [0.02, -0.7472, -0.4692]])


def test_suffixes_are_normalised_and_unknown_ones_refused():
    # Contract: '-d3' is read as D3 with zero damping (the original D3 of 2010, common
    # practice), every accepted suffix reaches PySCF in canonical form, others are refused.
    with pytest.warns(VibrapolWarning, match="'-d3' is read as D3 with zero damping"):
        assert MethodSpec("B3LYP-D3").method == "b3lyp-d3zero"
    assert MethodSpec("b3lyp-d3bj").method == "b3lyp-d3bj"
    assert MethodSpec("hf-d4").is_hf and MethodSpec("hf-d4").method_label == "HF-D4"
    assert not MethodSpec("pbe0-d3bj").is_hf
    with pytest.raises(EngineInputError, match="unknown dispersion correction '-d5'"):
        MethodSpec("b3lyp-d5")


def test_functional_without_dispersion_parameters_is_refused():
    # Contract: the library has no D3 parameters for plain LDA; one line before any SCF.
    spec = MethodSpec("lda-d3bj", "sto-3g")
    with pytest.raises(EngineInputError, match="no D3BJ parameters for 'lda'"):
        build_molecule(WATER_Z, WATER_ANG, spec)


@pytest.mark.parametrize(("method", "version"), [("b3lyp", "d3bj"), ("hf", "d3zero")])
def test_energy_differs_by_the_library_dispersion_energy(method, version):
    # Reference: the simple-dftd3 library itself (pyscf.dispersion.dftd3, two-body), called
    # on the same geometry; the dispersion-corrected SCF energy must exceed the plain one by
    # exactly that value (the correction does not change the density).
    from pyscf.dispersion import dftd3

    plain = MethodSpec(method, "sto-3g")
    corrected = MethodSpec(f"{method}-{version}", "sto-3g")
    mol = build_molecule(WATER_Z, WATER_ANG, plain)
    e_plain = run_scf(mol, plain).e_tot
    e_corr = run_scf(build_molecule(WATER_Z, WATER_ANG, corrected), corrected).e_tot
    ref = float(
        dftd3.DFTD3Dispersion(mol, xc=method, version=version, atm=False).get_dispersion()["energy"]
    )
    assert abs(ref) > 1e-6
    assert e_corr - e_plain == pytest.approx(ref, abs=1e-9)


def test_hessian_includes_the_dispersion_correction():
    # Reference: central differences (±1e-3 bohr) of the analytic HF-D3BJ gradient of PySCF
    # (which includes the library's analytic dispersion gradient), SCFs converged to 1e-9 in
    # the orbital gradient; HF is grid-free, so the differences are good to about 1e-6.
    # The engine's Hessian and its frequencies must agree, and differ from plain HF by far
    # more than that.
    spec = MethodSpec("hf-d3bj", "sto-3g")
    mol = build_molecule(WATER_Z, WATER_ANG, spec)
    mf = tighten_scf(run_scf(mol, spec), spec)
    hessian = analytic_hessian(mf)
    coords = mol.atom_coords()
    h = 1e-3
    numeric = np.zeros_like(hessian)
    for k in range(coords.size):
        grads = []
        for sign in (1.0, -1.0):
            x = coords.copy().ravel()
            x[k] += sign * h
            m = mol.set_geom_(x.reshape(-1, 3), unit="Bohr", inplace=False)
            g = tighten_scf(run_scf(m, spec, dm0=mf.make_rdm1()), spec).nuc_grad_method()
            g.verbose = 0
            grads.append(np.asarray(g.kernel()).ravel())
        numeric[k] = (grads[0] - grads[1]) / (2 * h)
    numeric = 0.5 * (numeric + numeric.T)
    assert np.abs(hessian - numeric).max() < 2e-6
    plain = MethodSpec("hf", "sto-3g")
    h_plain = analytic_hessian(run_scf(build_molecule(WATER_Z, WATER_ANG, plain), plain))
    assert np.abs(hessian - h_plain).max() > 100 * 2e-6
    masses = np.array([15.994915, 1.007825, 1.007825])
    xyz = coords * 0.529177210903
    f_engine = harmonic_analysis(hessian, masses, xyz).freqs_cm1
    f_numeric = harmonic_analysis(numeric, masses, xyz).freqs_cm1
    np.testing.assert_allclose(f_engine, f_numeric, atol=0.05)
