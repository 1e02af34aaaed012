"""The displacement route: the Hessian from gradient differences, its symmetry rebuild, and
``--route auto``'s choice between it and the analytic-Hessian routes.

* Symmetry rebuild (contract: the transformation law of a polar-vector field, g(D(R)x) =
  D(R) g(x), J. F. Nye, *Physical Properties of Crystals*, Oxford 1985, ch. 1; common
  practice): for the gradient of any rotation- and permutation-invariant energy, the Hessian
  rebuilt from the symmetry-unique displacements equals the full 6N central differences.  A
  pairwise model energy (invented; only its invariance matters) costs microseconds.
* Quantum chemistry: the route against PySCF's analytic Hessian with the field route's
  ∂α/∂x (the tolerances of issue 16: 1 % activity, 0.01 ρ, 0.5 cm⁻¹).
* Cost model: given timings, ``auto`` takes the displacement route on many workers and the
  Hessian routes when serial (the contract of :mod:`vibrapol.engine.autoroute`).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine.autoroute import (
    HESSIAN_RATIO,
    choose_family,
    estimated_hessian_seconds,
    normal_mode_tasks,
)
from vibrapol.engine.displacements import cartesian_plan
from vibrapol.engine.disproute import DisplacementRoutePlan, hessian_from_gradients
from vibrapol.engine.evaluate import ReferenceResult
from vibrapol.engine.routes import build_plan, grid_operations, normalize_route, task_seconds
from vibrapol.engine.symdisplace import symmetric_cartesian_plan
from vibrapol.symmetry import find_point_group, symmetrize_coordinates
from vibrapol.units import BOHR_ANG

STEP_ANG = 1e-4


def _model_gradient(z: np.ndarray, x_ang: np.ndarray) -> np.ndarray:
    """dE/dx (per bohr) of an invented invariant pair energy Σ c_ij exp(−d) (1 + d²)."""
    x = np.asarray(x_ang) / BOHR_ANG
    g = np.zeros_like(x)
    for i in range(len(x)):
        for j in range(i + 1, len(x)):
            r = x[j] - x[i]
            d = np.linalg.norm(r)
            c = z[i] + 0.7 * z[j] + 0.1 * z[i] * z[j]
            dedd = c * np.exp(-d) * (2 * d - 1 - d * d)
            g[j] += dedd * r / d
            g[i] -= dedd * r / d
    return g


def _hessians(name: str, grid_subgroup: bool = False):  # noqa: ANN202
    atoms = molecule(name)
    z = atoms.numbers
    group = find_point_group(z, atoms.positions, atoms.get_masses())
    x = symmetrize_coordinates(atoms.positions, group)
    full = DisplacementRoutePlan(cartesian_plan(x, STEP_ANG))
    h_full, _ = hessian_from_gradients(
        full, np.array([_model_gradient(z, c) for c in full.coordinates_ang])
    )
    ops, perms = group.operations, group.permutations
    if grid_subgroup:
        ops, perms = grid_operations(ops, perms)
    reduced = DisplacementRoutePlan(
        symmetric_cartesian_plan(x, STEP_ANG, ops, perms, group.centre_ang, group.axes)
    )
    h_red, _ = hessian_from_gradients(
        reduced, np.array([_model_gradient(z, c) for c in reduced.coordinates_ang])
    )
    return full, reduced, h_full, h_red


@pytest.mark.parametrize("name", ["H2O", "NH3", "C3H4_C3v", "CH4", "C2H6", "BF3", "C6H6", "CH3OH"])
def test_symmetry_reduced_hessian_equals_the_full_one(name):
    full, reduced, h_full, h_red = _hessians(name)
    assert reduced.n_tasks < full.n_tasks
    # Both are central differences at h = 1e-4 Å: they differ at O(h²) ≈ 1e-8 relative.
    assert np.abs(h_red - h_full).max() < 1e-6 * np.abs(h_full).max()


@pytest.mark.parametrize("name", ["NH3", "C6H6"])
def test_grid_preserving_subgroup_rebuilds_the_hessian_too(name):
    _, _, h_full, h_red = _hessians(name, grid_subgroup=True)
    assert np.abs(h_red - h_full).max() < 1e-6 * np.abs(h_full).max()


def test_hessian_is_symmetrized_and_translation_invariant():
    # Contract: H = (H + Hᵀ)/2 is returned.
    _, _, h_full, _ = _hessians("CH3OH")
    np.testing.assert_array_equal(h_full, h_full.T)
    # Translation invariance of the energy (common practice): each row sums to 0 per axis.
    n = h_full.shape[0] // 3
    sums = h_full.reshape(3 * n, n, 3).sum(axis=1)
    assert np.abs(sums).max() < 1e-6 * np.abs(h_full).max()


def test_route_name_is_accepted():
    assert normalize_route("displacement") == "displacement"


# --- the cost model of --route auto ----------------------------------------------------------


def _ref(scf: float, alpha: float, gradient: float, nao: int = 54) -> ReferenceResult:
    return ReferenceResult(
        energy_hartree=0.0,
        hessian_hartree_bohr2=None,
        alpha_ang3=np.eye(3),
        density=np.eye(nao),
        gradient_hartree_bohr=np.zeros((3, 3)),
        seconds_scf=scf,
        seconds_alpha=alpha,
        seconds_gradient=gradient,
    )


def _plans(name: str) -> tuple[dict, np.ndarray]:
    x = molecule(name).positions
    plans = {
        r: build_plan(r, x, None, np.ones(len(x)), 0.005, 0.001, None)
        for r in ("cartesian", "field", "displacement")
    }
    return plans, x


def test_auto_takes_the_displacement_route_on_many_workers_and_the_hessian_when_serial():
    # Given timings (s) of the reference stage; ethanol (9 atoms) without symmetry:
    # displacement 54 tasks, Cartesian 54, field 12, normal-mode 42.
    plans, x = _plans("CH3CH2OH")
    ref = _ref(scf=2.0, alpha=1.0, gradient=1.0)
    t_hess = estimated_hessian_seconds(ref, is_hf=True)
    a, p = HESSIAN_RATIO["hf"]
    assert t_hess == pytest.approx(a * 54**p * 4.0)  # 54 basis functions (ethanol, 6-31G*)
    serial = choose_family(plans, normal_mode_tasks(x), ref, True, workers=1)
    assert serial.hessian
    assert serial.estimates_s["displacement"] == pytest.approx(
        54 * task_seconds("displacement", ref)
    )
    assert serial.estimates_s["field"] == pytest.approx(t_hess + 12 * task_seconds("field", ref))
    many = choose_family(plans, normal_mode_tasks(x), ref, True, workers=64)
    assert not many.hessian
    assert many.estimates_s["displacement"] == pytest.approx(task_seconds("displacement", ref))
    assert "ceil(tasks/W)" in many.reason and "64 worker" in many.reason
    # ceil(n/W): 54 tasks on 16 workers take 4 rounds.
    mid = choose_family(plans, normal_mode_tasks(x), ref, True, workers=16)
    assert mid.estimates_s["displacement"] == pytest.approx(
        math.ceil(54 / 16) * task_seconds("displacement", ref)
    )


def test_a_hessian_already_computed_costs_nothing():
    plans, x = _plans("CH3CH2OH")
    ref = _ref(2.0, 1.0, 1.0)
    have = ReferenceResult(**{**ref.__dict__, "hessian_hartree_bohr2": np.eye(27)})
    choice = choose_family(plans, normal_mode_tasks(x), have, True, workers=64)
    assert choice.hessian and choice.estimates_s["hessian"] == 0.0
    assert "already computed" in choice.reason


def test_normal_mode_task_count():
    assert normal_mode_tasks(molecule("H2O").positions) == 6
    assert normal_mode_tasks(molecule("CO2").positions) == 8


# --- quantum chemistry -----------------------------------------------------------------------


@pytest.mark.parametrize("name", ["H2O", "NH3"])
def test_displacement_route_agrees_with_analytic_hessian_and_field_route(name):
    # Reference: PySCF's analytic Hessian with the field route's ∂α/∂x (and its ∂μ/∂x), HF/
    # STO-3G.  Tolerances of issue 16: activities 1 %, ρ 0.01, frequencies 0.5 cm⁻¹.
    from vibrapol.engine import compute_modes
    from vibrapol.ramantable import raman_table

    ref = compute_modes(molecule(name), "hf", "sto-3g", route="field")
    disp = compute_modes(molecule(name), "hf", "sto-3g", route="displacement")
    t_ref, t = raman_table(ref), raman_table(disp)
    np.testing.assert_allclose(t.freqs_cm1, t_ref.freqs_cm1, atol=0.5)
    np.testing.assert_allclose(t.activity, t_ref.activity, rtol=0.01)
    np.testing.assert_allclose(t.rho_linear, t_ref.rho_linear, atol=0.01)
    np.testing.assert_allclose(disp.ir_intensity_km_mol, ref.ir_intensity_km_mol, rtol=0.01)
    notes = " ".join(disp.provenance.notes)
    assert "route displacement" in notes
    assert "Hessian by central differences of analytic gradients" in notes
    assert "(H + H^T)/2" in notes and "analytic Hessian;" not in notes


def test_auto_skips_the_analytic_hessian_on_many_workers(monkeypatch):
    # Contract: the Hessian stage runs only for the Hessian routes.  With given model factors
    # (T_hessian = 1 × n × the reference times, n = 7 basis functions for water STO-3G, no
    # symmetry) the choice does not depend on the measured times: on 64 workers the
    # displacement route takes one round (P) against ≥ 7P; serially it takes 18 rounds
    # against ≤ 7P + 6 normal-mode tasks.
    from vibrapol.engine import autoroute
    from vibrapol.engine.prepare import Molecule, plan_route
    from vibrapol.engine.settings import EngineSettings
    from vibrapol.engine.stages import ScfJob
    from vibrapol.modeset import default_masses

    monkeypatch.setitem(autoroute.HESSIAN_RATIO, "hf", (1.0, 1.0))
    atoms = molecule("H2O")
    z, x, m = atoms.numbers, atoms.positions, default_masses(atoms.numbers)
    settings = EngineSettings(
        method="hf", basis="sto-3g", route="auto", optimize=False, symmetry=False
    )
    reference = ScfJob(z, x, settings.spec).run().reference
    many = Molecule("water", z, x, m, True, None, reference=reference)
    assert plan_route(many, settings, workers=64)  # planned at once, before any Hessian
    assert many.choice is not None and many.choice.route == "displacement"
    assert not many.needs_hessian and many.harmonic is None
    assert "displacement is faster" in many.choice.reason
    serial = Molecule("water", z, x, m, True, None, reference=reference)
    plan_route(serial, settings, workers=1)
    assert serial.needs_hessian and serial.family is not None and serial.family.hessian
    assert "the Hessian routes are not slower" in serial.family.reason


def test_displacement_route_resumes_from_its_checkpoint(tmp_path):
    # Contract (checkpoint): a second run finds the reference stage and every task stored and
    # computes nothing; the route's results are the same bytes.
    from vibrapol.engine.compute import run_engine

    ck = tmp_path / "w.checkpoint.sqlite"
    opts = {"route": "displacement", "optimize": False, "checkpoint": ck, "progress": False}
    first = run_engine(molecule("H2O"), "hf", "sto-3g", **opts)
    again = run_engine(molecule("H2O"), "hf", "sto-3g", **opts)
    assert first.route == again.route == "displacement"
    assert again.reused_reference and again.tasks.n_computed == 0
    assert again.tasks.n_reused == first.tasks.n_tasks == 9
    assert first.seconds_hessian == 0.0  # no analytic Hessian ran
    np.testing.assert_array_equal(again.modes.freqs_cm1, first.modes.freqs_cm1)


@pytest.mark.slow
def test_displacement_route_with_dft_agrees_with_analytic_hessian_and_field_route():
    # B3LYP/3-21G water: the tasks' gradients include the grid response, PySCF's analytic
    # Hessian does not; measured here 0.32 cm⁻¹ apart, within the 0.5 cm⁻¹.
    from vibrapol.engine import compute_modes
    from vibrapol.ramantable import raman_table

    ref = compute_modes(molecule("H2O"), "b3lyp", "3-21g", route="field")
    disp = compute_modes(molecule("H2O"), "b3lyp", "3-21g", route="displacement")
    t_ref, t = raman_table(ref), raman_table(disp)
    np.testing.assert_allclose(t.freqs_cm1, t_ref.freqs_cm1, atol=0.5)
    np.testing.assert_allclose(t.activity, t_ref.activity, rtol=0.01)
    np.testing.assert_allclose(t.rho_linear, t_ref.rho_linear, atol=0.01)


def test_displacement_route_for_an_open_shell_agrees_with_the_field_route():
    # CH3 doublet, UHF/STO-3G, planar D3h start (not optimised): the displacement route's
    # gradient-difference Hessian and CPHF alpha against the analytic UHF Hessian + field
    # route.  Measured here: 0.25 cm⁻¹, activities 4e-5 relative; the tolerances
    # (0.5 cm⁻¹, 1 %, 0.01 in rho) are asserted.
    from ase import Atoms

    from vibrapol.engine import compute_modes
    from vibrapol.ramantable import raman_table

    ch3 = Atoms("CH3", positions=[(0, 0, 0), (1.08, 0, 0), (-0.54, 0.935, 0), (-0.54, -0.935, 0)])
    kw = {"multiplicity": 2, "optimize": False}
    ref = raman_table(compute_modes(ch3, "hf", "sto-3g", route="field", **kw))
    disp = raman_table(compute_modes(ch3, "hf", "sto-3g", route="displacement", **kw))
    np.testing.assert_allclose(disp.freqs_cm1, ref.freqs_cm1, atol=0.5)
    seen = ref.activity > 1e-3 * ref.activity.max()
    np.testing.assert_allclose(disp.activity[seen], ref.activity[seen], rtol=0.01)
    np.testing.assert_allclose(disp.rho_linear[seen], ref.rho_linear[seen], atol=0.01)


def _water_before_hessian(settings):  # noqa: ANN001, ANN202
    from vibrapol.engine.prepare import Molecule
    from vibrapol.engine.stages import ScfJob
    from vibrapol.modeset import default_masses

    atoms = molecule("H2O")
    z, x, m = atoms.numbers, atoms.positions, default_masses(atoms.numbers)
    scf = ScfJob(z, x, settings.spec).run()
    return Molecule("water", z, x, m, True, None, reference=scf.reference), scf


def test_auto_lists_its_tasks_before_the_hessian_unless_normal_modes_could_win(monkeypatch):
    # Contract: ``auto`` lists its derivative tasks right after the reference SCF (so they run
    # beside the Hessian) and makes there the choice it would make after the Hessian; it waits
    # for the modes only when the normal-mode route is its cheapest.  (Before, it always
    # waited.)
    from vibrapol.engine import routes
    from vibrapol.engine.autoroute import pick_route
    from vibrapol.engine.prepare import ROUTES_WITHOUT_MODES, plan_route
    from vibrapol.engine.settings import EngineSettings
    from vibrapol.engine.stages import HessianJob, with_hessian

    settings = EngineSettings(method="hf", basis="sto-3g", route="auto", optimize=False)
    m, scf = _water_before_hessian(settings)
    assert plan_route(m, settings, workers=1)
    assert m.harmonic is None and m.needs_hessian
    assert m.choice is not None and m.choice.route in ROUTES_WITHOUT_MODES
    assert "listed before the Hessian and run beside it" in m.choice.reason
    # after the Hessian, with the normal-mode route planned as well, the choice is the same
    hessian = HessianJob.after(scf, m.atomic_numbers, m.coordinates_ang, settings.spec).run()
    m.add_hessian(with_hessian(m.reference, hessian, 1.0))
    assert m.harmonic is not None and m.family is not None
    after, _ = pick_route(
        settings, m.family, m.coordinates_ang, m.masses_da, None, m.harmonic.modes,
        m.reference, 1, m.atomic_numbers,
    )  # fmt: skip
    assert after.route == m.choice.route

    # Every route but the normal-mode one made dear (no symmetry: 18 Cartesian tasks against
    # 6 normal-mode ones of the same price): now auto waits for the modes.
    monkeypatch.setattr(routes, "FIELD_TASK_FACTOR", 1e6)
    monkeypatch.setattr(routes, "ANALYTIC_TO_HESSIAN", 1e6)
    plain = EngineSettings(
        method="hf", basis="sto-3g", route="auto", optimize=False, symmetry=False
    )
    waiting, _ = _water_before_hessian(plain)
    assert not plan_route(waiting, plain, workers=1)
    assert waiting.family is not None and waiting.family.hessian and waiting.choice is None
