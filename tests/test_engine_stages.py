"""Every stage of every molecule is a job on the one backend (engine.batch, engine.stages).

Contracts checked: a batch whose optimisations, reference SCFs, Hessians and derivative tasks
all run on a Dask LocalCluster gives the same ModeSets as serial runs of each molecule alone;
a run stopped during the Hessian stage resumes without redoing the optimisation or the SCF
(each stage is stored as it finishes); the Hessian of the separate stage equals PySCF's
Hessian of the SCF object itself (PySCF is the reference); a lone job gets every core, many
jobs one thread each; progress shows each stage of each molecule; after an optimisation the
reference stage computes no zero-field gradient and the field route computes it as a task,
with the same ∂α/∂x within the route's own error.  Molecules: water and ammonia, HF/STO-3G
(ASE's geometries, optimised here).
"""

from __future__ import annotations

import dataclasses
import sqlite3
from concurrent.futures import Executor, Future

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine import stages
from vibrapol.engine.compute import BatchItem, engine_settings, run_batch, run_engine
from vibrapol.engine.evaluate import threads_limited
from vibrapol.engine.executors import Backend
from vibrapol.engine.progress import Progress
from vibrapol.engine.runner import TaskRunner

METHOD, BASIS = "hf", "sto-3g"
NAMES = {"water": "H2O", "ammonia": "NH3"}


def _rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


def _same_modes(got, ref):
    # The same calculations in another order, on other threads: equal up to BLAS summation
    # order and the optimiser's last steps (geometry to ~1e-9 Å).
    np.testing.assert_allclose(got.coordinates_ang, ref.coordinates_ang, atol=1e-7)
    np.testing.assert_allclose(got.freqs_cm1, ref.freqs_cm1, atol=1e-4)
    got_d = got.dalpha_dq if got.dalpha_dx is None else got.dalpha_dx
    ref_d = ref.dalpha_dq if ref.dalpha_dx is None else ref.dalpha_dx
    assert _rel(got_d, ref_d) < 1e-6
    assert _rel(got.ir_intensity_km_mol, ref.ir_intensity_km_mol) < 1e-6


def test_batch_with_every_stage_on_dask_equals_serial_runs(capsys):
    distributed = pytest.importorskip("distributed")
    settings = engine_settings(METHOD, BASIS, route="auto")
    items = [BatchItem(molecule(f), name) for name, f in NAMES.items()]
    with distributed.LocalCluster(
        n_workers=1,
        threads_per_worker=2,
        processes=False,
        protocol="tcp",
        host="127.0.0.1",
        dashboard_address=None,
    ) as cluster:
        outcomes = run_batch(items, settings, scheduler=cluster.scheduler_address, progress=True)
        ran = cluster.scheduler.task_prefixes["timed_task"].state_counts["memory"]
    err = capsys.readouterr().err
    assert [o.error for o in outcomes] == [None, None]
    runs = [o.run for o in outcomes]
    # Every job ran on the cluster: per molecule optimisation, SCF, Hessian, its tasks (more
    # only if Dask had to run one again after losing it); the analytic route's one task is
    # computed in the Hessian stage (2n+1), not as a job of its own.
    assert ran >= sum(3 + (0 if r.route == "analytic" else r.tasks.n_tasks) for r in runs)
    for name, run in zip(NAMES, runs, strict=True):
        assert run.backend == "dask" and run.reused_stages == ()
        # auto chooses from measured times (a near tie can go either way): the serial run
        # takes the route the batch chose; one thread, as each Dask job has, so that the
        # optimiser takes the same steps.
        with threads_limited(1):
            alone = run_engine(molecule(NAMES[name]), METHOD, BASIS, route=run.route, workers=1)
        assert run.point_group == alone.point_group
        _same_modes(run.modes, alone.modes)
        # after an optimisation the reference stage computes no gradient (its cost is known)
        for stage in ("optimisation", "reference SCF and polarizability"):
            assert f"vibrapol: {name}: {stage} …" in err
            assert f"vibrapol: {name}: {stage}: done in " in err
        hessian = (
            "analytic Hessian and dalpha/dx" if run.route == "analytic" else "analytic Hessian"
        )
        assert f"vibrapol: {name}: {hessian}: done in " in err
        if run.route == "analytic":
            assert f"vibrapol: {name}: analytic route: dalpha/dx computed with the Hessian" in err
        else:
            assert f"vibrapol: {name}: {run.route} route: {run.tasks.n_tasks} tasks" in err


