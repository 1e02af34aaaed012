"""One run per output: an exclusive lock beside each checkpoint, and SIGTERM as Ctrl-C.

``vibrapol compute`` holds ``NAME.modes.checkpoint.sqlite.lock`` (an empty file, locked with
``flock``) from before its first calculation until its output is written; the file is removed
when the run ends.  A second run on the same output finds the lock taken and stops at once
with one line instead of computing everything again and failing at the end.  The operating
system releases the lock when the process ends in any way, ``kill -9`` included, so a stale
lock file never blocks a later run.

Within one process the lock is re-entrant: the command line takes it for the whole run and the
checkpoint store takes it again when it opens the file.
"""

from __future__ import annotations

import contextlib
import os
import signal
import threading
from collections.abc import Iterator
from pathlib import Path

from vibrapol.errors import VibrapolError

try:  # POSIX
    import fcntl
except ImportError:  # pragma: no cover - Windows: no lock, documented
    fcntl = None  # type: ignore[assignment]  # the module is absent there


class RunLockedError(VibrapolError):
    """Another process is running on the same output (its checkpoint is locked)."""


_held: dict[Path, list] = {}  # lock path → [file descriptor, holders in this process]
_guard = threading.Lock()


def lock_path_for(checkpoint: str | Path) -> Path:
    """The lock file of a checkpoint: ``w.modes.checkpoint.sqlite`` → ``….sqlite.lock``."""
    p = Path(checkpoint)
    return p.with_name(p.name + ".lock")


def _acquire(path: Path, what: str) -> int:
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as exc:
            raise VibrapolError(
                f"cannot create the lock file {path} ({exc.strerror or exc}); the directory of "
                f"{what} must be writable"
            ) from exc
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            raise RunLockedError(
                f"another run is writing {what} (its lock {path} is held); wait for it to "
                "finish, or write elsewhere with -o / --output-dir"
            ) from None
        except OSError as exc:
            os.close(fd)
            raise VibrapolError(
                f"cannot lock {path} ({exc.strerror or exc}); this file system may not support "
                "file locks: write the output to a local disk"
            ) from exc
        # The previous holder removes the file when it finishes; if it did so between our
        # open and our lock, we hold a lock on a removed file: open the new one instead.
        try:
            same = os.path.samestat(os.fstat(fd), os.stat(path))
        except FileNotFoundError:
            same = False
        if same:
            return fd
        os.close(fd)


@contextlib.contextmanager
def run_lock(checkpoint: str | Path, what: str | None = None) -> Iterator[Path]:
    """Hold the exclusive lock of ``checkpoint`` for the enclosed block.

    Parameters
    ----------
    checkpoint : str or Path
        The checkpoint file (it need not exist yet).
    what : str, optional
        How the error names what is being written (default: the checkpoint).

    Raises
    ------
    RunLockedError
        When another process holds the lock.
    """
    path = lock_path_for(checkpoint).absolute()
    if fcntl is None:  # pragma: no cover
        yield path
        return
    with _guard:
        entry = _held.get(path)
        if entry is None:
            entry = _held[path] = [_acquire(path, what or str(checkpoint)), 0]
        entry[1] += 1
    try:
        yield path
    finally:
        with _guard:
            entry[1] -= 1
            if entry[1] == 0:
                del _held[path]
                with contextlib.suppress(OSError):
                    path.unlink()  # while still locked: no other run holds this file
                os.close(entry[0])


class TermSignal:
    """Whether SIGTERM arrived in a :func:`sigterm_as_interrupt` block.

    The KeyboardInterrupt raised by the handler is lost when the signal lands while Python
    runs a destructor ("Exception ignored in …"); :meth:`check` raises it again, so the run
    still stops before it writes its results.
    """

    def __init__(self) -> None:
        self.received = False

    def check(self) -> None:
        """Raise KeyboardInterrupt if SIGTERM arrived (whether or not it was swallowed)."""
        if self.received:
            raise KeyboardInterrupt


@contextlib.contextmanager
def sigterm_as_interrupt() -> Iterator[TermSignal]:
    """Treat SIGTERM like Ctrl-C (KeyboardInterrupt) in the enclosed block (main thread only).

    Batch systems and ``kill`` send SIGTERM; turned into KeyboardInterrupt it takes the same
    path as Ctrl-C: worker processes stopped, finished tasks kept in the checkpoint, the lock
    released, one message and exit status 130.  Yields a :class:`TermSignal` whose ``check``
    repeats an interrupt that a destructor swallowed.
    """
    term = TermSignal()
    if threading.current_thread() is not threading.main_thread():
        yield term
        return

    def interrupt(signum: int, frame: object) -> None:
        # A second SIGTERM while the run stops its workers would break off that clean-up.
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
        term.received = True
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGTERM, interrupt)
    try:
        yield term
    finally:
        # None: a handler not set from Python, which cannot be put back; use the default.
        signal.signal(signal.SIGTERM, signal.SIG_DFL if previous is None else previous)
