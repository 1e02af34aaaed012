"""Run the displaced-geometry tasks on a backend, reusing and filling the checkpoint store."""

from __future__ import annotations

from collections.abc import Sequence
from concurrent.futures import FIRST_COMPLETED, Future, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from time import perf_counter

import numpy as np

from vibrapol.engine.checkpoint import CheckpointStore
from vibrapol.engine.evaluate import PolarizabilityJob, timed_polarizability
from vibrapol.engine.executors import Backend
from vibrapol.engine.progress import Progress
from vibrapol.errors import VibrapolError


@dataclass(frozen=True)
class TaskStats:
    """Counts and times of one batch of tasks.

    Attributes
    ----------
    n_tasks : int
    n_reused : int
        Found finished in the checkpoint store.
    n_computed : int
        Computed in this run.
    seconds_wall : float
        Wall time of the whole batch.
    seconds_tasks : float
        Sum of the tasks' own wall times (in their workers) for the tasks computed now.
    peak_mb_worker : float
        Largest peak resident memory reported by a process that ran a task (MB; 0 when none
        ran).  For serial runs that is this process.
    """

    n_tasks: int
    n_reused: int
    n_computed: int
    seconds_wall: float
    seconds_tasks: float
    peak_mb_worker: float = 0.0


def run_polarizability_tasks(
    jobs: Sequence[PolarizabilityJob],
    keys: Sequence[str],
    labels: Sequence[str],
    backend: Backend,
    store: CheckpointStore | None = None,
    progress: Progress | None = None,
) -> tuple[np.ndarray, TaskStats]:
    """α (Å³) of every job, in order, computing only those not already in ``store``.

    Each result is written to the store as soon as it arrives, so an interrupted run keeps
    everything that finished.

    Returns
    -------
    alphas : ndarray, shape (n_jobs, 3, 3)
    stats : TaskStats
    """
    progress = progress or Progress(False)
    t0 = perf_counter()
    alphas: list[np.ndarray | None] = [None] * len(jobs)
    if store is not None:
        for i, found in _stored(store, keys).items():
            alphas[i] = found
    todo = [i for i, a in enumerate(alphas) if a is None]
    n_reused = len(jobs) - len(todo)
    bar = progress.bar(len(jobs), n_reused, "displacements")
    seconds_tasks = 0.0
    peak_mb = 0.0

    def finish(i: int, alpha: np.ndarray, seconds: float, memory_mb: float) -> None:
        nonlocal seconds_tasks, peak_mb
        alphas[i] = alpha
        seconds_tasks += seconds
        peak_mb = max(peak_mb, memory_mb)
        if store is not None:
            store.put(keys[i], "alpha", labels[i], {"alpha_ang3": alpha}, seconds)
        bar.update(1)

    try:
        if backend.executor is None:
            for i in todo:
                finish(i, *timed_polarizability(jobs[i]))
        else:
            _run_on_executor(jobs, todo, backend, finish)
    finally:
        bar.close()
    stats = TaskStats(len(jobs), n_reused, len(todo), perf_counter() - t0, seconds_tasks, peak_mb)
    return np.array(alphas), stats


def _stored(store: CheckpointStore, keys: Sequence[str]) -> dict[int, np.ndarray]:
    found = {}
    for i, key in enumerate(keys):
        value = store.get(key)
        if value is not None and value.get("alpha_ang3", np.zeros(0)).shape == (3, 3):
            found[i] = value["alpha_ang3"]
    return found


def _run_on_executor(jobs, todo, backend: Backend, finish) -> None:  # noqa: ANN001
    executor = backend.executor
    pending: dict[Future, int] = {}
    for i in todo:
        job = jobs[i]
        if backend.task_threads is not None:
            job = PolarizabilityJob(
                job.atomic_numbers, job.coordinates_ang, job.spec, job.dm0, backend.task_threads
            )
        pending[executor.submit(timed_polarizability, job)] = i
    try:
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                i = pending.pop(future)
                finish(i, *future.result())
    except BrokenProcessPool as exc:
        raise VibrapolError(
            "a worker process died (out of memory, killed, or a script calling the engine without "
            "the `if __name__ == '__main__':` guard that process pools need); rerun to resume from "
            "the checkpoint, or use one worker"
        ) from exc
    finally:
        for future in pending:
            future.cancel()
