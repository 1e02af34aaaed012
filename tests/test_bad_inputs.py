"""Bad input through the command line: one line naming the problem and the file, exit 2, no output.

Every case of :data:`CASES` runs ``vibrapol.cli.main`` in-process on one bad input — a file of
``tests/bad_inputs`` (README there), a variant made here from the fixtures of ``tests/fixtures``
(truncated inside a block, another encoding), or a bad option — and checks what the design asks
of every error a user can cause (docs/cli.md, "Shared behaviour"):

* exit status 2;
* standard error is exactly one line, ``vibrapol COMMAND: error: ...``, matching the case's
  expected text and naming the file (or, for an option, the option);
* no file appears, disappears or changes anywhere under the test's directory (outputs are
  checked before any work and written atomically);
* ``compute`` never reaches the engine: the SCF stages are replaced by a function that fails
  the test if called.

A few cases also run as a real process (``python -m vibrapol``) to check the exit status the
shell sees and that no traceback is printed; the inputs that would hang or fill memory should
their check break (named pipes, devices) run only so, with a timeout and a memory limit.
Measured spectra here are invented data.
"""

from __future__ import annotations

import os
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from _paths import PROJECT_ROOT
from bad_input_cases import WATER, Case, all_cases
from vibrapol.cli import main

SRC = PROJECT_ROOT / "src"

CASES = all_cases()

#: Cases also run as a real process (exit status seen by the shell, no traceback).
SUBPROCESS_IDS = (
    "table-binary",
    "cut-orca-normal-modes",
    "spectrum-fwhm-negative",
    "spectrum-range-dash-value",
    "output-parent-is-a-file",
    "measured-duplicate-x",
    "compute-one-atom",
    "compute-scheduler-malformed",
)

#: Cases that would hang (a pipe with no writer) or fill memory (a device) should the check
#: ever break: run only as real processes, which the test stops after a timeout.
PROCESS_ONLY_IDS = tuple(c.id for c in CASES if "fifo" in c.id or "-dev-" in c.id)


def _snapshot(root: Path) -> dict[str, object]:
    """Every path under ``root`` with its content (regular files; size and modification time
    for the sparse oversized inputs), its link target (symbolic links) or its kind (others)."""
    found: dict[str, object] = {}
    for path in sorted(root.rglob("*")):
        st = path.lstat()
        if stat.S_ISREG(st.st_mode):
            big = st.st_size > 10_000_000
            found[str(path.relative_to(root))] = (
                (st.st_size, st.st_mtime_ns) if big else path.read_bytes()
            )
        elif stat.S_ISLNK(st.st_mode):
            found[str(path.relative_to(root))] = ("link", os.readlink(path))
        else:
            found[str(path.relative_to(root))] = stat.S_IFMT(st.st_mode)
    return found


@pytest.fixture
def no_engine(monkeypatch):
    """Make any job sent to the backend fail the test: bad input must stop before them."""

    def reached(*args, **kwargs):
        raise AssertionError("the engine was started on bad input")

    monkeypatch.setattr("vibrapol.engine.runner.TaskRunner.submit", reached)


def _prepare(case: Case, tmp_path: Path) -> list[str]:
    (tmp_path / "in").mkdir()
    (tmp_path / "out").mkdir()
    return case.argv(tmp_path)


def _check_line(case: Case, argv: list[str], err: str) -> None:
    lines = err.strip().splitlines()
    assert len(lines) == 1, f"{case.id}: expected one line on stderr, got:\n{err}"
    line = lines[0]
    assert line.startswith(f"vibrapol {argv[0]}: error: "), line
    assert case.expect in line, f"{case.id}: {case.expect!r} not in {line!r}"
    assert case.names in line, f"{case.id}: the line does not name {case.names!r}: {line!r}"
    assert "Traceback" not in err


def test_corpus_is_large_and_ids_unique():
    ids = [c.id for c in CASES]
    assert len(ids) == len(set(ids))
    assert len(ids) >= 40  # issue 8: at least 40 bad inputs
    assert set(SUBPROCESS_IDS) <= set(ids)


def _limit_memory() -> None:
    """At most 4 GB of address space: a device read to its end fails fast, not the machine."""
    import resource

    resource.setrlimit(resource.RLIMIT_AS, (4 * 1024**3, 4 * 1024**3))


IN_PROCESS = [c for c in CASES if c.id not in PROCESS_ONLY_IDS]


@pytest.mark.parametrize("case", IN_PROCESS, ids=[c.id for c in IN_PROCESS])
def test_bad_input_one_line_exit_2_nothing_written(case, tmp_path, capsys, no_engine):
    argv = _prepare(case, tmp_path)
    before = _snapshot(tmp_path)
    capsys.readouterr()
    status = main(argv)
    captured = capsys.readouterr()
    assert status == 2, f"{case.id}: exit status {status}; stderr: {captured.err}"
    _check_line(case, argv, captured.err)
    assert _snapshot(tmp_path) == before


@pytest.mark.parametrize(
    "case", [c for c in CASES if c.id in SUBPROCESS_IDS + PROCESS_ONLY_IDS], ids=lambda c: c.id
)
def test_bad_input_as_a_real_process(case, tmp_path):
    argv = _prepare(case, tmp_path)
    before = _snapshot(tmp_path)
    env = dict(
        os.environ,
        PYTHONPATH=os.pathsep.join([str(SRC), os.environ.get("PYTHONPATH", "")]),
    )
    proc = subprocess.run(
        [sys.executable, "-m", "vibrapol", *argv],
        capture_output=True,
        text=True,
        env=env,
        timeout=60,  # a pipe with no writer or a device read to its end never returns
        preexec_fn=_limit_memory if case.id in PROCESS_ONLY_IDS else None,
    )
    assert proc.returncode == 2, proc.stderr
    assert proc.stdout == ""
    _check_line(case, argv, proc.stderr)
    assert _snapshot(tmp_path) == before


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="needs Linux /proc")
def test_unwritable_directory_even_for_root(capsys):
    # Permission bits say nothing for root (os.access is True), but nobody may create files in
    # /proc: the output check must find that out before any work, by trying.
    target = Path("/proc/vibrapol-test-output.csv")
    assert main(["spectrum", str(WATER), "-o", str(target)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1
    assert "cannot write in directory /proc" in err and target.name in err
    assert not target.exists()