class _Stop(KeyboardInterrupt):
    """Stands for Ctrl-C or SIGTERM (the command line turns SIGTERM into KeyboardInterrupt)."""


def _kinds(path):
    with sqlite3.connect(path) as con:
        return sorted(k for (k,) in con.execute("SELECT kind FROM results"))


def test_stopped_in_the_hessian_resumes_without_redoing_earlier_stages(tmp_path, monkeypatch):
    path = tmp_path / "w.modes.checkpoint.sqlite"
    water = molecule("H2O")
    whole = run_engine(water, METHOD, BASIS, route="field", workers=1)

    def interrupted(self):
        raise _Stop

    monkeypatch.setattr(stages.HessianJob, "run", interrupted)
    with pytest.raises(_Stop):
        run_engine(water, METHOD, BASIS, route="field", workers=1, checkpoint=path)
    # The optimisation and the SCF were stored when they finished; the field tasks ran
    # after the Hessian on this serial backend and nothing of the Hessian was stored.
    assert _kinds(path) == ["optimize", "reference-scf"]

    def redone(self):
        raise AssertionError(f"{self.label} computed again")

    monkeypatch.undo()
    monkeypatch.setattr(stages.OptimizeJob, "run", redone)
    monkeypatch.setattr(stages.ScfJob, "run", redone)
    resumed = run_engine(water, METHOD, BASIS, route="field", workers=1, checkpoint=path)
    assert resumed.reused_optimization and not resumed.reused_reference
    assert resumed.reused_stages == ("optimisation", "reference SCF")
    # water C2v: 4 fields, and the zero field (after an optimisation the reference stage
    # computes no gradient)
    assert resumed.tasks.n_computed == resumed.tasks.n_tasks == 5
    _same_modes(resumed.modes, whole.modes)
    assert "hessian" in _kinds(path)
    again = run_engine(water, METHOD, BASIS, route="field", workers=1, checkpoint=path)
    assert again.reused_stages == ("optimisation", "reference SCF", "Hessian")
    assert again.reused_reference and again.tasks.n_reused == 5
    assert np.array_equal(again.modes.dalpha_dx, resumed.modes.dalpha_dx)


def test_hessian_stage_equals_pyscf_hessian_of_the_scf_object():
    # The Hessian job rebuilds the SCF object from the orbitals of the SCF stage, in another
    # process; PySCF's own Hessian of the converged object is the reference.
    from vibrapol.engine.fieldgrad import tighten_scf
    from vibrapol.engine.hessian import analytic_hessian
    from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf

    water = molecule("H2O")
    for method in ("hf", "b3lyp"):
        spec = MethodSpec(method, BASIS)
        scf = stages.ScfJob(water.numbers, water.positions, spec).run()
        hessian = stages.HessianJob.after(scf, water.numbers, water.positions, spec).run()
        mf = tighten_scf(run_scf(build_molecule(water.numbers, water.positions, spec), spec), spec)
        np.testing.assert_allclose(hessian, analytic_hessian(mf), atol=1e-7)
        assert scf.reference.energy_hartree == pytest.approx(mf.e_tot, abs=1e-10)


@dataclasses.dataclass(frozen=True)
class _ThreadsJob:
    """A job whose result is the number of threads it was given."""

    threads: int | None = None
    kind = "threads"

    def run(self):
        return self.threads


class _Recorder(Executor):
    """Runs each job at once in this process, like a pool with free workers."""

    def submit(self, fn, /, *args, **kwargs):
        future = Future()
        future.set_result(fn(*args, **kwargs))
        return future


def test_a_lone_job_gets_every_core_and_many_jobs_one_thread_each():
    backend = Backend(_Recorder(), "process pool", 4, 1, cores=4)
    runner = TaskRunner(backend, Progress(False))
    seen: list[int] = []

    def then_three(value, *_):
        seen.append(value)
        for _ in range(3):
            runner.submit(_ThreadsJob(), None, "many", None, lambda v, *_: seen.append(v))

    runner.submit(_ThreadsJob(), None, "alone", None, then_three)
    runner.run()
    # Alone: the 4 cores; three at once (sent in the same round): 4 // 3 = 1 each.
    assert seen == [4, 1, 1, 1]
    dask = TaskRunner(Backend(_Recorder(), "dask", 8, 1), Progress(False))
    dask.submit(_ThreadsJob(), None, "alone", None, lambda v, *_: seen.append(v))
    dask.run()
    assert seen[-1] == 1  # Dask: the cores of a worker's machine are unknown


