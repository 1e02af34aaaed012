"""The Raman table says what the source says, and says what it lacks.

Real outputs (../shared/qc-outputs, cclib regression data) check that the default table keeps
the program's numbers; variants of our own fixtures and small mode sets check the warnings and
notes (missing modes, imaginary modes, zeros, no Raman data) and that every format carries them.
"""

from __future__ import annotations

import dataclasses
import json
import re
import warnings

import numpy as np
import pytest

from _paths import FIXTURES, PROJECT_ROOT, qc_output
from _source_contract import csv_comments, csv_records
from vibrapol.cli import main
from vibrapol.errors import AccuracyWarning, VibrapolWarning
from vibrapol.output.tables import table_csv, table_json, table_markdown, table_text
from vibrapol.ramantable import raman_table, symmetry_table
from vibrapol.sources import read_modes
from vibrapol.sources.modes_json import read_modes_json, write_modes_json

ORCA6 = "ORCA6.0.1_dvb_raman.out"
G16 = "Gaussian16-A.03_dvb_raman.out"
WATER = PROJECT_ROOT / "examples" / "water.modes.json"


def printed_orca_raman(path):
    """(wavenumber, activity, ratio) rows of the last RAMAN SPECTRUM block, read here."""
    text = path.read_text()
    block = text[text.rindex("RAMAN SPECTRUM") :]
    rows = re.findall(r"^\s+\d+:\s+(\S+)\s+(\S+)\s+(\S+)\s*$", block, flags=re.M)
    return np.array(rows, dtype=float)


