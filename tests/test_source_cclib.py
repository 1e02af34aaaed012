"""The generic cclib reader, and a ModeSet that knows activities but not ρ.

cclib (a reference library) parses the ORCA- and Q-Chem-layout fixtures of our own
(tests/fixtures/*.out: modes from PySCF RHF/STO-3G Hessians, Raman numbers invented); the real
outputs in ../shared/qc-outputs check the fallback on Gaussian, and the clear errors on files
without vibrations (NWChem, Molpro) or that cclib cannot parse (ORCA 6.0.1).
"""

from __future__ import annotations

import dataclasses
import json
import warnings

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import cclib_data, csv_records, table_rows
from vibrapol.cli import main
from vibrapol.errors import AccuracyWarning, InputFormatError, ShapeError, VibrapolError
from vibrapol.output.tables import table_csv, table_json, table_text
from vibrapol.ramantable import raman_table
from vibrapol.sources import read_modes, readers
from vibrapol.sources.cclib_generic import read_cclib, sniff_cclib
from vibrapol.sources.modes_json import read_modes_json, write_modes_json
from vibrapol.sources.orca import read_orca
from vibrapol.sources.qchem import read_qchem

ORCA_CO2 = FIXTURES / "orca5_co2.out"
QCHEM_CO2 = FIXTURES / "qchem54_co2.out"


# -- sniffing ---------------------------------------------------------------------------------
def test_sniffing_uses_cclib_program_detection_and_comes_last():
    assert sniff_cclib(ORCA_CO2.read_text(), "") and sniff_cclib(QCHEM_CO2.read_text(), "")
    assert not sniff_cclib("no program wrote this\n1.0 2.0 3.0\n", "")
    assert not sniff_cclib('{"format": "vibrapol.modes"}', "")
    assert list(readers())[-1] == "cclib"  # the fallback is tried after every reader of our own


# -- fixtures ---------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("path", "own_reader", "activity", "masses"),
    [
        # fixture RAMAN SPECTRUM / "Raman Intens:" rows; masses printed in each fixture
        (ORCA_CO2, read_orca, [0.0, 0.0, 21.3054, 0.0], [12.011, 15.999, 15.999]),
        (QCHEM_CO2, read_qchem, [0.0, 0.0, 21.305, 0.0], [12.0, 15.99491, 15.99491]),
    ],
)
def test_fixture_through_cclib(path, own_reader, activity, masses):
    ms = read_modes(path, kind="cclib")
    assert ms.provenance.source_kind == "cclib"
    np.testing.assert_array_equal(ms.freqs_cm1, [532.44, 532.44, 1473.28, 2618.84])
    np.testing.assert_allclose(ms.activity, activity, atol=1e-12)
    np.testing.assert_array_equal(ms.masses_da, masses)
    assert ms.a2 is None and ms.gamma2 is None and not ms.has_raman and ms.has_activity
    # same printed vectors, same conversion: the modes agree with our own reader's (up to sign)
    ours = own_reader(path)
    np.testing.assert_allclose(np.abs(np.sum(ms.modes * ours.modes, axis=1)), 1.0, atol=1e-9)
    np.testing.assert_allclose(ms.modes @ ms.modes.T, np.eye(4), atol=1e-10)


def test_table_has_activities_and_empty_rho():
    ms = read_cclib(ORCA_CO2)
    table = raman_table(ms, degeneracy_tol_cm1=0.0)
    np.testing.assert_allclose(table.activity, [0.0, 0.0, 21.3054, 0.0], atol=1e-12)
    assert np.isnan(table.rho_linear).all() and np.isnan(table.a2).all()
    assert not table.polarized.any()
    rows = csv_records(table_csv(table))
    assert rows[2]["activity"] == "21.3054"
    assert all(rows[2][c] == "" for c in ("a2", "gamma2", "rho_linear", "rho_natural", "polarized"))
    doc = json.loads(table_json(table))
    assert doc["modes"][2]["rho_linear"] is None and doc["modes"][2]["polarized"] is None
    assert "rho unknown" in table_text(table)


def test_activity_only_modeset_round_trips_through_json(tmp_path):
    ms = read_cclib(QCHEM_CO2)
    back = read_modes_json(write_modes_json(ms, tmp_path / "co2.modes.json"))
    np.testing.assert_array_equal(back.activity, ms.activity)
    np.testing.assert_array_equal(back.modes, ms.modes)
    assert back.a2 is None
    # the file read is now the JSON one; the output it came from is kept as a note
    assert back.provenance == dataclasses.replace(
        ms.provenance,
        source_file=str(tmp_path / "co2.modes.json"),
        notes=(*ms.provenance.notes, f"converted from {ms.provenance.source_file}"),
    )


