"""Contract: silencing PySCF's prints in one engine thread never silences another thread.

Engine jobs run in threads (Dask workers with several threads, in-process clusters).  Process-wide
``contextlib.redirect_stderr`` in two overlapping jobs left ``sys.stderr`` pointing at a discarded
buffer: every later progress line and warning of the run was lost (found as a flaky Dask batch
test).  These tests force that overlap with events.
"""

from __future__ import annotations

import io
import sys
import threading

from vibrapol.engine.scf import _quiet


def _overlapping_quiet_blocks(during) -> None:  # noqa: ANN001
    """Thread A enters, B enters, A leaves, B leaves; ``during`` runs while both are inside."""
    a_in, b_in, a_out = threading.Event(), threading.Event(), threading.Event()

    def first() -> None:
        with _quiet():
            print("from A", file=sys.stderr)
            a_in.set()
            b_in.wait(5)
            during()
        a_out.set()

    def second() -> None:
        a_in.wait(5)
        with _quiet():
            print("from B", file=sys.stderr)
            b_in.set()
            a_out.wait(5)

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)


def test_overlapping_quiet_blocks_restore_the_real_streams(monkeypatch):
    real = io.StringIO()
    monkeypatch.setattr(sys, "stderr", real)
    _overlapping_quiet_blocks(lambda: None)
    assert sys.stderr is real
    print("after", file=sys.stderr)
    assert real.getvalue() == "after\n"  # the threads' own prints were swallowed


def test_other_threads_keep_writing_while_one_is_quiet(monkeypatch):
    real = io.StringIO()
    monkeypatch.setattr(sys, "stderr", real)
    main_line = threading.Thread(target=lambda: print("progress line", file=sys.stderr))

    def write_from_another_thread() -> None:
        main_line.start()
        main_line.join(5)

    _overlapping_quiet_blocks(write_from_another_thread)
    assert real.getvalue() == "progress line\n"
