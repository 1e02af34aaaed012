"""The ``vibrapol table`` command: formats, columns, and bad input."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from vibrapol.cli import main
from vibrapol.report import TABLE_COLUMNS

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "water.modes.json"


def test_csv_has_exactly_the_documented_columns(capsys):
    assert main(["table", str(EXAMPLE), "--format", "csv"]) == 0
    rows = list(csv.reader(io.StringIO(capsys.readouterr().out)))
    assert tuple(rows[0][: len(TABLE_COLUMNS)]) == TABLE_COLUMNS
    assert len(rows) == 4
    # water's asymmetric stretch (B2, highest mode) is depolarized: ρ_l = 3/4 (common practice)
    assert float(rows[3][6]) == pytest.approx(0.75, abs=1e-6)
    assert rows[3][8] == "false" and rows[2][8] == "true"


def test_text_and_json_outputs(capsys, tmp_path):
    assert main(["table", str(EXAMPLE)]) == 0
    text = capsys.readouterr().out
    assert "source:" in text and "RHF/6-31g*" in text
    out = tmp_path / "t.json"
    assert main(["table", str(EXAMPLE), "--format", "json", "-o", str(out)]) == 0
    doc = json.loads(out.read_text())
    assert len(doc["modes"]) == 3 and doc["units"]["activity"] == "angstrom^4/amu"


def test_existing_output_needs_force(tmp_path, capsys):
    out = tmp_path / "t.csv"
    out.write_text("keep me")
    assert main(["table", str(EXAMPLE), "--format", "csv", "-o", str(out)]) == 2
    assert "--force" in capsys.readouterr().err
    assert out.read_text() == "keep me"
    assert main(["table", str(EXAMPLE), "--format", "csv", "-o", str(out), "--force"]) == 0
    assert out.read_text().startswith("mode,")


BAD_INPUTS = {
    "empty.out": b"",
    "blank.out": b"\n\n   \n",
    "binary.out": bytes(range(256)) * 4,
    "unknown.out": b"This is the output of a program nobody knows.\nEnergy = -1.0\n",
    "truncated.modes.json": b'{"format": "vibrapol.modes", "schema_version": 1, "atoms": {',
    "badshape.modes.json": json.dumps(
        {
            "format": "vibrapol.modes",
            "schema_version": 1,
            "atoms": {"atomic_numbers": [1, 1], "coordinates_ang": [[0, 0, 0]]},
            "freqs_cm1": [4000.0],
            "modes_mass_weighted": [[1, 0, 0, 0, 0, 0]],
        }
    ).encode(),
}


@pytest.mark.parametrize("name", sorted(BAD_INPUTS))
def test_bad_input_gives_one_line_and_exit_2(name, tmp_path, capsys):
    src = tmp_path / name
    src.write_bytes(BAD_INPUTS[name])
    out = tmp_path / "out.csv"
    assert main(["table", str(src), "--format", "csv", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and name in err
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [src]


def test_missing_file_and_traceback_flag(tmp_path, capsys):
    assert main(["table", str(tmp_path / "nope.out")]) == 2
    assert "no such file" in capsys.readouterr().err
    from vibrapol.errors import VibrapolError

    with pytest.raises(VibrapolError):
        main(["--traceback", "table", str(tmp_path / "nope.out")])


def test_output_file_gets_ordinary_permissions(tmp_path):
    # write_atomic goes through mkstemp (mode 0600); the result must be readable like any file.
    import os
    import stat

    out = tmp_path / "t.csv"
    assert main(["table", str(EXAMPLE), "--format", "csv", "-o", str(out)]) == 0
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(out.stat().st_mode) == 0o666 & ~umask


def test_python_dash_m_runs_the_command_line():
    import subprocess
    import sys

    done = subprocess.run(
        [sys.executable, "-m", "vibrapol", "table", str(EXAMPLE), "--format", "csv"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0 and done.stdout.startswith("mode,frequency_cm1,")
