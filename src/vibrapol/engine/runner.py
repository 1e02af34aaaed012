"""Run engine jobs on a backend as they become ready, reusing and filling the checkpoint store.

:class:`TaskRunner` is the client's event loop: a job is submitted with a callback, runs on the
backend (or is found in the checkpoint), is stored as soon as it finishes, and its callback may
submit the next jobs (the next stage of the same molecule).  :func:`run_tasks` runs a fixed
list of independent jobs on it.

Threads: a job submitted while k jobs are in flight (k counted after every job submitted in the
same round) gets ``max(task_threads, cores // k)`` BLAS/OpenMP threads
(:class:`~vibrapol.engine.executors.Backend`): a lone stage (the Hessian of one molecule) uses
every core, many jobs at once use one thread each.  A job already running keeps its threads.
"""

from __future__ import annotations

import dataclasses
import functools
from collections import deque
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from time import perf_counter
from typing import Any

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
    t0 = perf_counter()
    runner = TaskRunner(backend, progress or Progress(False), desc)
    results: list[np.ndarray | None] = [None] * len(jobs)
    reused = [False] * len(jobs)
    task_seconds = [0.0] * len(jobs)
    peak_mb = 0.0

    def done(i: int, value: Any, seconds: float, memory_mb: float, was_reused: bool) -> None:
        nonlocal peak_mb
        results[i], reused[i], task_seconds[i] = value, was_reused, seconds
        peak_mb = max(peak_mb, memory_mb)

    def failed(i: int) -> Callable[[Exception], None] | None:
        if on_error is None:
            return None
        return functools.partial(on_error, i)

    for i, job in enumerate(jobs):
        runner.submit(job, keys[i], labels[i], store, functools.partial(done, i), failed(i))
    try:
        runner.run()
    finally:
        runner.close()
    n_reused = sum(reused)
    computed = [s for s, r in zip(task_seconds, reused, strict=True) if not r]
    stats = TaskStats(
        len(jobs),
        n_reused,
        len(jobs) - n_reused,
        perf_counter() - t0,
        float(sum(computed)),
        peak_mb,
        tuple(reused),
        tuple(s if not r else 0.0 for s, r in zip(task_seconds, reused, strict=True)),
    )
    return results, stats


#: ``done(value, seconds, memory_mb, reused)``: called with a job's result.
Done = Callable[[Any, float, float, bool], None]


@dataclass(eq=False)
class _Entry:
    job: Any
    key: str | None
    label: str
    store: CheckpointStore | StoreRouter | None
    done: Done
    failed: Callable[[Exception], None] | None
    owner: object