def test_activity_field_rules():
    ms = read_cclib(QCHEM_CO2)
    with pytest.raises(VibrapolError, match="activities but no depolarization"):
        ms.raman_invariants()
    with pytest.raises(ShapeError, match="give activity only when"):
        type(ms)(**{**_fields(ms), "a2": np.zeros(4), "gamma2": np.zeros(4)})
    with pytest.raises(ShapeError, match=r"activity should be an array of shape \(4\)"):
        type(ms)(**{**_fields(ms), "activity": np.zeros(3)})
    sub = ms.subset([2, 3])
    np.testing.assert_array_equal(sub.activity, [21.305, 0.0])


def _fields(ms):
    import dataclasses

    return {f.name: getattr(ms, f.name) for f in dataclasses.fields(ms)}


def test_unknown_or_bad_files(tmp_path):
    odd = tmp_path / "odd.txt"
    odd.write_text("a text file no program wrote\n")
    with pytest.raises(InputFormatError, match="cclib does not recognise"):
        read_cclib(odd)
    # an ORCA-layout file cut before its frequencies: cclib reads atoms but no vibrations
    lines = ORCA_CO2.read_text().splitlines()
    cut = next(i for i, line in enumerate(lines) if line.strip() == "VIBRATIONAL FREQUENCIES")
    path = tmp_path / "cut.out"
    path.write_text("\n".join(lines[: cut - 1]) + "\n")
    with pytest.raises(InputFormatError, match="no vibrational data") as err:
        read_cclib(path)
    assert "\n" not in str(err.value)


