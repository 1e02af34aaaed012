"""The ``vibrapol table`` command: formats, columns, and bad input."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from vibrapol.cli import main
from vibrapol.output.tables import TABLE_COLUMNS

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "water.modes.json"


def _body(text):
    """The CSV without its ``#`` header lines (what pandas.read_csv(comment="#") reads)."""
    return [line for line in text.splitlines() if not line.startswith("#")]


def test_csv_has_exactly_the_documented_columns(capsys):
    assert main(["table", str(EXAMPLE), "--format", "csv"]) == 0
    rows = list(csv.reader(_body(capsys.readouterr().out)))
    assert tuple(rows[0]) == TABLE_COLUMNS
    assert len(rows) == 4
    # water's asymmetric stretch (B2, highest mode) is depolarized: ρ_l = 3/4 (common practice)
    assert float(rows[3][6]) == pytest.approx(0.75, abs=1e-6)
    assert rows[3][8] == "false" and rows[2][8] == "true"
    pol = TABLE_COLUMNS.index("polarization")
    assert [r[pol] for r in rows[1:]] == ["polarized", "polarized", "depolarized"]


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
    assert _body(out.read_text())[0].startswith("mode,")


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
    assert done.returncode == 0 and done.stdout.startswith("# source: ")
    assert _body(done.stdout)[0].startswith("mode,frequency_cm1,")


def test_closed_stdout_pipe_ends_quietly():
    # `vibrapol table … | head -0`: the reader is gone before anything is written.  The read
    # end of the pipe is closed before the command starts, so its first write fails for sure
    # (no race); the command must stop with status 1 and print no traceback.
    import os
    import subprocess
    import sys

    read_end, write_end = os.pipe()
    os.close(read_end)
    try:
        done = subprocess.run(
            [sys.executable, "-m", "vibrapol", "table", str(EXAMPLE), "--format", "csv"],
            stdout=write_end,
            stderr=subprocess.PIPE,
            text=True,
            check=False,
        )
    finally:
        os.close(write_end)
    assert done.returncode == 1
    assert "Traceback" not in done.stderr and "BrokenPipe" not in done.stderr


def _pipe_rows(text):
    return [line.split("|")[1:-1] for line in text.splitlines() if line.startswith("| ")][1:]


def test_markdown_table_lists_the_raman_active_bands(capsys):
    # Water: three Raman-active fundamentals, 2 A1 + B2 (Herzberg 1945, from memory); the B2
    # one is depolarized with ρ = 3/4 (common practice).
    assert main(["table", str(EXAMPLE), "--format", "markdown"]) == 0
    rows = _pipe_rows(capsys.readouterr().out)
    assert [r[1].strip() for r in rows] == ["A1", "A1", "B2"]
    assert float(rows[2][3]) == pytest.approx(0.75, abs=1e-3) and rows[2][4].strip() == "dp"
    assert [r[4].strip() for r in rows].count("p") == 2


def test_latex_table_of_a_linear_molecule(capsys):
    # CO2 (D∞h): of its fundamentals only the symmetric stretch Σg⁺ is Raman-active (mutual
    # exclusion; Herzberg 1945, from memory), and it is polarized.  ORCA 5.0.0 output.
    source = Path(__file__).resolve().parent / "fixtures" / "orca5_co2.out"
    assert main(["table", str(source), "--format", "latex"]) == 0
    text = capsys.readouterr().out
    rows = [r for r in text.splitlines() if r.rstrip().endswith("\\\\")][1:]
    assert (
        len(rows) == 1
        and "$\\Sigma_{g}^+$" in rows[0]
        and rows[0].split("&")[4].strip(" \\") == "p"
    )
    assert "$D_{\\infty h}$" in text and "\\toprule" in text and "\\end{table}" in text


@pytest.mark.parametrize(
    ("name", "tex"),
    [("B1u", "$B_{1u}$"), ("A''", "$A''$"), ("E'", "$E'$"), ("Πu", "$\\Pi_{u}$"),
     ("Σ⁻", "$\\Sigma^-$"), ("T2g", "$T_{2g}$"), ("E", "$E$")],
)  # fmt: skip
def test_latex_species_names(name, tex):
    from vibrapol.output.tables import latex_species

    assert latex_species(name) == tex


def test_tex_escape_of_free_text():
    from vibrapol.output.tables import tex_escape

    assert tex_escape("a_b & c%{d}") == "a\\_b \\& c\\%\\{d\\}"


def test_band_tables_leave_out_imaginary_modes():
    # An imaginary mode (printed as a negative wavenumber) means the structure is not a
    # minimum; it is no band of a spectrum, and the caption says it was left out.
    from test_modeset import small_modeset
    from vibrapol.output.tables import band_rows, table_markdown
    from vibrapol.ramantable import raman_table

    table = raman_table(small_modeset())  # modes at −50, 1600 and 3800 cm⁻¹
    assert [round(r["wavenumber_cm1"]) for r in band_rows(table)] == [1600, 3800]
    assert "1 imaginary mode omitted" in table_markdown(table)


def test_band_table_with_a_published_scale_factor(capsys):
    # The HF/6-31G(d) factor 0.8953 (MMR07 and SR96, ../shared/reference/scale-factors.md,
    # Table 1) times the harmonic
    # wavenumbers of the CSV table; the caption names the factor.
    assert main(["table", str(EXAMPLE), "--format", "csv"]) == 0
    harmonic = [float(r[1]) for r in list(csv.reader(_body(capsys.readouterr().out)))[1:]]
    assert main(["table", str(EXAMPLE), "--format", "markdown", "--scale-for", "HF/6-31G*"]) == 0
    text = capsys.readouterr().out
    scaled = [float(r[0]) for r in _pipe_rows(text)]
    assert scaled == [round(0.8953 * f) for f in harmonic]
    assert "scaled by 0.8953" in text.splitlines()[0]


def test_scale_with_a_per_mode_format_is_refused(capsys):
    assert main(["table", str(EXAMPLE), "--format", "csv", "--scale", "0.9"]) == 2
    assert "apply to the band tables" in capsys.readouterr().err