def test_a_stage_that_fails_stops_its_molecule_only(capsys):
    from vibrapol.engine.scf import EngineConvergenceError

    real = stages.ScfJob.run

    def fails_for_ammonia(self):
        if len(self.atomic_numbers) == 4:
            raise EngineConvergenceError("SCF did not converge (made to fail by the test)")
        return real(self)

    settings = engine_settings(METHOD, BASIS, optimize=False, route="cartesian")
    items = [BatchItem(molecule(f), name) for name, f in NAMES.items()]
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(stages.ScfJob, "run", fails_for_ammonia)
        water, ammonia = run_batch(items, settings, progress=True)
    err = capsys.readouterr().err
    assert water.error is None and water.run.tasks.n_computed == 9
    assert ammonia.run is None and "made to fail by the test" in ammonia.error
    failed = [line for line in err.splitlines() if "failed:" in line]
    assert failed == ["vibrapol: ammonia: failed: SCF did not converge (made to fail by the test)"]
    assert "ammonia: analytic Hessian" not in err  # nothing after the failed stage


def test_a_reference_row_of_an_earlier_version_is_used(tmp_path, monkeypatch):
    # Earlier versions stored SCF, Hessian and α as one row of kind 'reference' (same key
    # recipe); a checkpoint they left must not lose that stage.
    from vibrapol.engine.checkpoint import CheckpointStore, task_key
    from vibrapol.engine.evaluate import reference_calculation
    from vibrapol.engine.scf import MethodSpec

    water, spec = molecule("H2O"), MethodSpec(METHOD, BASIS)
    path = tmp_path / "old.checkpoint.sqlite"
    ref = reference_calculation(water.numbers, water.positions, spec)
    key = task_key(
        "reference",
        water.numbers,
        water.positions,
        spec,
        reference_conv=[1e-12, 1e-9],
        grid_response=True,
    )
    fields = ["hessian_hartree_bohr2", "alpha_ang3", "density", "gradient_hartree_bohr"]
    fields += ["seconds_scf", "seconds_hessian", "seconds_alpha", "seconds_gradient"]
    arrays = {f: getattr(ref, f) for f in [*fields, "energy_hartree"]}
    with CheckpointStore(path) as store:
        store.put(key, "reference", "reference SCF, Hessian, alpha", arrays, 1.0)

    def redone(self):
        raise AssertionError(f"{self.label} computed again")

    monkeypatch.setattr(stages.ScfJob, "run", redone)
    monkeypatch.setattr(stages.HessianJob, "run", redone)
    run = run_engine(
        water, METHOD, BASIS, optimize=False, symmetry=False, workers=1, checkpoint=path
    )
    assert run.reused_reference and run.reused_stages == ("reference SCF", "Hessian")
    np.testing.assert_array_equal(run.modes.polarizability_ang3, ref.alpha_ang3)
    # ... and the provenance says where that Hessian came from (no claim about its solver)
    assert "from an earlier vibrapol's checkpoint" in " ".join(run.modes.provenance.notes)


def test_a_hessian_row_solved_by_pyscfs_solver_is_not_taken_for_ours(tmp_path):
    # Contract: the closed-shell Hessian's key records its solver (our block solver, and its
    # tolerance), so a Hessian row of an earlier version (PySCF's Krylov solver, key without
    # it) is recomputed rather than reported under our solver's name; open shells keep
    # PySCF's solver and their key.  Fails on the code before (one key for both).
    from vibrapol.engine.scf import MethodSpec

    water = molecule("H2O")
    job = stages.HessianJob(water.numbers, water.positions, MethodSpec(METHOD, BASIS), *[None] * 3)
    old = stages.task_key(
        "hessian", water.numbers, water.positions, job.spec, **stages.REFERENCE_KEY
    )
    assert job.key() != old
    open_shell = MethodSpec(METHOD, BASIS, multiplicity=3)
    job3 = stages.HessianJob(water.numbers, water.positions, open_shell, *[None] * 3)
    old3 = stages.task_key(
        "hessian", water.numbers, water.positions, open_shell, **stages.REFERENCE_KEY
    )
    assert job3.key() == old3


