"""Executors and the checkpoint store: every backend gives the same numbers; resume works."""

from __future__ import annotations

import sqlite3
from concurrent.futures import Executor, Future
from types import SimpleNamespace

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine.checkpoint import CheckpointStore, checkpoint_path_for, task_key
from vibrapol.engine.compute import run_engine
from vibrapol.engine.executors import available_cores, choose_workers
from vibrapol.engine.scf import MethodSpec
from vibrapol.errors import VibrapolError

METHOD, BASIS = "hf", "sto-3g"
# Water is C2v: with the symmetry reduction (on by default) the Cartesian route computes 9 of
# the 18 displaced geometries (symdisplace module notes).
N_TASKS = 9


@pytest.fixture(scope="module")
def serial_run():
    return run_engine(molecule("H2O"), METHOD, BASIS, workers=1)


def _rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


def test_process_pool_equals_serial(serial_run):
    # Same tasks, same inputs, one thread each: identical α up to BLAS summation order.
    pooled = run_engine(molecule("H2O"), METHOD, BASIS, workers=2)
    assert pooled.backend == "process pool" and pooled.workers == 2
    assert _rel(pooled.modes.dalpha_dx, serial_run.modes.dalpha_dx) < 1e-8
    np.testing.assert_allclose(pooled.modes.freqs_cm1, serial_run.modes.freqs_cm1, atol=1e-8)


def test_dask_local_cluster_equals_serial(serial_run):
    # Dask path: a LocalCluster whose scheduler listens on TCP loopback, its one worker thread
    # in this process (processes=False keeps the test small).
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=1,
        threads_per_worker=1,
        processes=False,
        protocol="tcp",
        host="127.0.0.1",
        dashboard_address=None,
    ) as cluster:
        run = run_engine(molecule("H2O"), METHOD, BASIS, scheduler=cluster.scheduler_address)
    assert run.backend == "dask"
    assert run.tasks.n_computed == N_TASKS
    assert _rel(run.modes.dalpha_dx, serial_run.modes.dalpha_dx) < 1e-8


def test_automatic_worker_count():
    # Short jobs run serially (a pool costs seconds to start); long ones use every core.
    assert choose_workers(None, 1.0) == 1
    assert choose_workers(None, 1000.0) == available_cores()
    assert choose_workers(3, 0.0) == 3


def test_unreachable_scheduler_is_a_clear_error(monkeypatch):
    monkeypatch.setattr("vibrapol.engine.executors.DASK_CONNECT_TIMEOUT_S", 1.0)
    with pytest.raises(VibrapolError, match="cannot connect to the Dask scheduler"):
        run_engine(molecule("H2O"), METHOD, BASIS, scheduler="tcp://127.0.0.1:9")


def test_checkpoint_rerun_reuses_every_task(tmp_path, serial_run):
    path = tmp_path / "w.checkpoint.sqlite"
    first = run_engine(molecule("H2O"), METHOD, BASIS, checkpoint=path)
    assert (first.tasks.n_computed, first.tasks.n_reused) == (N_TASKS, 0)
    again = run_engine(molecule("H2O"), METHOD, BASIS, checkpoint=path)
    assert (again.tasks.n_computed, again.tasks.n_reused) == (0, N_TASKS)
    assert again.reused_optimization and again.reused_reference
    # Stored results are the exact float64 values: the reruns agree bit for bit.
    assert np.array_equal(again.modes.dalpha_dx, first.modes.dalpha_dx)
    assert _rel(first.modes.dalpha_dx, serial_run.modes.dalpha_dx) < 1e-8
    fresh = run_engine(molecule("H2O"), METHOD, BASIS, checkpoint=path, fresh=True)
    assert fresh.tasks.n_computed == N_TASKS and not fresh.reused_reference


def test_checkpoint_keys_change_with_what_determines_the_result():
    z = np.array([8, 1, 1])
    x = np.array([[0.0, 0.0, 0.1], [0.0, 0.76, -0.47], [0.0, -0.76, -0.47]])
    base = task_key("alpha", z, x, MethodSpec("hf", "sto-3g"))
    assert base == task_key("alpha", z, x.copy(), MethodSpec("HF", "STO-3G"))
    moved = x.copy()
    moved[1, 1] = np.nextafter(moved[1, 1], 1.0)
    others = {
        task_key("alpha", z, moved, MethodSpec("hf", "sto-3g")),
        task_key("alpha", z, x, MethodSpec("b3lyp", "sto-3g")),
        task_key("alpha", z, x, MethodSpec("hf", "3-21g")),
        task_key("alpha", z, x, MethodSpec("hf", "sto-3g", cartesian_d=True)),
        task_key("reference", z, x, MethodSpec("hf", "sto-3g")),
    }
    assert base not in others and len(others) == 5


def test_store_round_trip_and_corrupt_file(tmp_path):
    path = tmp_path / "c.sqlite"
    with CheckpointStore(path) as store:
        store.put("k", "alpha", "x1+", {"alpha_ang3": np.arange(9.0).reshape(3, 3)}, 0.5)
        assert store.count("alpha") == 1
    with CheckpointStore(path) as store:
        np.testing.assert_array_equal(store.get("k")["alpha_ang3"], np.arange(9.0).reshape(3, 3))
        assert store.get("missing") is None
    bad = tmp_path / "bad.sqlite"
    bad.write_text("this is not a database " * 100)
    with pytest.raises(VibrapolError, match="damaged or not a vibrapol checkpoint"):
        CheckpointStore(bad)
    assert sqlite3.connect(path).execute("SELECT COUNT(*) FROM results").fetchone()[0] == 1


def test_checkpoint_file_sits_beside_the_output(tmp_path):
    assert (
        checkpoint_path_for(tmp_path / "water.modes.json")
        == tmp_path / "water.modes.checkpoint.sqlite"
    )
    assert checkpoint_path_for("out").name == "out.checkpoint.sqlite"


class _LosingExecutor(Executor):
    """An executor whose every task fails the way a Dask cluster reports a lost worker."""

    def submit(self, fn, /, *args, **kwargs):
        from distributed import KilledWorker

        future = Future()
        worker = SimpleNamespace(address="tcp://127.0.0.1:1")  # stands in for a WorkerState
        future.set_exception(KilledWorker("alpha-1", worker, allowed_failures=3))
        return future


def test_lost_dask_worker_is_a_one_line_error():
    # KilledWorker is distributed's own exception for a task whose workers kept dying; the run
    # must end with a VibrapolError (one line at the command line), not a traceback.
    from vibrapol.engine.evaluate import PolarizabilityJob
    from vibrapol.engine.executors import Backend
    from vibrapol.engine.runner import run_tasks

    atoms = molecule("H2O")
    job = PolarizabilityJob(atoms.numbers, atoms.positions, MethodSpec(METHOD, BASIS), None)
    backend = Backend(_LosingExecutor(), "dask", 2, 1)
    with pytest.raises(VibrapolError, match="Dask cluster lost a task.*KilledWorker"):
        run_tasks([job, job], ["k1", "k2"], ["a", "b"], backend)