class TaskRunner:
    """The client's event loop: jobs run on the backend, each stored when it finishes.

    Parameters
    ----------
    backend : Backend
    progress : Progress
        Its bar counts every job submitted (its total grows as jobs are submitted).
    desc : str
        Name of the bar.
    """

    def __init__(self, backend: Backend, progress: Progress, desc: str = "tasks") -> None:
        self.backend = backend
        self.bar = progress.bar(0, 0, desc)
        self._ready: deque[tuple[_Entry, Any, float, float, bool]] = deque()
        self._new: list[_Entry] = []
        self._queue: deque[_Entry] = deque()  # the serial backend's jobs, in order
        self._pending: dict[Future, _Entry] = {}
        self._dropped: set[object] = set()

    def submit(
        self,
        job: Any,
        key: str | None,
        label: str,
        store: CheckpointStore | StoreRouter | None,
        done: Done,
        failed: Callable[[Exception], None] | None = None,
        owner: object = None,
    ) -> bool:
        """Run ``job`` (or take its result from ``store``), then call ``done``.

        Returns True when the result was found in ``store`` (``done`` is still called from
        :meth:`run`).  ``failed(exc)`` is called instead when the job raises a
        :class:`~vibrapol.errors.VibrapolError` (without it the error is raised from
        :meth:`run`).  Callbacks run inside :meth:`run`, in this process, and may submit more.
        """
        entry = _Entry(job, key, label, store, done, failed, owner)
        self.bar.total += 1
        if store is not None and key is not None:
            found = _from_store(job, store.get(key))
            if found is not None:
                self.bar.update(1)
                self._ready.append((entry, *found, 0.0, True))
                return True
        self._new.append(entry)
        return False

    def drop(self, owner: object) -> None:
        """Forget the jobs of ``owner`` (a failed molecule): not started, no callbacks.

        A job of it already running still has its result stored when it arrives.
        """
        self._dropped.add(owner)
        for future, entry in list(self._pending.items()):
            if entry.owner == owner and future.cancel():
                del self._pending[future]
                self.bar.update(1)
        for queue in (self._queue, self._new):
            kept = [e for e in queue if e.owner != owner]
            self.bar.update(len(queue) - len(kept))
            queue.clear()
            queue.extend(kept)

    def run(self) -> None:
        """Until no job is left: deliver results, send new jobs, wait for the next to finish."""
        try:
            while True:
                while self._ready:
                    self._deliver(*self._ready.popleft())
                    self._send()
                self._send()
                if self._ready:
                    continue
                if self.backend.executor is None:
                    if not self._queue:
                        return
                    self._run_here(self._queue.popleft())
                else:
                    if not self._pending:
                        return
                    self._wait()
        except BrokenProcessPool as exc:
            raise VibrapolError(
                "a worker process died (out of memory, killed, or a script calling the engine "
                "without the `if __name__ == '__main__':` guard that process pools need); rerun "
                "to resume from the checkpoint, or use one worker"
            ) from exc
        except Exception as exc:
            if not _is_cluster_failure(exc):
                raise
            raise VibrapolError(
                f"the Dask cluster lost a task ({type(exc).__name__}); workers died or the "
                "connection dropped (often memory: give each worker more, or run fewer per "
                "machine); rerun to resume from the checkpoint"
            ) from exc
        finally:
            for future in self._pending:
                future.cancel()

    def close(self) -> None:
        """Close the progress bar."""
        self.bar.close()

    def _threads(self, in_flight: int) -> int | None:
        b = self.backend
        if b.task_threads is None or b.cores is None:
            return b.task_threads
        return max(b.task_threads, b.cores // max(1, in_flight))

    def _send(self) -> None:
        """Send the jobs submitted since the last call, with threads for their number."""
        new, self._new = self._new, []
        self.bar.refresh()
        if self.backend.executor is None:
            self._queue.extend(new)  # each runs alone, with this process's threads
            return
        threads = self._threads(len(self._pending) + len(new))
        for entry in new:
            job = entry.job
            if threads is not None:
                job = dataclasses.replace(job, threads=threads)
            self._pending[self.backend.executor.submit(timed_task, job)] = entry

    def _run_here(self, entry: _Entry) -> None:
        try:
            outcome = timed_task(entry.job)
        except VibrapolError as exc:
            self._fail(entry, exc)
            return
        self._finish(entry, *outcome)

    def _wait(self) -> None:
        done, _ = wait(self._pending, return_when=FIRST_COMPLETED)
        for future in done:
            entry = self._pending.pop(future)
            try:
                outcome = future.result()
            except VibrapolError as exc:
                self._fail(entry, exc)
                continue
            self._finish(entry, *outcome)

    def _finish(self, entry: _Entry, value: Any, seconds: float, memory_mb: float) -> None:
        if entry.store is not None and entry.key is not None:
            arrays = _to_store(entry.job, value, seconds)
            entry.store.put(entry.key, entry.job.kind, entry.label, arrays, seconds)
        self.bar.update(1)
        self._deliver(entry, value, seconds, memory_mb, False)

    def _fail(self, entry: _Entry, exc: VibrapolError) -> None:
        if entry.failed is None:
            raise exc
        self.bar.update(1)
        if entry.owner is None or entry.owner not in self._dropped:
            entry.failed(exc)

    def _deliver(
        self, entry: _Entry, value: Any, seconds: float, memory_mb: float, reused: bool
    ) -> None:
        if entry.owner is None or entry.owner not in self._dropped:
            entry.done(value, seconds, memory_mb, reused)


def _from_store(job: Any, stored: dict[str, np.ndarray] | None) -> tuple[Any, float] | None:
    """A job's result and recorded seconds from its checkpoint row, or None."""
    if stored is None:
        return None
    unpack = getattr(job, "unpack", None)
    if unpack is not None:  # a stage (vibrapol.engine.stages): several arrays and its time
        value = unpack(stored)
        return None if value is None else (value, float(stored.get("seconds", 0.0)))
    value = stored.get(job.result_name)
    if value is None or value.shape != job.result_shape():
        return None
    return value, 0.0


def _to_store(job: Any, value: Any, seconds: float) -> dict[str, Any]:
    pack = getattr(job, "pack", None)
    if pack is not None:
        return {**pack(value), "seconds": seconds}
    return {job.result_name: value}


def _is_cluster_failure(exc: BaseException) -> bool:
    """True for the errors by which Dask reports lost workers or a dropped scheduler."""
    try:
        from distributed import KilledWorker
        from distributed.client import FutureCancelledError
        from distributed.comm.core import CommClosedError
    except ImportError:  # pragma: no cover - a declared dependency
        return False
    return isinstance(exc, KilledWorker | CommClosedError | FutureCancelledError)
