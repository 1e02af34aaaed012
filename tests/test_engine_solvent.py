"""Implicit solvent (IEF-PCM): constants, the non-equilibrium α, route rules, provenance."""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.engine.fieldgrad import dipole_integrals
from vibrapol.engine.polarizability import cphf_polarizability
from vibrapol.engine.scf import EngineInputError, MethodSpec, build_molecule, run_scf
from vibrapol.engine.settings import EngineSettings
from vibrapol.engine.solvent import PCM_METHOD, optical_solvent, solvent_model

WATER_Z = np.array([8, 1, 1])
WATER_ANG = np.array([[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]])


def test_named_solvent_constants_come_from_the_database():
    # Source: the Minnesota Solvent Descriptor Database as shipped in PySCF; the two numbers
    # below are the database's water entry (epsilon 78.355, n25 1.3323), read independently.
    from pyscf.solvent.smd import solvent_db

    water = solvent_model("water")
    assert water.epsilon == solvent_db["water"][5] == 78.355
    assert water.epsilon_optical == pytest.approx(1.3323**2)
    # Fact of the trade (common practice): ε∞ = n² lies between 1 and 3 for these liquids;
    # polar ones have ε ≫ ε∞, non-polar ones ε ≈ ε∞ (within 5 %, CS2's n² even exceeds ε).
    for name in ("water", "dmso", "acetonitrile"):
        m = solvent_model(name)
        assert 1.0 < m.epsilon_optical < 3.0 and m.epsilon > 10 * m.epsilon_optical
    for name in ("ccl4", "cs2", "cyclohexane", "benzene"):
        m = solvent_model(name)
        assert 1.0 < m.epsilon_optical < 3.0
        assert m.epsilon == pytest.approx(m.epsilon_optical, rel=0.05)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"name": "unobtainium"}, "unknown solvent 'unobtainium'"),
        ({"name": " "}, "--solvent is empty"),
        ({"epsilon": 30.0}, "go together"),
        ({"epsilon_optical": 1.8}, "go together"),
        ({"name": "water", "epsilon": 30.0}, "not both"),
        ({"epsilon": 0.5, "epsilon_optical": 0.4}, "above 1"),
        ({"epsilon": 5.0, "epsilon_optical": 0.7}, "between 1 and 100"),
    ],
)
def test_bad_solvent_options_are_refused(kwargs, match):
    # Contract: one clear EngineInputError (CLI exit 2) naming the option.
    with pytest.raises(EngineInputError, match=match):
        solvent_model(**kwargs)


def test_field_route_is_refused_in_a_solvent():
    # Contract: the field route's static fields would polarize the whole solvent, so it is
    # refused with one line, while the displacement routes are accepted.
    with pytest.raises(EngineInputError, match="field route cannot run with a solvent"):
        EngineSettings("hf", "sto-3g", route="field", solvent="water")
    assert EngineSettings("hf", "sto-3g", route="cartesian", solvent="water").spec.solvent


def _slow_potential(mf):
    """Fock contribution of the slow (orientational) charges at the zero-field ground state."""
    dm0 = mf.make_rdm1()
    _, v_static = mf.with_solvent._get_vind(dm0)
    _, v_fast = optical_solvent(mf)._get_vind(dm0)
    return v_static - v_fast


def _nonequilibrium_energy(mol, eps_optical, hcore, v_slow, field_vec, dip, dm0):
    """E(F) with the slow charges frozen and the fast ones self-consistent with ε∞."""
    from pyscf import scf

    mf = scf.RHF(mol).PCM()
    mf.with_solvent.method = PCM_METHOD
    mf.with_solvent.eps = eps_optical
    mf.verbose = mf.with_solvent.verbose = 0
    mf.conv_tol, mf.conv_tol_grad = 1e-12, 1e-9
    h = hcore + v_slow + np.einsum("a,apq->pq", field_vec, dip)
    mf.get_hcore = lambda *args: h
    mf.kernel(dm0=dm0)
    assert mf.converged
    nuclear = -float(field_vec @ (mol.atom_charges() @ mol.atom_coords()))
    return mf.e_tot + nuclear, mf.make_rdm1()


