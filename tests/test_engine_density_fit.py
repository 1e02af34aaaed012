"""Cheaper field tasks and density fitting, against independent checks.

Outside references: PySCF's converged SCF in a field (the CPHF density response predicts its
density), PySCF's exact-integral engine run (density fitting must stay within the accuracy
the documentation states), and finite differences of PySCF's density-fitted gradient (the
density-fitted Hessian belongs to the same fitted model).  Contract tests say which contract
they check.
"""

from __future__ import annotations

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine import stages
from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.compute import run_engine
from vibrapol.engine.evaluate import FieldGradientJob
from vibrapol.engine.fieldgrad import field_gradient, field_scf, field_start_density, tighten_scf
from vibrapol.engine.fieldplan import field_plan
from vibrapol.engine.hessian import analytic_hessian
from vibrapol.engine.polarizability import cphf_polarizability_response
from vibrapol.engine.routes import make_jobs
from vibrapol.engine.scf import EngineInputError, MethodSpec, build_molecule, run_scf
from vibrapol.engine.settings import EngineSettings
from vibrapol.ramantable import raman_table

HF_STO = MethodSpec("hf", "sto-3g")
# Water off its symmetric geometry (Cs only), as in tests/test_engine_fast.py.
WATER_CS = (
    np.array([8, 1, 1]),
    np.array([[0.02, -0.01, 0.12], [0.05, 0.77, -0.45], [-0.03, -0.74, -0.49]]),
)


@pytest.fixture(scope="module")
def water_reference():
    z, x = WATER_CS
    mol = build_molecule(z, x, HF_STO)
    mf = tighten_scf(run_scf(mol, HF_STO), HF_STO)
    _, response = cphf_polarizability_response(mf)
    return mol, np.asarray(mf.make_rdm1()), response


def test_density_response_predicts_the_density_in_a_field(water_reference):
    # Reference: PySCF's SCF converged in the field (+F·r in the core Hamiltonian).  The
    # first-order prediction leaves O(F²) ≈ 1e-6; the opposite sign would leave 2|F·∂D/∂F|.
    mol, d0, response = water_reference
    field = np.array([0.001, -0.0005, 0.0008])
    exact = np.asarray(field_scf(mol, HF_STO, field, dm0=d0).make_rdm1())
    first_order = np.einsum("a,apq->pq", field, response)
    assert np.abs(exact - d0 - first_order).max() < 1e-5
    assert np.abs(exact - d0 - first_order).max() < 0.02 * np.abs(first_order).max()
    assert np.abs(exact - d0 + first_order).max() > 1.5 * np.abs(first_order).max()


def test_extrapolated_start_gives_the_same_field_gradient(water_reference):
    # Contract: the start density changes only how the SCF gets there.  Tolerance 1e-9
    # hartree/bohr, the field route's SCF noise (measured ≤ 3e-10 for water and benzene,
    # docs/engine-routes.md).
    mol, d0, response = water_reference
    for field in field_plan(0.001, n_atoms=3).task_fields_au[:4]:
        plain = field_gradient(field_scf(mol, HF_STO, field, dm0=d0), field)
        start = field_start_density(d0, response, field)
        extrapolated = field_gradient(field_scf(mol, HF_STO, field, dm0=start), field)
        assert np.abs(extrapolated - plain).max() < 1e-9


def test_reference_stores_the_response_and_field_jobs_start_from_it(tmp_path):
    # Contract: the checkpointed reference gives back ∂D/∂F, and each field task starts from
    # D + Σ F ∂D/∂F; a reference stored without it (older checkpoints) still loads, and its
    # field tasks start from D.
    z, x = WATER_CS
    job = stages.ScfJob(z, x, HF_STO)
    with CheckpointStore(tmp_path / "c.sqlite") as store:
        ref = job.run().reference
        store.put(job.key(), job.kind, job.label, job.pack(job.run()), 0.0)
        stored = job.unpack(store.get(job.key()))
    assert stored is not None
    again = stored.reference
    assert ref.density_response is not None and ref.density_response.shape == (3, 7, 7)
    np.testing.assert_array_equal(again.density_response, ref.density_response)
    plan = field_plan(0.001, n_atoms=3)
    jobs, _, _ = make_jobs(plan, z, x, HF_STO, again)
    for job, f in zip(jobs, plan.task_fields_au, strict=True):
        assert isinstance(job, FieldGradientJob)
        expected = ref.density + np.einsum("a,apq->pq", f, ref.density_response)
        np.testing.assert_allclose(job.dm0, expected, rtol=0, atol=1e-15)
    old = stages.ReferenceResult(
        ref.energy_hartree, ref.hessian_hartree_bohr2, ref.alpha_ang3, ref.density,
        ref.gradient_hartree_bohr,
    )  # fmt: skip
    jobs, _, _ = make_jobs(plan, z, x, HF_STO, old)
    assert all(job.dm0 is ref.density for job in jobs)


