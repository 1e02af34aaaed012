"""Where the displaced-geometry tasks run: in process, a local process pool, or Dask.

Every backend is a :class:`concurrent.futures.Executor` (Dask through
``distributed.Client.get_executor``), so the runner does not care which one it has.

Threads: one BLAS/OpenMP thread per pool worker and one worker per core by default.  For
these many small, independent SCF + CPHF tasks, separate processes scale better than PySCF's
threads inside one process (measured with CCl4 HF/6-31G*: 2 workers × 1 thread 1.3× faster
than 1 process × 2 threads; 2 × 2, oversubscribed, slower than serial).  A job sent while
few run (a lone Hessian) gets more threads, up to every core (``Backend.cores``,
:mod:`vibrapol.engine.runner`).
"""

from __future__ import annotations

import contextlib
import logging
import multiprocessing
import os
import re
import signal
import socket
import sys
import threading
import time
from collections.abc import Iterator
from concurrent.futures import Executor, ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass

from vibrapol.engine.evaluate import limit_threads
from vibrapol.errors import VibrapolError

#: Seconds to wait for a Dask scheduler to answer before giving up.
DASK_CONNECT_TIMEOUT_S = 10.0


#: With ``workers=None``, run serially when the whole run is estimated to take less than
#: this (s): starting worker processes and importing PySCF in each takes a few seconds.
SERIAL_BELOW_S = 10.0


def choose_workers(workers: int | None, estimated_serial_s: float) -> int:
    """``workers`` if given; else one per core, or 1 for jobs shorter than :data:`SERIAL_BELOW_S`.

    ``estimated_serial_s`` is the expected serial time of the whole run, every stage and task
    of every molecule (:mod:`vibrapol.engine.estimate`, an order of magnitude).
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
    cores : int or None
        Threads the backend's tasks may share when few run at once: a task sent while k tasks
        are running gets ``max(task_threads, cores // k)`` (:mod:`vibrapol.engine.runner`), so
        a lone Hessian uses every core.  None: always ``task_threads`` (Dask, where the cores
        of a worker's machine are not known; serial runs use every thread anyway).
    """

    executor: Executor | None
    name: str
    workers: int
    task_threads: int | None
    cores: int | None = None


#: Seconds between two looks of a worker's watchdog at its parent (where the operating system
#: cannot kill the worker with its parent by itself).
PARENT_POLL_S = 0.5

#: Seconds the interrupted parent waits for its terminated workers before killing them.
WORKER_STOP_S = 5.0

_PR_SET_PDEATHSIG = 1


def _die_with_parent(parent_pid: int) -> None:
    """Make this worker process end when ``parent_pid`` ends, however the parent ends.

    On Linux the kernel sends SIGKILL to the worker when its parent dies (``prctl``
    ``PR_SET_PDEATHSIG``); elsewhere a daemon thread polls the parent id.  A parent that died
    before this ran is caught by the check of ``os.getppid()`` that follows.
    """
    armed = False
    if sys.platform.startswith("linux"):
        import ctypes

        with contextlib.suppress(OSError, AttributeError):
            libc = ctypes.CDLL(None, use_errno=True)
            armed = libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0) == 0
    if os.getppid() != parent_pid:
        os._exit(1)
    if not armed:

        def watch() -> None:
            while os.getppid() == parent_pid:
                time.sleep(PARENT_POLL_S)
            os._exit(1)

        threading.Thread(target=watch, name="vibrapol-parent-watch", daemon=True).start()


def _init_worker(threads: int, parent_pid: int) -> None:
    _die_with_parent(parent_pid)
    # Ctrl-C at a terminal reaches the whole process group: the parent stops the workers
    # itself, so they need not print their own KeyboardInterrupt tracebacks.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    limit_threads(threads)