def test_solvated_alpha_matches_finite_field_of_the_nonequilibrium_energy():
    # Check named "non-equilibrium finite field": the same continuum model written as an
    # energy, E(F) = E_gas(ρ; F) + tr(V_slow ρ) + ½ q_fast(ρ)·V(ρ), with the slow charges
    # (ε minus ε∞ part) frozen at the zero-field ground state and the fast charges solved
    # self-consistently with ε∞ by PySCF's own PCM; α_aa = −∂²E/∂F_a² by central second
    # differences (F = 0.002 au, truncation O(F²) ≈ 1e-5 relative) must equal the CPHF α.
    spec = MethodSpec("hf", "sto-3g", solvent=solvent_model("water"))
    mol = build_molecule(WATER_Z, WATER_ANG, spec)
    mf = run_scf(mol, spec)
    alpha = cphf_polarizability(mf)
    v_slow = _slow_potential(mf)
    dip = dipole_integrals(mol)
    hcore = mf.get_hcore()
    dm0 = mf.make_rdm1()
    eps_opt = spec.solvent.epsilon_optical
    e0, dm_zero = _nonequilibrium_energy(mol, eps_opt, hcore, v_slow, np.zeros(3), dip, dm0)
    # At zero field the split model reproduces the equilibrium ground state (same density).
    assert np.abs(dm_zero - dm0).max() < 1e-6
    f = 0.002
    diag = []
    for a in range(3):
        e = [
            _nonequilibrium_energy(mol, eps_opt, hcore, v_slow, s * f * np.eye(3)[a], dip, dm0)[0]
            for s in (1.0, -1.0)
        ]
        diag.append(-(e[0] - 2.0 * e0 + e[1]) / f**2)
    np.testing.assert_allclose(np.diag(alpha), diag, rtol=2e-4)
    # The check can fail: the gas-phase α and the equilibrium (static-ε) α differ by far more.
    gas_spec = MethodSpec("hf", "sto-3g")
    gas = cphf_polarizability(run_scf(build_molecule(WATER_Z, WATER_ANG, gas_spec), gas_spec))
    assert np.abs(np.diag(alpha) - np.diag(gas)).max() > 50 * 2e-4 * np.abs(diag).max()


def test_solvent_reaches_the_method_line_of_tables_and_figures():
    # Contract: the level of theory printed in table headers and spectrum conditions names
    # the solvent recorded by the engine, and stays "method/basis" without one.
    from vibrapol.engine.solvent import solvent_note
    from vibrapol.modeset import Provenance

    note = solvent_note(solvent_model("water"))
    solvated = Provenance(method="HF", basis="6-31g*", notes=(note,))
    assert solvated.level_of_theory() == "HF/6-31g* in water (IEF-PCM, ε 78.355, ε∞ 1.7750)"
    assert Provenance(method="HF", basis="6-31g*").level_of_theory() == "HF/6-31g*"


@pytest.mark.slow
def test_solvated_run_end_to_end_records_the_model():
    # Contract: compute_modes in a solvent with route auto never takes the field route,
    # records the model in the provenance, and its modes differ from the vacuum ones.
    from vibrapol.engine.compute import run_engine

    run = run_engine(
        (WATER_Z, WATER_ANG), "hf", "sto-3g", solvent="water", optimize=False, route="auto"
    )
    assert run.route != "field"
    notes = " | ".join(run.modes.provenance.notes)
    assert "solvent: water (IEF-PCM" in notes and "field route not considered" in notes
    gas = run_engine((WATER_Z, WATER_ANG), "hf", "sto-3g", optimize=False, route=run.route)
    assert np.abs(run.modes.freqs_cm1[-3:] - gas.modes.freqs_cm1[-3:]).max() > 1.0


def test_auto_chooses_without_the_field_route():
    # Contract (bug: auto in a solvent failed with KeyError 'field' while writing its reason):
    # auto prices only the routes it is given, and with a solvent the field route is not one.
    from vibrapol.engine.displacements import cartesian_plan, normal_mode_plan
    from vibrapol.engine.evaluate import ReferenceResult
    from vibrapol.engine.routes import choose_route
    from vibrapol.engine.solvent import allowed_routes

    wanted = allowed_routes(("cartesian", "normal-mode", "field"), solvent_model("water"))
    assert wanted == ("cartesian", "normal-mode")
    plans = {
        "cartesian": cartesian_plan(WATER_ANG, 0.005),
        "normal-mode": normal_mode_plan(WATER_ANG, np.eye(9)[:3], np.ones(3), 0.005),
    }
    zeros = np.zeros((9, 9))
    ref = ReferenceResult(0.0, zeros, np.eye(3), np.eye(2), np.zeros((3, 3)), 1.0, 1.0, 1.0, 1.0)
    choice, _ = choose_route("auto", plans, ref)
    assert choice.route == "normal-mode"  # 6 tasks against 18
    assert "field" not in choice.reason
