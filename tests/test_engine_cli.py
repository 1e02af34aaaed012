"""``vibrapol compute``: output, resume after SIGKILL, and one-line errors for bad input."""

from __future__ import annotations

import json
import os
import re
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from vibrapol.cli import main
from vibrapol.sources.modes_json import read_modes_json

WATER_XYZ = "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
RUN_CLI = "import sys; from vibrapol.cli import main; sys.exit(main(sys.argv[1:]))"
SUMMARY = re.compile(r"(\d+) tasks: (\d+) computed, (\d+) reused")


@pytest.fixture
def water_file(tmp_path):
    path = tmp_path / "water.xyz"
    path.write_text(WATER_XYZ)
    return path


def _cli(args, cwd):
    env = dict(os.environ)
    env["PYTHONPATH"] = (
        str(Path(__file__).resolve().parents[1] / "src") + os.pathsep + env.get("PYTHONPATH", "")
    )
    return subprocess.Popen(
        [sys.executable, "-c", RUN_CLI, *args],
        cwd=cwd,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


def _done_tasks(db: Path) -> int:
    if not db.exists():
        return 0
    try:
        with sqlite3.connect(db, timeout=0.1) as con:
            return con.execute("SELECT COUNT(*) FROM results WHERE kind = 'alpha'").fetchone()[0]
    except sqlite3.OperationalError:  # table not created yet, or locked for a moment
        return 0


def test_compute_writes_a_modes_file_that_table_reads(water_file, tmp_path, capsys):
    out = tmp_path / "water.modes.json"
    status = main(
        [
            "compute",
            str(water_file),
            "--basis",
            "sto-3g",
            "--route",
            "cartesian",
            "--workers",
            "1",
            "-o",
            str(out),
        ]
    )
    assert status == 0
    modes = read_modes_json(out)
    assert modes.n_modes == 3 and modes.dalpha_dx.shape == (9, 3, 3)
    assert modes.provenance.source_kind == "engine"
    # Water is C2v: 9 of the 18 displaced geometries are computed (symdisplace module notes).
    assert "cartesian route, 9 tasks: 9 computed, 0 reused" in capsys.readouterr().err
    assert main(["table", str(out), "--format", "json"]) == 0
    rows = json.loads(capsys.readouterr().out)["modes"]
    # Water: the antisymmetric (B2) stretch, the highest mode, has ρ = 3/4 (common practice).
    assert rows[-1]["rho_linear"] == pytest.approx(0.75, abs=1e-4)


def test_resume_after_sigkill_computes_only_the_missing_tasks(water_file, tmp_path):
    args = [str(water_file), "--basis", "6-31g*", "--workers", "1", "--no-progress"]
    args += ["--route", "cartesian", "--no-use-symmetry"]  # all 18 tasks: time to kill the run
    out = tmp_path / "water.modes.json"
    db = tmp_path / "water.modes.checkpoint.sqlite"
    proc = _cli(["compute", *args, "-o", str(out)], tmp_path)
    deadline = time.monotonic() + 120
    while _done_tasks(db) < 3 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.005)
    proc.send_signal(signal.SIGKILL)
    proc.communicate()
    finished = _done_tasks(db)
    assert proc.returncode == -signal.SIGKILL, "the run finished before it could be killed"
    assert 3 <= finished < 18
    assert not out.exists()

    resumed = _cli(["compute", *args, "-o", str(out)], tmp_path)
    _, err = resumed.communicate(timeout=300)
    assert resumed.returncode == 0, err
    total, computed, reused = map(int, SUMMARY.search(err).groups())
    assert (total, computed, reused) == (18, 18 - finished, finished)

    straight_dir = tmp_path / "straight"
    straight_dir.mkdir()
    straight = _cli(["compute", *args, "-o", str(straight_dir / "w.modes.json")], tmp_path)
    _, err = straight.communicate(timeout=300)
    assert straight.returncode == 0, err
    a = np.array(json.loads(out.read_text())["dalpha_dx_ang2"])
    b = np.array(json.loads((straight_dir / "w.modes.json").read_text())["dalpha_dx_ang2"])
    assert np.abs(a - b).max() <= 1e-8 * np.abs(b).max()


@pytest.mark.parametrize(
    ("extra", "content", "message"),
    [
        ([], "this is not a structure file\n", "cannot read a structure"),
        (["--method", "nosuchfunctional"], WATER_XYZ, "unknown method 'nosuchfunctional'"),
        (["--basis", "nosuchbasis"], WATER_XYZ, "unknown basis 'nosuchbasis'"),
        (["--charge", "1"], WATER_XYZ, "9 electrons (charge 1) cannot be closed-shell"),
        (["--multiplicity", "2"], WATER_XYZ, "10 electrons (charge 0) cannot have multiplicity 2"),
        (["--multiplicity", "0"], WATER_XYZ, "multiplicity must be 1 or more"),
        (["--step-ang", "-1"], WATER_XYZ, "displacement step must be in"),
    ],
)
def test_bad_input_is_one_line_exit_2_nothing_written(tmp_path, capsys, extra, content, message):
    structure = tmp_path / "input.xyz"
    structure.write_text(content)
    out = tmp_path / "out.modes.json"
    status = main(["compute", str(structure), "--basis", "sto-3g", *extra, "-o", str(out)])
    err = capsys.readouterr().err
    assert status == 2
    assert len(err.strip().splitlines()) == 1 and message in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["input.xyz"]


def test_missing_structure_and_existing_output(tmp_path, capsys, water_file):
    assert main(["compute", str(tmp_path / "none.xyz"), "-o", str(tmp_path / "o.modes.json")]) == 2
    assert "no such structure file" in capsys.readouterr().err
    existing = tmp_path / "o.modes.json"
    existing.write_text("keep me")
    assert main(["compute", str(water_file), "-o", str(existing)]) == 2
    assert "already exists" in capsys.readouterr().err
    assert existing.read_text() == "keep me"