def run_cli(capsys, *args):
    """(stdout, the vibrapol warnings shown, one per line) of ``vibrapol ARGS``, exit 0."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        assert main(list(args)) == 0
    shown = [str(w.message) for w in caught if issubclass(w.category, VibrapolWarning)]
    return capsys.readouterr().out, "\n".join(shown)


def run_csv(capsys, *args):
    """Records, header comments and warnings of ``vibrapol table ARGS --format csv``."""
    out, shown = run_cli(capsys, "table", *args, "--format", "csv")
    return csv_records(out), csv_comments(out), shown


# -- §1: the source's numbers by default -------------------------------------------------------
def test_orca6_default_table_has_the_printed_numbers(capsys):
    # ORCA 6.0.1 dvb (numerical Hessian, run without symmetry): the RAMAN SPECTRUM block prints
    # wavenumbers (2 decimals), activities and ratios (6 decimals).  The default table must give
    # them back to print precision and in the printed (ascending) order, Raman-forbidden modes
    # at numerical noise included (CSV keeps what was read; only the text table shows them as
    # 0, and the note says so).
    path = qc_output(ORCA6)
    printed = printed_orca_raman(path)
    assert printed.shape == (54, 3)
    rows, comments, err = run_csv(capsys, str(path))
    freqs = [float(r["frequency_cm1"]) for r in rows]
    np.testing.assert_array_equal(freqs, printed[:, 0])
    assert freqs == sorted(freqs)
    top = printed[:, 1].max()
    noise = 0
    for row, (_, activity, rho) in zip(rows, printed, strict=True):
        noise += row["raman_active"] == "false" and activity <= 1e-5 * top
        assert float(row["activity"]) == pytest.approx(activity, abs=5e-7)
        if activity > 1e-3:
            assert float(row["rho_linear"]) == pytest.approx(rho, abs=5e-7)
    assert noise and any("with activity 0" in c and "keep the numbers" in c for c in comments)
    # the mixed modes are named, on stderr and in the file (purity from the modes as printed)
    mixed = [c for c in comments if c.startswith("warning:") and "look mixed" in c]
    assert len(mixed) == 1 and "53 (0.56), 54 (0.56)" in mixed[0] and "look mixed" in err
    assert float(rows[52]["purity"]) == pytest.approx(0.556, abs=1e-3)
    assert not any("symmetrized" in c for c in comments)


def test_symmetrize_is_refused_for_activity_and_ratio_sources(capsys, tmp_path):
    # ORCA prints activities and ratios only: scalar invariants of mixed modes cannot be
    # un-mixed, so averaging over the group is refused in one line and nothing is written.
    path = qc_output(ORCA6)
    out = tmp_path / "t.csv"
    for command in ("table", "symmetry"):
        assert main([command, str(path), "--symmetrize", "-o", str(out)]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert "cannot be un-mixed" in err[-1] and ORCA6 in err[-1]
        assert not out.exists()


def test_symmetrize_with_derivatives_is_announced(capsys):
    # Gaussian 16 archive: Hessian and ∂α/∂x can be averaged over C2h.  Asked for, it is done
    # and said on stderr and in the JSON header; the frequencies move by less than 1e-6 cm⁻¹
    # (the structure is symmetric to 2e-16 Å).
    path = qc_output(G16)
    out, shown = run_cli(capsys, "table", str(path), "--format", "json", "--symmetrize")
    doc = json.loads(out)
    assert doc["header"]["symmetrized"] is True
    assert any("symmetrized over C2h" in w for w in doc["header"]["warnings"])
    assert "symmetrized over C2h" in shown
    assert main(["table", str(path), "--format", "json"]) == 0
    plain = json.loads(capsys.readouterr().out)
    assert plain["header"]["symmetrized"] is False
    np.testing.assert_allclose(
        [m["frequency_cm1"] for m in doc["modes"]],
        [m["frequency_cm1"] for m in plain["modes"]],
        atol=1e-6,
    )


def test_symmetrize_cannot_go_with_no_symmetry(capsys):
    assert main(["table", str(WATER), "--no-symmetry", "--symmetrize"]) == 2
    assert "--no-symmetry" in capsys.readouterr().err


def test_library_paths_keep_the_source_modes():
    # spectrum, match and rank label modes through symmetry_table: by default the modes that
    # come back are the ones given (contract: no averaging unless asked).
    from vibrapol.compare import candidate_from_modes

    modes = read_modes(qc_output(ORCA6))
    with pytest.warns(AccuracyWarning, match="look mixed"):
        same, table = symmetry_table(modes)
    assert same is modes
    np.testing.assert_array_equal(table.freqs_cm1, modes.freqs_cm1)
    a2, g2 = modes.raman_invariants()
    np.testing.assert_array_equal(table.a2, a2)
    np.testing.assert_array_equal(table.activity, 45 * a2 + 7 * g2)
    with pytest.warns(AccuracyWarning):
        candidate = candidate_from_modes(modes)
    assert candidate.notes == (f"point group {table.point_group}",)  # not "(modes symmetrized)"


# -- §2: warnings reach CSV and JSON -----------------------------------------------------------
def test_json_and_text_carry_the_same_warnings(capsys):
    path = qc_output(ORCA6)
    assert main(["table", str(path), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert len(doc["header"]["warnings"]) == 1 and "look mixed" in doc["header"]["warnings"][0]
    assert any("ORCA printed all 60 modes" in n for n in doc["header"]["notes"])
    assert main(["table", str(path)]) == 0
    text = capsys.readouterr().out
    assert f"warning: {doc['header']['warnings'][0]}" in text


def test_csv_header_lines_are_comments_before_the_column_names(capsys):
    # pandas.read_csv(comment="#") skips whole lines starting with "#": every header line must
    # start with it, and the column names come right after them.
    assert main(["table", str(WATER), "--format", "csv"]) == 0
    lines = capsys.readouterr().out.splitlines()
    k = next(i for i, line in enumerate(lines) if not line.startswith("#"))
    assert k >= 3 and lines[0].startswith("# source: ")
    assert lines[k].startswith("mode,frequency_cm1,") and not any(
        line.startswith("#") for line in lines[k:]
    )


# -- §3: honest answers --------------------------------------------------------------------------
def test_truncated_job_warns_how_many_vibrations_are_missing(capsys, tmp_path):
    # A job that printed only 6 of divinylbenzene's 54 vibrations (C10H10: 3N − 6 = 54; the
    # README of qc-outputs): the table warns, on stderr and in the file.
    modes = read_modes(qc_output(G16))
    short = write_modes_json(modes.subset(range(6)), tmp_path / "short.modes.json")
    rows, comments, err = run_csv(capsys, str(short))
    assert len(rows) == 6
    assert "6 of the 54 vibrations" in err and "48 are missing" in err
    assert any(c.startswith("warning:") and "48 are missing" in c for c in comments)
    with pytest.warns(AccuracyWarning, match="48 are missing"):
        raman_table(read_modes_json(short))


def test_linear_molecule_counts_3n_minus_5():
    # CO2 has 3N − 5 = 4 vibrations (fact of the trade): the ORCA fixture is complete.
    modes = read_modes(FIXTURES / "orca5_co2.out")
    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        _, table = symmetry_table(modes)
    assert not table.warnings
    with pytest.warns(AccuracyWarning, match="3 of the 4 vibrations"):
        raman_table(modes.subset([0, 2, 3]), degeneracy_tol_cm1=0.0)


def test_imaginary_modes(capsys):
    # Q-Chem 5.4 dvb has two imaginary modes (README of qc-outputs): a warning; one alone (a
    # transition state, or a soft mode at the noise level) is a note.
    path = qc_output("QChem5.4.1_dvb_raman.out")
    _, comments, err = run_csv(capsys, str(path))
    assert "2 of 54 modes are imaginary" in err
    assert any(c.startswith("warning:") and "imaginary" in c for c in comments)
    from test_modeset import small_modeset

    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        table = raman_table(small_modeset())  # one mode at −50 cm⁻¹
    assert any("1 of 3 modes are imaginary (50.0i" in n for n in table.notes)


def frequency_only_variant(tmp_path):
    """Our ORCA CO2 fixture without its RAMAN SPECTRUM block: a frequency job, read by cclib."""
    lines = (FIXTURES / "orca5_co2.out").read_text().splitlines(keepends=True)
    start = next(i for i, line in enumerate(lines) if line.startswith("RAMAN SPECTRUM"))
    end = next(i for i in range(start, len(lines)) if lines[i].startswith("The first frequency"))
    path = tmp_path / "co2_freq.out"
    path.write_text("".join(lines[:start] + lines[end:]))
    return path


def test_frequency_job_without_raman_gives_the_species_table(capsys, tmp_path):
    # CO2 (D∞h): bend Πu (IR), symmetric stretch Σg⁺ (Raman, polarized), antisymmetric stretch
    # Σu⁺ (IR) — Herzberg (1945), fact of the trade.  Without Raman data the table gives that
    # from symmetry, with empty activities and ratios and a note.
    path = frequency_only_variant(tmp_path)
    rows, comments, _ = run_csv(capsys, str(path), "--kind", "cclib")
    assert [r["irrep"] for r in rows] == ["Πu", "Πu", "Σg⁺", "Σu⁺"]
    assert [r["raman_active"] for r in rows] == ["false", "false", "true", "false"]
    assert [r["ir_active"] for r in rows] == ["true", "true", "false", "true"]
    assert [r["polarization"] for r in rows] == ["", "", "polarized_by_symmetry", ""]
    for column in ("a2", "gamma2", "activity", "rho_linear", "rho_natural", "polarized"):
        assert all(r[column] == "" for r in rows)
    assert any("no Raman data in the source" in c for c in comments)
    assert main(["symmetry", str(path), "--kind", "cclib"]) == 0
    assert "Σg⁺" in capsys.readouterr().out
    assert main(["table", str(path), "--format", "markdown"]) == 0
    assert "| 1473 | Σg⁺ | – | – | p(sym) |" in capsys.readouterr().out


def test_all_zero_raman_rows_warn():
    # An IR-only job whose Raman rows hold zeros: a warning instead of a silent zero table.
    modes = read_modes_json(WATER)
    zero = dataclasses.replace(modes, dalpha_dx=None, dalpha_dq=np.zeros((3, 3, 3)))
    with pytest.warns(AccuracyWarning, match="every Raman activity is zero"):
        table = raman_table(zero)
    assert "every Raman activity is zero" in table_csv(table)


def test_ir_intensity_column_in_every_format():
    # The IR intensities a source gives (km/mol) are shown as given; empty when unknown.
    modes = read_modes_json(WATER)
    ir = [67.1, 12.3, 45.6]  # invented values, only carried through
    table = raman_table(dataclasses.replace(modes, ir_intensity_km_mol=ir))
    rows = csv_records(table_csv(table))
    assert [float(r["ir_intensity_km_mol"]) for r in rows] == ir
    doc = json.loads(table_json(table))
    assert [m["ir_intensity_km_mol"] for m in doc["modes"]] == ir
    assert doc["units"]["ir_intensity_km_mol"] == "km/mol"
    assert "67.1" in table_text(table)
    assert all(r["ir_intensity_km_mol"] == "" for r in csv_records(table_csv(raman_table(modes))))


# -- issue 13 point 8: forbidden is zero ------------------------------------------------------
@pytest.mark.parametrize("name", [G16, "DALTON2015_dvb_raman.out"])
def test_forbidden_noise_is_shown_as_zero(name):
    # dvb is C2h: Au and Bu fundamentals are Raman-forbidden (mutual exclusion, fact of the
    # trade).  Their activities from the derivatives are ~1e-22 (Gaussian) and ~1e-10 (DALTON)
    # of the strongest: the text table shows 0 with a note; the mode set, CSV and JSON keep
    # what was read.
    modes = read_modes(qc_output(name))
    _, table = symmetry_table(modes)
    forbidden = ~table.raman_active
    assert forbidden.sum() == 27  # 27 Ag+Bg Raman-active of 54 (Γ_vib = 10Ag+4Au+...; README)
    assert np.all(table.activity[forbidden] > 0)  # the numbers read, unchanged
    from vibrapol.output.tables import table_rows

    shown = table_rows(table, show_zero=True)
    rows = csv_records(table_csv(table))
    for row, show, bad, s in zip(rows, shown, forbidden, table.activity, strict=True):
        if bad:
            assert (show["activity"], show["a2"], show["rho_linear"]) == (0.0, 0.0, None)
            assert float(row["activity"]) == pytest.approx(s, rel=1e-9)  # CSV: as read
        else:
            assert float(row["activity"]) > 1e-3 * table.activity.max()
    assert any("with activity 0" in n for n in table.notes)
    assert "with activity 0" in table_text(table)


def test_symmetry_zero_a2_and_ir_noise_shown_as_zero_in_text_only():
    # Gaussian 16 dvb (C2h): mode 2 is Bg, not totally symmetric (a = 0 by symmetry, fact of the
    # trade) and IR-forbidden (g species, mutual exclusion).  The derivatives give a2 ~ 1e-29 and
    # an IR intensity ~ 2e-28 km/mol: numerical noise, shown as 0 in the text table with a
    # note; CSV keeps what was computed from the file.
    from vibrapol.output.tables import table_rows

    _, table = symmetry_table(read_modes(qc_output(G16)))
    assert table.irreps[1] == "Bg"
    assert 0 < table.a2[1] < 1e-20 and 0 < table.ir_intensity_km_mol[1] < 1e-20
    shown = table_rows(table, show_zero=True)[1]
    assert shown["a2"] == 0.0 and shown["ir_intensity_km_mol"] == 0.0
    row = csv_records(table_csv(table))[1]
    assert float(row["a2"]) == pytest.approx(table.a2[1], rel=1e-9)
    assert "are shown as 0 in this table" in table_text(table)
    # a totally symmetric band keeps its a2 (mode 5, Ag)
    assert table_rows(table, show_zero=True)[4]["a2"] == pytest.approx(table.a2[4])


# -- issue 13 point 7: one polarization rule --------------------------------------------------
def test_three_outcomes_at_rho_072():
    # ρ = 0.72 lies within the 0.05 margin of 3/4 (typical measurement uncertainty, common
    # practice): totally symmetric → unresolved; otherwise depolarized; 0.60 → polarized.
    from vibrapol.polarization import measurably_polarized, polarization_class

    got = polarization_class(
        np.array([0.72, 0.72, 0.60, 0.75, np.nan]), np.array([True, False, True, False, True])
    )
    assert list(got) == ["unresolved", "depolarized", "polarized", "depolarized", ""]
    # measured ratios add their own 2σ: 0.64 ± 0.02 is polarized, 0.66 ± 0.03 is not
    assert list(measurably_polarized(np.array([0.64, 0.66]), np.array([0.02, 0.03]))) == [
        True,
        False,
    ]


def test_table_and_match_use_the_same_rule():
    # A totally symmetric water mode given ρ = 0.72 (γ² = 270 a², since ρ = 3γ²/(45a² + 4γ²)):
    # the table marks it p?, not P; the assignment's measured test agrees at the same ratio.
    from vibrapol.compare import measured_polarized

    modes = read_modes_json(WATER)
    a2, g2 = modes.raman_invariants()
    a2, g2 = a2.copy(), g2.copy()
    a2[0], g2[0] = 1e-3, 0.27
    _, table = symmetry_table(
        dataclasses.replace(modes, dalpha_dx=None, dalpha_dq=None, a2=a2, gamma2=g2)
    )
    assert table.rho_linear[0] == pytest.approx(0.72, abs=1e-9)
    assert table.irreps[0] == "A1" and table.polarization[0] == "unresolved"
    assert not table.polarized[0]
    assert "p?" in table_text(table) and "| p? |" in table_markdown(table)
    assert not measured_polarized(np.array([0.72]), np.array([0.0]))[0]


def test_warnings_reach_stderr_of_the_command():
    # The real command line: the mixed-modes warning is one "vibrapol: warning:" line on
    # stderr while the CSV on stdout carries it as a "# warning:" line.
    import subprocess
    import sys

    path = qc_output(ORCA6)
    done = subprocess.run(
        [sys.executable, "-m", "vibrapol", "table", str(path), "--format", "csv"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0
    err = [line for line in done.stderr.splitlines() if line]
    assert len(err) == 1 and err[0].startswith("vibrapol: warning: ") and "look mixed" in err[0]
    assert f"# warning: {err[0].removeprefix('vibrapol: warning: ')}" in done.stdout


def test_symmetry_report_carries_the_mixed_modes_warning(capsys):
    # `vibrapol symmetry` on the same ORCA 6 file: the JSON names the mixed modes and gives
    # each mode's purity, the modes are not averaged (contract of the default).
    out, shown = run_cli(capsys, "symmetry", str(qc_output(ORCA6)), "--format", "json")
    doc = json.loads(out)
    assert doc["symmetrized"] is False
    assert len(doc["warnings"]) == 1 and "53 (0.56), 54 (0.56)" in doc["warnings"][0]
    assert "look mixed" in shown
    assert doc["modes"][52]["purity"] == pytest.approx(0.556, abs=1e-3)
    out, _ = run_cli(capsys, "symmetry", str(qc_output(ORCA6)))
    assert f"warning: {doc['warnings'][0]}" in out


def test_a_readers_warning_reaches_the_file_header(capsys, tmp_path):
    # Our DALTON water fixture with one printed intensity changed (the tamper of
    # test_source_dalton): the reader warns that its numbers from the derivatives disagree with
    # the printed ones.  That warning must be in the CSV and JSON headers too, not only stderr.
    text = (FIXTURES / "dalton_water_raman.out").read_text()
    assert text.count("32.850000") == 1
    path = tmp_path / "tampered.out"
    path.write_text(text.replace("32.850000", "33.850000"))
    _, comments, shown = run_csv(capsys, str(path))
    assert "disagrees" in shown
    assert any(c.startswith("warning:") and "disagrees" in c for c in comments)
    out, _ = run_cli(capsys, "table", str(path), "--format", "json")
    assert any("disagrees" in w for w in json.loads(out)["header"]["warnings"])
    out, _ = run_cli(capsys, "table", str(path), "--format", "latex")
    assert any(line.startswith("% warning:") and "disagrees" in line for line in out.splitlines())
