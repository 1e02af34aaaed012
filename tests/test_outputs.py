"""Outputs: the symbolic-link rule, all-or-nothing writes, full disks, ASCII-only terminals.

Contracts checked (docs/cli.md, "Shared behaviour"): a symbolic link given as an output is
followed (its target is written, the link stays); several outputs of one command are written
all or none; a full disk (a failing write, or ``/dev/full`` as standard output) ends in one
line and exit status 2 with nothing half-written; under ``LC_ALL=C`` with UTF-8 mode and locale
coercion off, output and errors degrade to ASCII stand-ins instead of raising
``UnicodeEncodeError``.  The process tests run ``python -m vibrapol`` as the shell would.
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

from _paths import PROJECT_ROOT
from bad_input_cases import WATER
from vibrapol.cli import main

SRC = PROJECT_ROOT / "src"


def _run(*argv: str, env: dict[str, str] | None = None, **kwargs) -> subprocess.CompletedProcess:
    base = dict(os.environ if env is None else env)
    base["PYTHONPATH"] = os.pathsep.join([str(SRC), os.environ.get("PYTHONPATH", "")])
    return subprocess.run(
        [sys.executable, "-m", "vibrapol", *argv], env=base, timeout=120, **kwargs
    )


def test_symlink_with_force_writes_the_target_and_keeps_the_link(tmp_path, capsys):
    target = tmp_path / "table.csv"
    target.write_text("old\n")
    link = tmp_path / "link.csv"
    link.symlink_to(target)
    assert main(["table", str(WATER), "--format", "csv", "-o", str(link), "--force"]) == 0
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert target.read_text().startswith("#") or "mode" in target.read_text()
    assert target.read_text() != "old\n"


def test_dangling_symlink_with_force_creates_the_target(tmp_path, capsys):
    link = tmp_path / "link.csv"
    link.symlink_to(tmp_path / "new.csv")
    assert main(["table", str(WATER), "--format", "csv", "-o", str(link), "--force"]) == 0
    assert link.is_symlink() and (tmp_path / "new.csv").is_file()


def test_disk_full_on_the_second_file_leaves_nothing(tmp_path, capsys, monkeypatch):
    # ENOSPC simulated on the second file written (the first is already complete on disk as a
    # temporary): neither output may appear, no temporary may remain, one line, exit 2.
    real_write, real_fsync = os.write, os.fsync
    synced = []  # each temporary is synced once, when it is complete

    def write(fd, data):
        if synced:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real_write(fd, data)

    def fsync(fd):
        synced.append(fd)
        return real_fsync(fd)

    monkeypatch.setattr("vibrapol.fileio.os.write", write)
    monkeypatch.setattr("vibrapol.fileio.os.fsync", fsync)
    out, sticks = tmp_path / "s.csv", tmp_path / "k.csv"
    status = main(["spectrum", str(WATER), "-o", str(out), "--sticks", str(sticks)])
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2
    assert len(err) == 1 and "No space left on device" in err[0] and "nothing was written" in err[0]
    assert list(tmp_path.iterdir()) == []


def test_stdout_on_a_full_disk_is_one_line_exit_2():
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full on this system")
    with open("/dev/full", "w") as full:
        proc = _run("table", str(WATER), stdout=full, stderr=subprocess.PIPE, text=True)
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert lines == ["vibrapol table: error: standard output could not be written "
                     "(No space left on device)"]  # fmt: skip


@pytest.fixture
def c_locale() -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith(("LC_", "LANG", "PYTHONIO"))}
    env.update(LC_ALL="C", PYTHONUTF8="0", PYTHONCOERCECLOCALE="0", PYTHONIOENCODING="")
    return env


def test_ascii_terminal_table_and_help(c_locale):
    # The table's notes hold '±' and 'Å' (examples/water.modes.json), the help 'Γ' and 'ρ'.
    proc = _run("table", str(WATER), env=c_locale, capture_output=True)
    assert proc.returncode == 0, proc.stderr.decode(errors="replace")
    assert proc.stdout.isascii() and b"+/-0.001 au" in proc.stdout and b"0.005 A" in proc.stdout
    proc = _run("symmetry", "--help", env=c_locale, capture_output=True)
    assert proc.returncode == 0 and proc.stdout.isascii()
    assert b"Gamma_vib" in proc.stdout and b"rho_linear = 3/4" in proc.stdout


def test_ascii_terminal_error_line(c_locale, tmp_path):
    xyz = tmp_path / "overlap.xyz"
    xyz.write_text("2\ninvented\nH 0 0 0\nH 0 0 0.01\n")
    proc = _run("symmetry", str(xyz), env=c_locale, capture_output=True)
    assert proc.returncode == 2
    assert proc.stderr.isascii() and b"only 0.010 A apart" in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1


def test_ascii_equivalents():
    # The stand-ins the issue asks for, and superscript runs kept together.
    from vibrapol.cli._common import _ascii_equivalent

    assert _ascii_equivalent("±") == "+/-"
    assert _ascii_equivalent("ρ") == "rho"
    assert _ascii_equivalent("Å") == "A"
    assert _ascii_equivalent("⁻¹") == "^-1"
    assert _ascii_equivalent("²") == "^2"