def stop_pool(pool: ProcessPoolExecutor) -> None:
    """Stop a pool at once: cancel the queued tasks and terminate the running workers.

    Used when the run is interrupted (Ctrl-C, SIGTERM, an error): waiting for the running
    tasks to finish could take minutes, and their results could not be stored anyway.
    """
    processes = list(getattr(pool, "_processes", {}).values())  # standard library internals
    pool.shutdown(wait=False, cancel_futures=True)
    for proc in processes:
        with contextlib.suppress(Exception):
            proc.terminate()
    deadline = time.monotonic() + WORKER_STOP_S
    for proc in processes:
        with contextlib.suppress(Exception):
            proc.join(max(0.0, deadline - time.monotonic()))
            if proc.is_alive():
                proc.kill()
                proc.join(1.0)


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
        initargs=(threads, os.getpid()),
    )
    try:
        yield Backend(pool, "process pool", n, threads, cores)
    except BaseException:
        stop_pool(pool)
        raise
    pool.shutdown(wait=True, cancel_futures=True)


#: Address forms Dask's client connects to: ``scheme://host:port``, or an in-process
#: cluster's ``inproc://host/pid/n``.
_SCHEDULER_ADDRESS = re.compile(r"^(tcp|tls|ws|wss|ucx)://(\[[0-9a-fA-F:.]+\]|[^\s:/\[\]]+):(\d+)$")
_INPROC_ADDRESS = re.compile(r"^inproc://[^\s/]+/\d+/\d+$")


def check_scheduler_address(scheduler: str) -> tuple[str, str, int]:
    """Scheme, host and port of a scheduler address; raises :class:`VibrapolError` if malformed.

    An in-process address (``inproc://…``, a cluster started in this Python process) gives
    ``("inproc", "", 0)``.
    """
    text = scheduler.strip()
    if _INPROC_ADDRESS.match(text):
        return "inproc", "", 0
    match = _SCHEDULER_ADDRESS.match(text)
    if match is None or not 0 < int(match.group(3)) < 65536:
        raise VibrapolError(
            f"--scheduler {scheduler!r} is not a scheduler address; give it as "
            "tcp://HOST:PORT (the address `dask scheduler` prints)"
        )
    return match.group(1), match.group(2).strip("[]"), int(match.group(3))


@contextmanager
def _quiet_dask() -> Iterator[None]:
    """Silence Dask's loggers (connection retries, shutdown noise) for the enclosed block."""
    loggers = [logging.getLogger(name) for name in ("distributed", "tornado", "asyncio")]
    saved = [(lg, lg.level, lg.disabled) for lg in loggers]
    for lg in loggers:
        lg.disabled = True
    try:
        yield
    finally:
        for lg, level, disabled in saved:
            lg.setLevel(level)
            lg.disabled = disabled


def _unreachable(scheduler: str, reason: object) -> VibrapolError:
    return VibrapolError(
        f"cannot connect to the Dask scheduler at {scheduler!r} ({reason}); start it first "
        "(e.g. `dask scheduler` and `dask worker ADDRESS --nthreads 1`) or drop --scheduler"
    )


def _dask_backend(scheduler: str) -> Iterator[Backend]:
    scheme, host, port = check_scheduler_address(scheduler)
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - a declared dependency
        raise VibrapolError(
            "--scheduler needs the 'distributed' package: pip install 'dask[distributed]'"
        ) from exc
    if scheme in ("tcp", "tls", "ws", "wss"):
        # A plain socket first: an address where nothing listens fails at once and quietly,
        # without a half-built Dask client whose clean-up prints a traceback at exit.
        try:
            with socket.create_connection((host, port), timeout=DASK_CONNECT_TIMEOUT_S):
                pass
        except OSError as exc:
            raise _unreachable(scheduler, exc.strerror or exc) from exc
    with _quiet_dask():
        try:
            client = Client(scheduler, timeout=DASK_CONNECT_TIMEOUT_S, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise _unreachable(scheduler, exc) from exc
    try:
        threads = sum(w.get("nthreads", 1) for w in client.scheduler_info()["workers"].values())
        yield Backend(client.get_executor(), "dask", max(1, threads), 1)
    finally:
        with _quiet_dask():
            client.close()