def test_density_fitted_hessian_is_the_derivative_of_the_fitted_gradient():
    # Reference: central differences (h = 1e-4 bohr) of PySCF's density-fitted analytic
    # gradient, SCFs converged to the field route's tolerance.  Measured: 2.0e-6 (the same as
    # the exact Hessian against exact gradients); the exact-integral Hessian differs from the
    # fitted gradients by 3.4e-5.
    z, x = WATER_CS
    spec = MethodSpec("hf", "3-21g", density_fit=True)
    mol = build_molecule(z, x, spec)
    mf = tighten_scf(run_scf(mol, spec), spec)
    hessian = analytic_hessian(mf)
    bohr, h = mol.atom_coords(), 1e-4
    numeric = np.zeros((3, 9))  # the oxygen's rows (its moves reach every atom)
    for i in range(3):
        grads = []
        for sign in (1.0, -1.0):
            moved = bohr.copy()
            moved.flat[i] += sign * h
            m = mol.set_geom_(moved, unit="Bohr", inplace=False)
            g = tighten_scf(run_scf(m, spec, dm0=mf.make_rdm1()), spec).nuc_grad_method()
            g.verbose = 0
            grads.append(np.asarray(g.kernel()).ravel())
        numeric[i] = (grads[0] - grads[1]) / (2 * h)
    exact_spec = MethodSpec("hf", "3-21g")
    exact = analytic_hessian(run_scf(build_molecule(z, x, exact_spec), exact_spec))
    hessian, exact = hessian[:3], exact[:3]
    assert np.abs(hessian - numeric).max() < 5e-6
    assert np.abs(exact - numeric).max() > 5 * np.abs(hessian - numeric).max()


@pytest.fixture(scope="module")
def water_df_runs():
    water = molecule("H2O")
    options = {"route": "field", "workers": 1}
    runs = {
        "exact": run_engine(water, "hf", "3-21g", **options),
        "df": run_engine(water, "hf", "3-21g", density_fit=True, **options),
    }
    fitted = runs["df"].modes
    runs["df-cartesian"] = run_engine(
        (fitted.atomic_numbers, fitted.coordinates_ang),
        "hf",
        "3-21g",
        density_fit=True,
        route="cartesian",
        optimize=False,
        workers=1,
    )
    return runs


def test_density_fitted_run_agrees_with_exact_integrals_within_the_stated_accuracy(water_df_runs):
    # Reference: the exact-integral run (HF/3-21G water, each optimised with its own
    # integrals).  Stated accuracy (docs/engine-routes.md, measured on water, benzene and
    # ethanol): |Δν| ≤ 1 cm⁻¹, activities ≤ 1 % (bands above 1 % of the strongest; all of
    # water's are), |Δρ| ≤ 0.005.
    exact = raman_table(water_df_runs["exact"].modes)
    fitted = raman_table(water_df_runs["df"].modes)
    assert np.abs(fitted.freqs_cm1 - exact.freqs_cm1).max() < 1.0
    assert np.abs(fitted.activity / exact.activity - 1.0).max() < 1e-2
    assert np.abs(fitted.rho_linear - exact.rho_linear).max() < 5e-3
    # …and it is a different model, not the exact one run again.
    assert np.abs(fitted.freqs_cm1 - exact.freqs_cm1).max() > 1e-3


def test_density_fitted_field_route_matches_the_fitted_cartesian_route(water_df_runs):
    # Contract: every stage uses the same fitted Hamiltonian, so the two routes agree as they
    # do with exact integrals (tests/test_engine_fast.py: 1e-3 activity, 1e-3 ρ).  A field
    # route mixing a fitted reference gradient with exact field gradients would divide the
    # model difference (≈ 1e-6 hartree/bohr) by F² and be off by order one.
    field = raman_table(water_df_runs["df"].modes)
    cart = raman_table(water_df_runs["df-cartesian"].modes)
    np.testing.assert_allclose(field.freqs_cm1, cart.freqs_cm1, atol=1e-6)
    assert np.abs(field.activity / cart.activity - 1.0).max() < 1e-3
    assert np.abs(field.rho_linear - cart.rho_linear).max() < 1e-3


