"""Checkpoint faults: damaged rows, a damaged file, a full disk (docs/engine-faults.md).

Contracts checked: a stored result whose bytes changed is named in a warning and computed
again, and only it; a file that fails SQLite's integrity check is refused with one line and
left byte for byte as it was; a full disk while saving a task or writing the output is one
line, keeps every finished task, and the rerun resumes.  Runs use water HF/STO-3G (our own test
input), Cartesian route without symmetry: 18 displaced geometries of a few ms each.
"""

from __future__ import annotations

import errno
import io
import json
import re
import sqlite3

import numpy as np
import pytest

from vibrapol.cli import main
from vibrapol.engine.checkpoint import CheckpointStore, CheckpointWarning
from vibrapol.engine.runlock import RunLockedError

WATER_XYZ = "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
ARGS = ["--basis", "sto-3g", "--no-optimize", "--route", "cartesian", "--no-use-symmetry"]
ARGS += ["--workers", "1", "--no-progress"]


@pytest.fixture
def run(tmp_path, capsys):
    """``run(*extra)`` → (exit status, stderr) of ``vibrapol compute`` on water."""
    structure = tmp_path / "water.xyz"
    structure.write_text(WATER_XYZ)
    out = tmp_path / "water.modes.json"

    def call(*extra: str) -> tuple[int, str]:
        capsys.readouterr()
        status = main(["compute", str(structure), *ARGS, "-o", str(out), *extra])
        return status, capsys.readouterr().err

    call.out = out
    call.db = tmp_path / "water.modes.checkpoint.sqlite"
    return call


def _alpha_rows(db):
    with sqlite3.connect(db) as con:
        return con.execute(
            "SELECT key, label, payload FROM results WHERE kind = 'alpha' ORDER BY label"
        ).fetchall()


def _npz(**arrays) -> bytes:
    buf = io.BytesIO()
    np.savez(buf, **arrays)
    return buf.getvalue()


def _dalpha(path):
    return np.array(json.loads(path.read_text())["dalpha_dx_ang2"])


def test_an_overwritten_result_is_named_and_only_it_is_computed_again(run):
    assert run()[0] == 0
    first = _dalpha(run.out)
    key, label, _ = _alpha_rows(run.db)[4]
    with sqlite3.connect(run.db) as con:  # a plausible but wrong α: only a checksum can tell
        con.execute(
            "UPDATE results SET payload = ? WHERE key = ?", (_npz(alpha_ang3=np.eye(3)), key)
        )
    with pytest.warns(CheckpointWarning, match=re.escape(f"stored result of {label} is damaged")):
        status, err = run("--force")
    assert status == 0, err
    assert "18 tasks: 1 computed, 17 reused" in err
    assert np.array_equal(_dalpha(run.out), first)


def test_random_bytes_inside_a_stored_result_are_caught(run):
    assert run()[0] == 0
    first = _dalpha(run.out)
    _, label, payload = _alpha_rows(run.db)[7]
    data = bytearray(run.db.read_bytes())
    at = data.find(payload)
    assert at > 0, "the result is stored in one piece in the file"
    data[at + len(payload) - 40 : at + len(payload) - 24] = np.random.default_rng(1).bytes(16)
    run.db.write_bytes(bytes(data))
    with pytest.warns(CheckpointWarning, match=re.escape(label)):
        status, err = run("--force")
    assert status == 0, err
    assert "18 tasks: 1 computed, 17 reused" in err
    assert np.array_equal(_dalpha(run.out), first)


