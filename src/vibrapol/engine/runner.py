"""Run independent engine tasks on a backend, reusing and filling the checkpoint store."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from time import perf_counter

import numpy as np

from vibrapol.engine.checkpoint import CheckpointStore, StoreRouter
from vibrapol.engine.evaluate import FieldGradientJob, PolarizabilityJob, timed_task
from vibrapol.engine.executors import Backend
from vibrapol.engine.progress import Progress
from vibrapol.errors import VibrapolError

Job = PolarizabilityJob | FieldGradientJob


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
    task_reused: tuple[bool, ...] = ()
    task_seconds: tuple[float, ...] = ()

    def subset(self, start: int, stop: int) -> TaskStats:
        """The counts of tasks ``start:stop`` (one molecule of a batch); wall time shared."""
        reused = self.task_reused[start:stop]
        seconds = self.task_seconds[start:stop]
        return TaskStats(
            stop - start,
            sum(reused),
            stop - start - sum(reused),
            self.seconds_wall,
            float(sum(seconds)),
            self.peak_mb_worker,
            reused,
            seconds,
        )


def run_tasks(
    jobs: Sequence[Job],
    keys: Sequence[str],
    labels: Sequence[str],
    backend: Backend,
    store: CheckpointStore | StoreRouter | None = None,
    progress: Progress | None = None,
    *,
    desc: str = "tasks",
    on_error: Callable[[int, Exception], None] | None = None,
) -> tuple[list[np.ndarray | None], TaskStats]:
    """The result of every job, in order, computing only those not already in ``store``.

    Each result is written to the store as soon as it arrives, so an interrupted run keeps
    everything that finished.

    Parameters
    ----------
    jobs : sequence of PolarizabilityJob or FieldGradientJob
        Anything with ``run()``, ``kind``, ``result_name`` and ``result_shape()``.
    keys, labels : sequence of str
        Checkpoint key and readable name of each job.
    backend : Backend
    store : CheckpointStore, optional
    progress : Progress, optional
    desc : str
        Name of the progress bar.
    on_error : callable, optional
        Called with (job index, exception) when a job fails with a
        :class:`~vibrapol.errors.VibrapolError`; the job's result is then None and the other
        jobs go on.  Without it the first failure is raised.

    Returns
    -------
    results : list of ndarray (None for failed jobs)
    stats : TaskStats
    """
    progress = progress or Progress(False)
    t0 = perf_counter()
    results: list[np.ndarray | None] = [None] * len(jobs)
    if store is not None:
        for i, found in _stored(store, jobs, keys).items():
            results[i] = found
    todo = [i for i, a in enumerate(results) if a is None]
    n_reused = len(jobs) - len(todo)
    bar = progress.bar(len(jobs), n_reused, desc)
    seconds_tasks = 0.0
    peak_mb = 0.0
    reused = [a is not None for a in results]
    task_seconds = [0.0] * len(jobs)

    def finish(i: int, value: np.ndarray, seconds: float, memory_mb: float) -> None:
        nonlocal seconds_tasks, peak_mb
        results[i] = value
        seconds_tasks += seconds
        task_seconds[i] = seconds
        peak_mb = max(peak_mb, memory_mb)
        if store is not None:
            store.put(keys[i], jobs[i].kind, labels[i], {jobs[i].result_name: value}, seconds)
        bar.update(1)

    def fail(i: int, exc: Exception) -> None:
        if on_error is None or not isinstance(exc, VibrapolError):
            raise exc
        on_error(i, exc)
        bar.update(1)

    try:
        if backend.executor is None:
            for i in todo:
                try:
                    outcome = timed_task(jobs[i])
                except VibrapolError as exc:
                    fail(i, exc)
                    continue
                finish(i, *outcome)
        else:
            _run_on_executor(jobs, todo, backend, finish, fail)
    finally:
        bar.close()
    stats = TaskStats(
        len(jobs),
        n_reused,
        len(todo),
        perf_counter() - t0,
        seconds_tasks,
        peak_mb,
        tuple(reused),
        tuple(task_seconds),
    )
    return results, stats


def run_polarizability_tasks(
    jobs: Sequence[PolarizabilityJob],
    keys: Sequence[str],
    labels: Sequence[str],
    backend: Backend,
    store: CheckpointStore | StoreRouter | None = None,
    progress: Progress | None = None,
) -> tuple[np.ndarray, TaskStats]:
    """α (Å³) of every job, in order, as one (n_jobs, 3, 3) array (see :func:`run_tasks`)."""
    alphas, stats = run_tasks(jobs, keys, labels, backend, store, progress, desc="displacements")
    return np.array(alphas), stats


def _stored(store: CheckpointStore | StoreRouter, jobs: Sequence[Job], keys: Sequence[str]) -> dict:
    found = {}
    for i, key in enumerate(keys):
        value = store.get(key)
        name, shape = jobs[i].result_name, jobs[i].result_shape()
        if value is not None and value.get(name, np.zeros(0)).shape == shape:
            found[i] = value[name]
    return found


def _run_on_executor(jobs, todo, backend: Backend, finish, fail) -> None:  # noqa: ANN001
    executor = backend.executor
    assert executor is not None  # without one, run_tasks runs the jobs in this process
    pending: dict[Future, int] = {}
    for i in todo:
        job = jobs[i]
        if backend.task_threads is not None:
            job = dataclasses.replace(job, threads=backend.task_threads)
        pending[executor.submit(timed_task, job)] = i
    try:
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                i = pending.pop(future)
                try:
                    outcome = future.result()
                except VibrapolError as exc:
                    fail(i, exc)
                    continue
                finish(i, *outcome)
    except BrokenProcessPool as exc:
        raise VibrapolError(
            "a worker process died (out of memory, killed, or a script calling the engine without "
            "the `if __name__ == '__main__':` guard that process pools need); rerun to resume from "
            "the checkpoint, or use one worker"
        ) from exc
    except Exception as exc:
        if not _is_cluster_failure(exc):
            raise
        raise VibrapolError(
            f"the Dask cluster lost a task ({type(exc).__name__}); workers died or the "
            "connection dropped (often memory: give each worker more, or run fewer per machine); "
            "rerun to resume from the checkpoint"
        ) from exc
    finally:
        for future in pending:
            future.cancel()


def _is_cluster_failure(exc: BaseException) -> bool:
    """True for the errors by which Dask reports lost workers or a dropped scheduler."""
    try:
        from distributed import KilledWorker
        from distributed.client import FutureCancelledError
        from distributed.comm.core import CommClosedError
    except ImportError:  # pragma: no cover - a declared dependency
        return False
    return isinstance(exc, KilledWorker | CommClosedError | FutureCancelledError)