def test_provenance_records_density_fitting(water_df_runs):
    notes = " ".join(water_df_runs["df"].modes.provenance.notes)
    # PySCF's choice for 3-21G (pyscf.df.addons.make_auxbasis).
    assert "density fitting" in notes and "def2-svp-jkfit" in notes
    assert "density fitting" not in " ".join(water_df_runs["exact"].modes.provenance.notes)


def test_checkpoint_keys_differ_with_density_fitting():
    # Contract: a checkpoint never hands an exact result to a fitted run or back; exact runs
    # keep the keys they had before the option existed.
    z, x = WATER_CS
    exact = task_key("reference", z, x, MethodSpec("hf", "sto-3g"))
    fitted = task_key("reference", z, x, MethodSpec("hf", "sto-3g", density_fit=True))
    universal = MethodSpec("hf", "sto-3g", density_fit=True, auxbasis="def2-universal-jkfit")
    assert len({exact, fitted, task_key("reference", z, x, universal)}) == 3


def test_auxbasis_without_density_fitting_or_unknown_is_one_line():
    with pytest.raises(EngineInputError, match="needs density fitting"):
        EngineSettings(auxbasis="def2-universal-jkfit")
    spec = MethodSpec("hf", "sto-3g", density_fit=True, auxbasis="no-such-fit")
    with pytest.raises(EngineInputError, match="--auxbasis 'no-such-fit'"):
        build_molecule(*WATER_CS, spec)


def test_scaled_diis_extrapolates_as_pyscf_where_pyscf_keeps_every_direction():
    # Contract: dividing the error block of the DIIS matrix by a constant leaves the
    # coefficients unchanged; with error vectors of ordinary size (no eigenvalue under PySCF's
    # 1e-14 cut) both classes give the same extrapolated Fock matrix.  Reference: PySCF's CDIIS.
    from pyscf.lib.diis import DIIS
    from pyscf.scf.diis import CDIIS

    from vibrapol.engine.fieldgrad import scaled_cdiis_class

    rng = np.random.default_rng(16)
    plain, scaled = CDIIS(), scaled_cdiis_class()()
    for _ in range(5):  # the generic update (vector and its error), which calls extrapolate
        x, e = rng.normal(size=20), 1e-2 * rng.normal(size=20)
        a, b = DIIS.update(plain, x, xerr=e), DIIS.update(scaled, x, xerr=e)
    np.testing.assert_allclose(b, a, rtol=1e-10, atol=1e-12)
    assert np.abs(b - x).max() > 1e-3  # an extrapolation, not the last vector


def test_field_scf_reaches_the_tight_tolerance_without_wandering(water_reference):
    # Bug: with PySCF's DIIS the field SCFs reached an orbital gradient of 3e-9 and then
    # wandered for ten or more cycles before crossing 1e-9 (water HF/6-31G*: 21–22 cycles).
    # With the scale-invariant DIIS the same SCF from the extrapolated start takes 6–7
    # (measured; docs/engine-routes.md).  Here HF/STO-3G: at most 10 cycles, gradient as
    # PySCF's DIIS gives it within 1e-9 hartree/bohr.
    from pyscf.scf.diis import CDIIS

    from vibrapol.engine import fieldgrad

    mol, d0, response = water_reference
    field = np.array([0.0007, 0.0007, 0.0])
    start = field_start_density(d0, response, field)
    fast = field_scf(mol, HF_STO, field, dm0=start)
    assert fast.converged and fast.cycles <= 10
    original = fieldgrad.scaled_cdiis_class
    try:
        fieldgrad.scaled_cdiis_class = lambda: CDIIS
        slow = field_scf(mol, HF_STO, field, dm0=start)
    finally:
        fieldgrad.scaled_cdiis_class = original
    assert np.abs(field_gradient(fast, field) - field_gradient(slow, field)).max() < 1e-9


def test_provenance_notes_name_the_dft_grid_and_the_fit():
    # Contract: every integral choice of a run is written in its provenance; level 3 is
    # PySCF's default grids.level (pyscf.dft.gen_grid.Grids).
    from vibrapol.engine.scf import integral_notes

    z, x = WATER_CS
    b3lyp = MethodSpec("b3lyp", "sto-3g", density_fit=True, auxbasis="def2-universal-jkfit")
    notes = integral_notes(build_molecule(z, x, b3lyp), b3lyp)
    assert any("grids.level 3" in n for n in notes)
    assert any("def2-universal-jkfit" in n and "1 % in the activities" in n for n in notes)
    assert integral_notes(build_molecule(z, x, HF_STO), HF_STO) == []
