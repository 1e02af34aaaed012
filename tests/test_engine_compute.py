"""compute_modes end to end on small molecules (HF/STO-3G): frequencies and ρ."""

from __future__ import annotations

import re

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine import compute_modes
from vibrapol.engine.hessian import analytic_hessian
from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf
from vibrapol.ramantable import raman_table


@pytest.fixture(scope="module")
def water():
    return compute_modes(molecule("H2O"), "hf", "sto-3g")


@pytest.fixture(scope="module")
def methane():
    return compute_modes(molecule("CH4"), "hf", "sto-3g")


def pyscf_frequencies(modes):
    """PySCF's own harmonic analysis of its Hessian at the same geometry and masses."""
    from pyscf.hessian import thermo

    spec = MethodSpec("hf", "sto-3g")
    mf = run_scf(build_molecule(modes.atomic_numbers, modes.coordinates_ang, spec), spec)
    n = modes.n_atoms
    hess = analytic_hessian(mf).reshape(n, 3, n, 3).transpose(0, 2, 1, 3)
    result = thermo.harmonic_analysis(mf.mol, hess, mass=modes.masses_da)
    return np.sort(np.real(result["freq_wavenumber"]))


@pytest.mark.parametrize("name", ["water", "methane"])
def test_frequencies_equal_pyscf_harmonic_analysis(name, request):
    # Reference: pyscf.hessian.thermo.harmonic_analysis (its own mass weighting and
    # projection), required to agree within 0.1 cm⁻¹.
    modes = request.getfixturevalue(name)
    ref = pyscf_frequencies(modes)
    assert modes.n_modes == 3 * modes.n_atoms - 6
    np.testing.assert_allclose(np.sort(modes.freqs_cm1), ref, atol=0.1)


def test_optimised_structures_have_no_imaginary_modes(water, methane):
    # A minimum has only real frequencies (common practice); the smallest here are > 1000 cm⁻¹.
    assert water.freqs_cm1.min() > 1000
    assert methane.freqs_cm1.min() > 1000


def test_tetrahedral_depolarization_ratios(methane):
    # Fact of the trade (common practice; D. A. Long, The Raman Effect, 2002, ch. 5): in Td the
    # totally symmetric (A1) stretch has ρ_linear = 0, every other Raman-active set (E, T2)
    # ρ_linear = 3/4, with degeneracies 1 (A1), 2 (E), 3 (T2).
    table = raman_table(methane)
    sets = table.sets()
    assert sorted(len(s) for s in sets) == [1, 2, 3, 3]
    for members in sets:
        rho = table.rho_linear[members[0]]
        if len(members) == 1:
            assert rho < 0.01
        else:
            assert rho == pytest.approx(0.75, abs=0.005)


def test_water_polarized_and_depolarized_modes(water):
    # C2v water: the two A1 modes are polarized (ρ < 3/4), the B2 antisymmetric stretch (the
    # highest frequency) has ρ = 3/4 exactly (common practice).
    table = raman_table(water)
    order = np.argsort(table.freqs_cm1)
    assert table.rho_linear[order[2]] == pytest.approx(0.75, abs=1e-4)
    assert table.rho_linear[order[0]] < 0.749
    assert table.rho_linear[order[1]] < 0.5


def test_modeset_carries_tensors_and_provenance(water):
    # Shapes fixed by the package conventions (design.md): ∂α/∂x is (3N, 3, 3).
    assert water.dalpha_dx.shape == (9, 3, 3)
    assert water.dalpha_dq.shape == (3, 3, 3)
    assert water.provenance.program == "PySCF"
    assert water.provenance.method == "HF" and water.provenance.basis == "sto-3g"
    # Translation invariance: displacing the whole molecule does not change α, so Σ over atoms
    # of ∂α/∂x (each Cartesian direction) vanishes, to the finite-difference accuracy.
    total = water.dalpha_dx.reshape(3, 3, 3, 3).sum(axis=0)
    assert np.abs(total).max() < 1e-4 * np.abs(water.dalpha_dx).max() + 1e-6


def test_optimisation_reaches_the_known_hf_sto3g_water_geometry():
    # Start from a distorted water; HF/STO-3G minimum: r(OH) = 0.989 Å, HOH = 100.0°
    # (a widely quoted textbook value, given here from memory).
    from vibrapol.engine.compute import run_engine
    from vibrapol.engine.optimize import FMAX_HARTREE_BOHR

    start = (np.array([8, 1, 1]), np.array([[0, 0, 0.0], [0, 0.85, -0.55], [0, -0.70, -0.50]]))
    run = run_engine(start, "hf", "sto-3g")
    assert run.optimization.n_steps > 0
    assert run.optimization.max_force_hartree_bohr <= FMAX_HARTREE_BOHR
    x = run.modes.coordinates_ang
    r1, r2 = np.linalg.norm(x[1] - x[0]), np.linalg.norm(x[2] - x[0])
    angle = np.degrees(np.arccos((x[1] - x[0]) @ (x[2] - x[0]) / (r1 * r2)))
    assert r1 == pytest.approx(0.989, abs=0.002) and r2 == pytest.approx(0.989, abs=0.002)
    assert angle == pytest.approx(100.0, abs=0.3)
    assert "max force" in run.modes.provenance.notes[0]


def test_progress_bar_on_stderr_when_asked(capsys):
    compute_modes(molecule("H2O"), "hf", "sto-3g", optimize=False, symmetry=False, progress=True)
    err = capsys.readouterr().err
    # One bar over every job: the reference SCF, the Hessian and the 18 displaced geometries.
    assert "20/20" in err and "tasks" in err
    # A line when each stage is sent and one when it finishes, with its time (progress.py).
    for stage in ("reference SCF, polarizability and gradient", "analytic Hessian"):
        assert f"vibrapol: {stage} …" in err
        assert re.search(f"vibrapol: {stage}: done in [0-9.]+ s", err)
    assert "vibrapol: cartesian route: 18 tasks" in err
    compute_modes(molecule("H2O"), "hf", "sto-3g", optimize=False, progress=None)
    assert capsys.readouterr().err == ""  # not a terminal under pytest: quiet


@pytest.mark.slow
def test_carbon_tetrachloride_depolarization_ratios():
    # Td again, heavier atoms: A1 ρ < 0.01, E and T2 sets ρ = 0.75 ± 0.005 (common practice).
    table = raman_table(compute_modes(molecule("CCl4"), "hf", "sto-3g"))
    sets = table.sets()
    assert sorted(len(s) for s in sets) == [1, 2, 3, 3]
    for members in sets:
        rho = table.rho_linear[members[0]]
        assert rho < 0.01 if len(members) == 1 else rho == pytest.approx(0.75, abs=0.005)