@pytest.mark.parametrize("where", ["file header", "table page"])
def test_a_damaged_file_is_one_line_and_left_as_it_was(run, where):
    assert run()[0] == 0
    data = bytearray(run.db.read_bytes())
    # SQLite file format: 100-byte header, then the schema page; the results table's b-tree
    # starts on page 2 (offset = page size, big-endian at bytes 16-17).
    page = int.from_bytes(data[16:18], "big")
    at = 0 if where == "file header" else page
    data[at : at + 16] = np.random.default_rng(2).bytes(16)
    run.db.write_bytes(bytes(data))
    status, err = run("--force")
    assert status == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "damaged or not a vibrapol checkpoint" in lines[0] and "--fresh" in lines[0]
    assert str(run.db) in lines[0]
    assert run.db.read_bytes() == bytes(data)  # never deleted or repaired silently
    status, err = run("--force", "--fresh")
    assert status == 0, err
    assert "18 tasks: 18 computed, 0 reused" in err


def test_a_full_disk_while_saving_a_task_is_one_line_and_the_rerun_resumes(run, monkeypatch):
    saved = []
    real_write = CheckpointStore._write

    def write(self, row):
        if row[1] == "alpha" and len(saved) == 5:
            raise sqlite3.OperationalError("database or disk is full")  # what SQLite says
        real_write(self, row)
        if row[1] == "alpha":
            saved.append(row[0])

    monkeypatch.setattr(CheckpointStore, "_write", write)
    status, err = run()
    assert status == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "no space left on the device while saving the result of" in lines[0]
    assert "rerun the same command to resume" in lines[0]
    assert not run.out.exists()
    assert len(_alpha_rows(run.db)) == 5  # nothing finished was lost
    monkeypatch.setattr(CheckpointStore, "_write", real_write)
    status, err = run()
    assert status == 0, err
    assert "18 tasks: 13 computed, 5 reused" in err


def test_a_full_disk_while_writing_the_output_keeps_every_task(run, monkeypatch):
    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr("vibrapol.cli.compute.write_modes_json", full)
    status, err = run()
    assert status == 2
    last = err.strip().splitlines()[-1]
    assert last.startswith("vibrapol compute: error: cannot write")
    assert "No space left on device" in last and "Traceback" not in err
    monkeypatch.undo()
    status, err = run()
    assert status == 0, err
    assert "18 tasks: 0 computed, 18 reused" in err and run.out.exists()


def test_a_checkpoint_of_an_earlier_version_without_checksums_is_still_read(tmp_path):
    """Rows written before checksums existed are read (their payload must still load)."""
    db = tmp_path / "old.sqlite"
    with sqlite3.connect(db) as con:
        con.execute(
            "CREATE TABLE results (key TEXT PRIMARY KEY, kind TEXT NOT NULL, label TEXT NOT NULL,"
            " payload BLOB NOT NULL, seconds REAL NOT NULL, created REAL NOT NULL)"
        )
        con.execute(
            "INSERT INTO results VALUES ('k', 'alpha', 'x+', ?, 1.0, 0.0)",
            (_npz(alpha_ang3=np.eye(3)),),
        )
    with CheckpointStore(db) as store:
        assert np.array_equal(store.get("k")["alpha_ang3"], np.eye(3))
        store.put("k2", "alpha", "y+", {"alpha_ang3": np.ones((3, 3))}, 1.0)
        assert np.array_equal(store.get("k2")["alpha_ang3"], np.ones((3, 3)))


def test_a_stale_lock_file_does_not_block_and_a_held_lock_does(tmp_path):
    """The lock is the flock, not the file: a file left by ``kill -9`` is no obstacle."""
    fcntl = pytest.importorskip("fcntl")
    db = tmp_path / "w.modes.checkpoint.sqlite"
    lock = tmp_path / "w.modes.checkpoint.sqlite.lock"
    lock.write_text("")  # left behind by a killed run
    with CheckpointStore(db) as store:
        store.put("k", "alpha", "x+", {"alpha_ang3": np.eye(3)}, 1.0)
    assert not lock.exists()
    with open(lock, "w") as held:  # another open file holding the lock, as another run would
        fcntl.flock(held, fcntl.LOCK_EX)
        with pytest.raises(RunLockedError, match="another run is writing"):
            CheckpointStore(db)
    with CheckpointStore(db) as store:
        assert np.array_equal(store.get("k")["alpha_ang3"], np.eye(3))
