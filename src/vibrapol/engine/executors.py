"""Where the displaced-geometry tasks run: in process, a local process pool, or Dask.

Every backend is a :class:`concurrent.futures.Executor` (Dask through
``distributed.Client.get_executor``), so the runner does not care which one it has.

Threads: one BLAS/OpenMP thread per pool worker and one worker per core by default.  For
these many small, independent SCF + CPHF tasks, separate processes scale better than PySCF's
threads inside one process (measured with CCl4 HF/6-31G*: 2 workers × 1 thread 1.3× faster
than 1 process × 2 threads; 2 × 2, oversubscribed, slower than serial).
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Iterator
from concurrent.futures import Executor, ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass

from vibrapol.engine.evaluate import limit_threads
from vibrapol.errors import VibrapolError

#: Seconds to wait for a Dask scheduler to answer before giving up.
DASK_CONNECT_TIMEOUT_S = 10.0


#: With ``workers=None``, run serially when the displacements are estimated to take less than
#: this (s): starting worker processes and importing PySCF in each takes a few seconds.
SERIAL_BELOW_S = 10.0


def choose_workers(workers: int | None, estimated_serial_s: float) -> int:
    """``workers`` if given; else one per core, or 1 for jobs shorter than :data:`SERIAL_BELOW_S`.

    ``estimated_serial_s`` is the expected serial time of all displaced geometries (number of
    tasks × the reference SCF + α time, an overestimate since displaced SCFs start from the
    reference density).
    """
    if workers is not None:
        return int(workers)
    return 1 if estimated_serial_s < SERIAL_BELOW_S else available_cores()


def available_cores() -> int:
    """Cores this process may use (its CPU affinity when the platform tells it)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


@dataclass(frozen=True)
class Backend:
    """The executor in use and how to describe it.

    Attributes
    ----------
    executor : Executor or None
        None: run the tasks one after the other in this process, with all its threads.
    name : str
        ``"serial"``, ``"process pool"`` or ``"dask"``.
    workers : int
        Tasks that run at the same time (for Dask: the cluster's total threads at connection).
    task_threads : int or None
        Threads each task may use (None: the process default).
    """

    executor: Executor | None
    name: str
    workers: int
    task_threads: int | None


def _init_worker(threads: int) -> None:
    limit_threads(threads)


@contextmanager
def open_backend(workers: int | None = None, scheduler: str | None = None) -> Iterator[Backend]:
    """Open the executor for ``workers`` local processes or a Dask ``scheduler`` address.

    Parameters
    ----------
    workers : int, optional
        Local worker processes (default: the available cores).  1 runs the tasks in this
        process.  Each worker gets ``cores // workers`` threads (at least 1).
    scheduler : str, optional
        Address of a running Dask distributed scheduler (``tcp://host:8786``); the user starts
        the cluster, vibrapol connects and sends tasks.  Overrides ``workers``.

    Raises
    ------
    VibrapolError
        Bad worker count, or the scheduler cannot be reached.
    """
    if scheduler:
        yield from _dask_backend(scheduler)
        return
    cores = available_cores()
    n = cores if workers is None else int(workers)
    if n < 1:
        raise VibrapolError(f"--workers must be 1 or more, got {workers}")
    if n == 1:
        yield Backend(None, "serial", 1, None)
        return
    threads = max(1, cores // n)
    # 'spawn' rather than 'fork': PySCF and BLAS keep OpenMP thread pools that are not safe to
    # fork.  Scripts using a pool need the usual `if __name__ == "__main__":` guard.
    pool = ProcessPoolExecutor(
        max_workers=n,
        mp_context=multiprocessing.get_context("spawn"),
        initializer=_init_worker,
        initargs=(threads,),
    )
    try:
        yield Backend(pool, "process pool", n, threads)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask_backend(scheduler: str) -> Iterator[Backend]:
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - a declared dependency
        raise VibrapolError(
            "--scheduler needs the 'distributed' package: pip install 'dask[distributed]'"
        ) from exc
    try:
        client = Client(scheduler, timeout=DASK_CONNECT_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise VibrapolError(
            f"cannot connect to the Dask scheduler at {scheduler!r} ({exc}); start it first "
            "(e.g. `dask scheduler` and `dask worker ADDRESS --nthreads 1`) or drop --scheduler"
        ) from exc
    try:
        threads = sum(w.get("nthreads", 1) for w in client.scheduler_info()["workers"].values())
        yield Backend(client.get_executor(), "dask", max(1, threads), 1)
    finally:
        client.close()
