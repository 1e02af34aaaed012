"""Swallow what a library prints, in the calling thread only.

``contextlib.redirect_stdout`` / ``redirect_stderr`` swap ``sys.stdout`` / ``sys.stderr`` for
the whole process.  Engine jobs run in threads as well (Dask workers with several threads, an
in-process cluster), and there two overlapping redirections restore each other's streams in the
wrong order: measured on a two-thread in-process cluster, every later progress line and warning
of the run went to a discarded buffer.  :func:`quiet_streams` instead puts, while any thread
is inside it, a proxy in ``sys.stdout`` and ``sys.stderr`` that sends the writes of the threads
inside it to a private buffer and everything else to the stream it replaced.  The proxy is put
in by the first thread to enter and taken out by the last to leave (under a lock), so the
streams are the original objects again once no thread is inside.
"""

from __future__ import annotations

import contextlib
import io
import sys
import threading
from collections.abc import Iterator
from typing import Any

_local = threading.local()
_lock = threading.Lock()
_users = 0
_saved: dict[str, Any] = {}


class _ThreadRoutedStream:
    """A text stream that writes to the calling thread's sink if it has one, else to ``target``."""

    def __init__(self, target: Any) -> None:
        self._target = target

    def _stream(self) -> Any:
        sink = getattr(_local, "sink", None)
        return self._target if sink is None else sink

    def write(self, text: str) -> int:
        """Write ``text`` to this thread's sink or to the replaced stream."""
        return self._stream().write(text)

    def writelines(self, lines: Any) -> None:
        """Write each line (see :meth:`write`)."""
        self._stream().writelines(lines)

    def flush(self) -> None:
        """Flush this thread's destination."""
        self._stream().flush()

    def __getattr__(self, name: str) -> Any:  # fileno, isatty, encoding … of the real stream
        return getattr(self._target, name)


@contextlib.contextmanager
def quiet_streams() -> Iterator[io.StringIO]:
    """Within the block, what this thread writes to stdout or stderr goes to a buffer.

    Other threads keep writing to the real streams.  Nested use in one thread is allowed (the
    inner block gets its own buffer).
    """
    global _users
    with _lock:
        if _users == 0:
            _saved["stdout"], _saved["stderr"] = sys.stdout, sys.stderr
            sys.stdout = _ThreadRoutedStream(sys.stdout)
            sys.stderr = _ThreadRoutedStream(sys.stderr)
        _users += 1
    previous = getattr(_local, "sink", None)
    sink = io.StringIO()
    _local.sink = sink
    try:
        yield sink
    finally:
        _local.sink = previous
        with _lock:
            _users -= 1
            if _users == 0:
                # only undo our own proxies: whoever replaced them since keeps their stream
                if isinstance(sys.stdout, _ThreadRoutedStream):
                    sys.stdout = _saved["stdout"]
                if isinstance(sys.stderr, _ThreadRoutedStream):
                    sys.stderr = _saved["stderr"]
                _saved.clear()