# -- real outputs (../shared/qc-outputs) ------------------------------------------------------
@pytest.mark.parametrize("name", ["NWChem7.0.0_Trp_polar.out", "Molpro2018.2_Trp_polar.out"])
def test_real_polarizability_only_files_have_no_vibrations(name, capsys):
    path = qc_output(name)
    with pytest.raises(InputFormatError, match="output has no vibrational data"):
        read_modes(path)
    assert main(["table", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "no vibrational data" in err[0]


def test_real_cclib_failure_is_one_clear_line():
    path = qc_output("ORCA6.0.1_dvb_raman.out")  # cclib 1.8.1 fails on it (qc-outputs README)
    with pytest.raises(InputFormatError, match="could not parse this ORCA output.*--kind orca"):
        read_modes(path, kind="cclib")


def test_real_dalton_activities_are_not_taken():
    path = qc_output("DALTON2015_dvb_raman.out")
    with pytest.warns(AccuracyWarning, match="Pol.Int."):
        ms = read_cclib(path)
    assert ms.activity is None and ms.n_modes == 54


@pytest.mark.parametrize("name", ["Gaussian16-A.03_dvb_raman.out", "Gaussian09-D.01_dvb_raman.out"])
def test_real_gaussian_as_generic_fallback(name):
    path = qc_output(name)
    ms = read_modes(path, kind="cclib")
    data = cclib_data(name)
    assert ms.n_modes == 54 and ms.provenance.program == "Gaussian"
    assert (ms.provenance.method, ms.provenance.basis) == ("B3LYP", "STO-3G")
    np.testing.assert_array_equal(ms.activity, data.vibramans)
    if name.startswith("Gaussian16"):
        # pasted from the file's first frequency block: 53.1117, 84.6059, 149.2231 cm⁻¹ and
        # Raman Activ 0.0000, 2.6793, 0.0000
        np.testing.assert_array_equal(ms.freqs_cm1[:3], [53.1117, 84.6059, 149.2231])
        np.testing.assert_array_equal(ms.activity[:3], [0.0, 2.6793, 0.0])
    # mutual exclusion in centrosymmetric dvb (C2h; common practice)
    ir_active = data.vibirs >= 0.1
    assert ir_active.sum() >= 20
    assert ms.activity[ir_active].max() <= 1e-3 * ms.activity.max()


def test_real_gaussian_cli_table(capsys):
    path = qc_output("Gaussian16-A.03_dvb_raman.out")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        rows = table_rows(capsys, str(path), "--kind", "cclib")
    # no stray warnings from cclib reach the user: only vibrapol's note of what it loses
    assert [w.category for w in caught] == [AccuracyWarning]
    assert "generic reader loses" in str(caught[0].message)
    assert len(rows) == 54
    # Raman Activ 1064.0059 printed for the strongest band; the CSV keeps 6 significant digits
    assert max(float(r["activity"]) for r in rows) == pytest.approx(1064.0059, rel=5e-6)
    assert all(r["rho_linear"] == "" and r["a2"] == "" for r in rows)


def test_utf16_copy_reads_like_the_original(tmp_path):
    # cclib gets the text vibrapol decoded, so a UTF-16 copy (with its byte-order mark, as
    # Windows programs save "Unicode" text) gives the same numbers as the UTF-8 original.
    copy = tmp_path / "co2_utf16.out"
    copy.write_bytes(QCHEM_CO2.read_text(encoding="utf-8").encode("utf-16"))
    ms, back = read_cclib(QCHEM_CO2), read_cclib(copy)
    np.testing.assert_array_equal(back.freqs_cm1, ms.freqs_cm1)
    np.testing.assert_array_equal(back.activity, ms.activity)


# -- what the generic reader loses, and what it passes on -------------------------------------
def _read_cclib_recorded(path):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ms = read_modes(path, kind="cclib")
    return ms, [str(w.message) for w in caught if issubclass(w.category, AccuracyWarning)]


@pytest.mark.parametrize(
    ("path", "line", "program", "own"),
    [
        # qchem54_co2.out: first 'Depolar:' row at line 57; orca5_co2.out: 'Mode  freq (cm**-1)
        # Activity  Depolarization' heading at line 121
        (QCHEM_CO2, 57, "QChem", "qchem"),
        (ORCA_CO2, 121, "ORCA", "orca"),
    ],
)
def test_lost_ratios_are_announced(path, line, program, own):
    ms, messages = _read_cclib_recorded(path)
    lost = [m for m in messages if "generic reader loses" in m]
    assert len(lost) == 1 and "\n" not in lost[0]
    assert f"depolarization ratios (line {line})" in lost[0]
    assert f"this {program} output" in lost[0] and f"--kind {own}" in lost[0]
    assert "polarizability derivatives" not in lost[0]  # none printed in these fixtures
    assert any("generic reader loses" in n for n in ms.provenance.notes)


def test_no_announcement_without_ratios(tmp_path):
    # the Q-Chem fixture without its 'Depolar:' rows: nothing is lost, nothing announced
    text = "".join(
        line for line in QCHEM_CO2.read_text().splitlines(keepends=True) if "Depolar" not in line
    )
    path = tmp_path / "no_ratios.out"
    path.write_text(text)
    _, messages = _read_cclib_recorded(path)
    assert not [m for m in messages if "loses" in m]


def test_real_gaussian_fallback_names_both_losses():
    # Gaussian16-A.03_dvb_raman.out: the frequency heading names the depolarization ratios at
    # line 974 and the archive block starts 'PolarDeriv=' at line 1955
    ms, messages = _read_cclib_recorded(qc_output("Gaussian16-A.03_dvb_raman.out"))
    (lost,) = [m for m in messages if "loses" in m]
    assert "depolarization ratios (line 974)" in lost
    assert "polarizability derivatives (line 1955)" in lost
    assert "this Gaussian output" in lost


def test_real_ir_intensities_from_cclib():
    # Gaussian16-A.03_dvb_raman.out prints 'IR Inten' in KM/Mole: 0.0340, 0.0000, 0.3732 for
    # its first three modes (line 982); cclib's vibirs carries them unchanged
    ms, _ = _read_cclib_recorded(qc_output("Gaussian16-A.03_dvb_raman.out"))
    np.testing.assert_array_equal(ms.ir_intensity_km_mol[:3], [0.0340, 0.0, 0.3732])
    assert ms.ir_intensity_km_mol.shape == (54,)


def test_real_program_warnings_passed_on_by_the_generic_reader():
    # DALTON2015_dvb_raman.out line 47761 (the program's own text)
    _, messages = _read_cclib_recorded(qc_output("DALTON2015_dvb_raman.out"))
    (warning,) = [m for m in messages if "printed a warning" in m]
    assert "line 47761" in warning
    assert "Vibrational analysis performed at a non-equilibrium geometry" in warning


@pytest.mark.parametrize("name", ["NWChem7.0.0_Trp_polar.out", "Molpro2018.2_Trp_polar.out"])
def test_real_polarizability_only_files_say_what_they_hold(name):
    with pytest.raises(InputFormatError, match="static polarizability only"):
        read_modes(qc_output(name))