def test_reference_scf_starts_from_the_optimisations_density(monkeypatch):
    # Contract: the optimisation keeps its last converged density (also through its checkpoint
    # row), the flow hands it to the reference SCF stage, and starting there changes the
    # reference only within the tight SCF criteria (PySCF's own guess as the check).
    settings = engine_settings(METHOD, BASIS)
    water = molecule("H2O")
    job = stages.OptimizeJob(water.numbers, water.positions, settings.spec)
    opt = job.run()
    assert opt.density is not None and opt.density.shape == (7, 7)
    again = job.unpack({k: np.asarray(v) for k, v in job.pack(opt).items()})
    assert again is not None and np.array_equal(again.density, opt.density)

    x = opt.coordinates_ang
    cold = stages.ScfJob(water.numbers, x, settings.spec).run().reference
    warm = stages.ScfJob(water.numbers, x, settings.spec, dm0=opt.density).run().reference
    assert abs(warm.energy_hartree - cold.energy_hartree) < 1e-10
    np.testing.assert_allclose(warm.gradient_hartree_bohr, cold.gradient_hartree_bohr, atol=1e-8)
    np.testing.assert_allclose(warm.alpha_ang3, cold.alpha_ang3, atol=1e-8)

    seen = []
    run = stages.ScfJob.run
    monkeypatch.setattr(stages.ScfJob, "run", lambda self: seen.append(self.dm0) or run(self))
    run_engine(water, METHOD, BASIS, route="field", workers=1, progress=False)
    assert len(seen) == 1 and seen[0] is not None and seen[0].shape == (7, 7)


def test_after_an_optimisation_the_zero_field_gradient_is_a_field_task():
    # Contract: the optimisation measures one analytic gradient's cost (kept through its
    # checkpoint row); given it, the reference stage computes no gradient (only the field route
    # needs one: it becomes that route's first task), under a key of its own, and reports the
    # optimisation's time for the route choice.  ∂α/∂x from the zero-field task equals that
    # from the reference stage's own zero-field gradient at the same geometry within the field
    # route's own error: both SCFs stop at an orbital gradient of 1e-9, and ∂α/∂x divides
    # gradient differences by F² = 1e-6 (measured 3.5e-5 apart; each is 1.0e-4 from the
    # analytic route at this geometry).  ∂μ/∂x does not use the zero-field gradient.
    settings = engine_settings(METHOD, BASIS)
    water = molecule("H2O")
    job = stages.OptimizeJob(water.numbers, water.positions, settings.spec)
    opt = job.run()
    assert opt.seconds_gradient is not None and opt.seconds_gradient > 0
    again = job.unpack({k: np.asarray(v) for k, v in job.pack(opt).items()})
    assert again is not None and again.seconds_gradient == opt.seconds_gradient

    x, spec = opt.coordinates_ang, settings.spec
    measured = stages.ScfJob(water.numbers, x, spec, dm0=opt.density)
    known = dataclasses.replace(measured, seconds_gradient=opt.seconds_gradient)
    assert known.key() != measured.key()
    assert measured.label == "reference SCF, polarizability and gradient"
    assert known.label == "reference SCF and polarizability"
    scf, tight = known.run(), measured.run()
    ref = scf.reference
    assert ref.gradient_hartree_bohr is None and ref.seconds_gradient == opt.seconds_gradient
    stored = known.unpack({k: np.asarray(v) for k, v in known.pack(scf).items()})
    assert stored is not None and stored.reference.gradient_hartree_bohr is None
    # Without the gradient the SCF stops at the engine's usual criteria, and the Hessian's key
    # says which orbitals it was computed from; α moves within those criteria (measured 5e-9
    # of its largest element for ethanol and water at 6-31G*, docs/engine-routes.md).
    assert not scf.tight and not stored.tight and tight.tight
    after = [stages.HessianJob.after(r, water.numbers, x, spec).key() for r in (scf, tight)]
    assert after[0] != after[1]
    np.testing.assert_allclose(ref.alpha_ang3, tight.reference.alpha_ang3, atol=1e-8)

    optimised = run_engine(water, METHOD, BASIS, route="field", workers=1, progress=False)
    start = water.copy()
    start.positions = optimised.modes.coordinates_ang
    given = run_engine(start, METHOD, BASIS, route="field", optimize=False, progress=False)
    assert optimised.tasks.n_tasks == given.tasks.n_tasks + 1 == 5  # water C2v: 4 fields
    assert any("(the zero-field one among them)" in n for n in optimised.modes.provenance.notes)
    assert not any("zero-field one among" in n for n in given.modes.provenance.notes)
    # the provenance names the reference SCF's criteria where they are the field route's
    assert any("(reference SCF 1e-12, 1e-09)" in n for n in given.modes.provenance.notes)
    assert not any("(reference SCF" in n for n in optimised.modes.provenance.notes)
    assert _rel(optimised.modes.dalpha_dx, given.modes.dalpha_dx) < 1e-4
    assert _rel(optimised.modes.ir_intensity_km_mol, given.modes.ir_intensity_km_mol) < 1e-6
