"""The ORCA reader: block parsers on fixtures of our own, and the real ORCA 5.0.0 / 6.0.1 outputs.

Fixtures (tests/fixtures/orca5_co2.out, orca6_nh3_planar.out, written by
tests/fixtures/generators/make_orca_qchem_fixtures.py) have ORCA's layout; their frequencies and
modes come from PySCF RHF/STO-3G Hessians of CO2 and of planar NH3 (a saddle point), their Raman
activities, ratios, IR intensities and polarizabilities are invented.
"""

from __future__ import annotations

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import BOHR3_ANG3, cclib_data, table_rows
from vibrapol import invariants as inv
from vibrapol.cli import main
from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.ramantable import raman_table
from vibrapol.sources import read_modes, sniff
from vibrapol.sources.orca import (
    find_titles,
    ir_spectrum_block,
    normal_modes_block,
    parse_orca,
    raman_block,
    read_orca,
    sniff_orca,
)
from vibrapol.sources.registry import sniff_text
from vibrapol.vibrations import rigid_body_vectors

CO2 = FIXTURES / "orca5_co2.out"
NH3 = FIXTURES / "orca6_nh3_planar.out"


def _printed(path):
    """Raman and IR rows as printed, by mode index (our block parsers)."""
    lines = path.read_text().splitlines()
    raman = raman_block(lines, find_titles(lines, "RAMAN SPECTRUM")[-1], str(path))
    ir = ir_spectrum_block(lines, find_titles(lines, "IR SPECTRUM")[-1], str(path))
    return raman, ir


# -- sniffing ---------------------------------------------------------------------------------
def test_sniffing_by_content():
    assert sniff(CO2) == "orca" and sniff(NH3) == "orca"
    assert sniff_orca(CO2.read_text()[:2000], "")
    assert not sniff_orca((FIXTURES / "qchem54_co2.out").read_text(), "")
    assert sniff_text("just some text\n1 2 3\n") is None


# -- fixtures ---------------------------------------------------------------------------------
def test_linear_fixture_keeps_3n_minus_5_vibrations():
    ms = read_orca(CO2)
    # fixture: VIBRATIONAL FREQUENCIES block, modes 5-8 ("first vibration is 5" for linear CO2)
    np.testing.assert_array_equal(ms.freqs_cm1, [532.44, 532.44, 1473.28, 2618.84])
    np.testing.assert_array_equal(ms.masses_da, [12.011, 15.999, 15.999])  # fixture (A.U.) table
    np.testing.assert_allclose(ms.coordinates_ang[1], [0.0, 0.0, 1.18], atol=1e-12)
    assert ms.provenance.program == "ORCA" and ms.provenance.program_version == "5.0.0"
    assert ms.provenance.method == "HF" and ms.provenance.basis == "STO-3G"
    assert ms.energy_hartree == pytest.approx(-185.068105837969, abs=1e-12)
    assert "printed by ORCA" in ms.provenance.masses


def test_fixture_activities_and_ratios():
    ms = read_orca(CO2)
    s = inv.activity(ms.a2, ms.gamma2)
    # fixture RAMAN SPECTRUM rows: 0, 0, 21.305400 (rho 0.184210), 0
    np.testing.assert_allclose(s, [0.0, 0.0, 21.3054, 0.0], atol=1e-9)
    rho = inv.rho_linear(ms.a2, ms.gamma2)
    assert rho[2] == pytest.approx(0.18421, abs=1e-9)
    # zero-activity modes carry a printed ratio (0.735512, 0.104402, 0.52) that means nothing
    assert np.isnan(rho[[0, 1, 3]]).all()
    table = raman_table(ms, degeneracy_tol_cm1=0.0)
    # ρ_natural = 2ρ/(1+ρ) (D. A. Long, The Raman Effect, 2002, ch. 5)
    assert table.rho_natural[2] == pytest.approx(2 * 0.18421 / 1.18421, abs=1e-9)
    assert table.polarized.tolist() == [False, False, True, False]


def test_fixture_polarizability_in_ang3():
    alpha = read_orca(CO2).polarizability_ang3
    # fixture raw tensor diag(10.21, 10.21, 25.73) a.u.
    np.testing.assert_allclose(
        np.diag(alpha), np.array([10.21, 10.21, 25.73]) * BOHR3_ANG3, rtol=1e-8
    )
    alpha6 = read_orca(NH3).polarizability_ang3  # ORCA 6 layout of the same block
    np.testing.assert_allclose(
        np.diag(alpha6), np.array([12.82, 12.82, 7.15]) * BOHR3_ANG3, rtol=1e-8
    )


def test_orca6_fixture_imaginary_mode_and_two_mode_blocks():
    ms = read_orca(NH3)
    # fixture: 12 printed modes in two NORMAL MODES blocks, 6 rigid ones dropped
    assert ms.n_modes == 6
    assert ms.freqs_cm1[0] == -987.14  # printed "-987.14 cm**-1 ***imaginary mode***"
    assert ms.provenance.program_version == "6.0.1"


@pytest.mark.parametrize("path", [CO2, NH3])
def test_modes_are_vibrations(path):
    ms = read_orca(path)
    np.testing.assert_allclose(ms.modes @ ms.modes.T, np.eye(ms.n_modes), atol=1e-10)
    # Vibrations are orthogonal to overall translations and rotations (Wilson, Decius & Cross,
    # Molecular Vibrations, 1955, ch. 2).  The fixture modes were made with isotope masses
    # (C 12.000, O 15.995) but print ORCA-style averaged ones (12.011, 15.999): relative mass
    # differences ≈ 1e-3 leave overlaps of that order, hence the tolerance.
    rigid = rigid_body_vectors(ms.coordinates_ang, ms.masses_da)
    assert np.abs(ms.modes @ rigid.T).max() < 1e-3


# -- bad input --------------------------------------------------------------------------------
def _cut(tmp_path, text, marker, extra_lines=3):
    lines = text.splitlines()
    i = next(k for k, line in enumerate(lines) if marker in line)
    path = tmp_path / "cut.out"
    path.write_text("\n".join(lines[: i + extra_lines]) + "\n")
    return path


@pytest.mark.parametrize(
    ("marker", "keep"),
    [("NORMAL MODES", 12), ("RAMAN SPECTRUM", 6), ("VIBRATIONAL FREQUENCIES", 8), ("(A.U.)", 4)],
)
def test_truncated_file_gives_one_line_error(tmp_path, marker, keep):
    path = _cut(tmp_path, CO2.read_text(), marker, extra_lines=keep)
    with pytest.raises(InputFormatError, match="truncated") as err:
        read_modes(path)
    assert "\n" not in str(err.value) and str(path) in str(err.value)


def test_file_without_frequencies(tmp_path):
    path = _cut(tmp_path, CO2.read_text(), "VIBRATIONAL FREQUENCIES", extra_lines=-1)
    with pytest.raises(InputFormatError, match="no vibrational data"):
        read_modes(path)


def test_garbled_number(tmp_path):
    path = tmp_path / "garbled.out"
    path.write_text(CO2.read_text().replace("21.305400", "21.30x400"))
    with pytest.raises(InputFormatError, match="expected numbers"):
        read_orca(path)


def test_cli_prints_the_fixture(capsys):
    assert main(["table", str(CO2)]) == 0
    out = capsys.readouterr().out
    assert "ORCA 5.0.0" in out and "HF/STO-3G" in out and "1473.28" in out


# -- real ORCA outputs (../shared/qc-outputs) -------------------------------------------------
REAL = ["ORCA5.0.0_dvb_raman.out", "ORCA6.0.1_dvb_raman.out"]


@pytest.mark.parametrize(
    ("name", "mode", "freq", "act", "rho"),
    [
        # pasted from the RAMAN SPECTRUM blocks of the files (ORCA's 0-based mode numbers)
        ("ORCA5.0.0_dvb_raman.out", 47, 1737.78, 1037.104624, 0.396167),
        ("ORCA5.0.0_dvb_raman.out", 35, 1260.41, 174.034970, 0.230044),
        ("ORCA5.0.0_dvb_raman.out", 7, 121.66, 2.498442, 0.750000),
        ("ORCA6.0.1_dvb_raman.out", 47, 1739.89, 1036.771663, 0.394501),
        ("ORCA6.0.1_dvb_raman.out", 43, 1558.56, 353.440211, 0.337109),
        ("ORCA6.0.1_dvb_raman.out", 6, 36.86, 0.000035, 0.749920),
    ],
)
def test_real_values_as_printed(name, mode, freq, act, rho):
    ms = read_orca(qc_output(name))
    k = mode - 6  # the first vibration is ORCA's mode 6
    assert ms.freqs_cm1[k] == freq
    assert inv.activity(ms.a2, ms.gamma2)[k] == pytest.approx(act, abs=5e-7)
    assert inv.rho_linear(ms.a2, ms.gamma2)[k] == pytest.approx(rho, abs=5e-7)


@pytest.mark.parametrize("name", REAL)
def test_real_every_mode_as_printed(name):
    path = qc_output(name)
    ms = read_orca(path)
    raman, _ = _printed(path)
    printed = np.array([raman[k] for k in range(6, 60)])
    assert ms.n_modes == 54  # 3N − 6 for dvb, C10H10 (README of qc-outputs)
    np.testing.assert_array_equal(ms.freqs_cm1, printed[:, 0])
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), printed[:, 1], atol=5e-7, rtol=1e-12)
    active = printed[:, 1] > 0
    # printed 6 decimals; the inversion (S, ρ) → (a², γ²) → ρ is exact up to rounding
    rho_modes = inv.rho_linear(ms.a2, ms.gamma2)
    np.testing.assert_allclose(rho_modes[active], printed[active, 2], atol=5e-7)
    assert np.isnan(rho_modes[~active]).all()  # printed activity 0: the printed ρ is ignored
    # The table leaves ρ empty also for activities below 1e-6 of the largest (its rule).
    table = raman_table(ms, degeneracy_tol_cm1=0.0)
    shown = np.isfinite(table.rho_linear)
    assert np.array_equal(shown, printed[:, 1] > 1e-6 * printed[:, 1].max())
    rho = printed[shown, 2]
    np.testing.assert_allclose(table.rho_linear[shown], rho, atol=5e-7)
    # ρ_natural = 2ρ/(1+ρ) (D. A. Long, The Raman Effect, 2002, ch. 5)
    np.testing.assert_allclose(table.rho_natural[shown], 2 * rho / (1 + rho), atol=1e-6)
    np.testing.assert_array_equal(ms.masses_da[:1], [12.011])  # printed (A.U.) table


def test_real_orca5_agrees_with_cclib():
    path = qc_output("ORCA5.0.0_dvb_raman.out")
    ms = read_orca(path)
    data = cclib_data(path.name)  # reference library
    np.testing.assert_array_equal(ms.freqs_cm1, data.vibfreqs)
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), data.vibramans, atol=5e-7)
    _, ir = _printed(path)
    np.testing.assert_array_equal([ir[k] for k in range(6, 60)], data.vibirs)


@pytest.mark.parametrize("name", REAL)
def test_real_mutual_exclusion(name):
    # dvb is centrosymmetric (C2h): IR-active modes are Raman-inactive (rule of mutual exclusion,
    # common practice).  ORCA 6.0.1 ran without symmetry and mixes a few near-degenerate g/u
    # pairs (e.g. modes 52/53, 0.16 cm⁻¹ apart), so "clearly IR-active" means ≥ 5 km/mol here.
    path = qc_output(name)
    raman, ir = _printed(path)
    s_max = max(v[1] for v in raman.values())
    ir_active = [k for k, v in ir.items() if v >= 5.0]
    assert len(ir_active) >= 10
    worst = max(raman[k][1] for k in ir_active) / s_max
    assert worst < 1e-3


@pytest.mark.parametrize("name", REAL)
def test_real_mode_conversion(name):
    path = qc_output(name)
    lines = path.read_text().splitlines()
    printed, _ = normal_modes_block(lines, find_titles(lines, "NORMAL MODES")[-1], 60, str(path))
    ms = read_orca(path)
    # ORCA: columns are L/√m normalised, so √m·column must be orthogonal (ORCA's own header text)
    w = printed[:, 6:].T * np.repeat(np.sqrt(ms.masses_da), 3)
    w /= np.linalg.norm(w, axis=1, keepdims=True)
    assert np.abs(w @ w.T - np.eye(54)).max() < 1e-5  # 6 printed decimals
    rigid = rigid_body_vectors(ms.coordinates_ang, ms.masses_da)
    assert np.abs(ms.modes @ rigid.T).max() < 1e-5


@pytest.mark.parametrize("name", REAL)
def test_real_polarizability_and_provenance(name):
    path = qc_output(name)
    ms = read_orca(path)
    # "Isotropic polarizability : 74.15613" (5.0.0) / "74.15626" (6.0.1), a.u., printed
    iso = {"ORCA5.0.0_dvb_raman.out": 74.15613, "ORCA6.0.1_dvb_raman.out": 74.15626}[name]
    assert np.trace(ms.polarizability_ang3) / 3 / BOHR3_ANG3 == pytest.approx(iso, abs=2e-5)
    p = ms.provenance
    assert (p.program, p.basis) == ("ORCA", "STO-3G") and p.program_version == name[4:9]
    assert p.method == "DFT (B88 exchange, LYP correlation, 20% HF exchange)"  # SCF SETTINGS
    assert any("b3lyp" in note for note in p.notes)


@pytest.mark.parametrize("name", REAL)
def test_real_cli_table(name, capsys):
    path = qc_output(name)
    # By default the table shows the file's own numbers (ORCA 6.0.1 ran without symmetry and
    # some of its modes are mixed: they are named in a warning, not averaged).
    rows = table_rows(capsys, str(path))
    raman, _ = _printed(path)
    assert len(rows) == 54
    for row, k in zip(rows, range(6, 60), strict=True):
        assert float(row["frequency_cm1"]) == raman[k][0]
        # CSV keeps every printed number, symmetry-forbidden noise included (only the text
        # table shows that as 0, with a note)
        assert float(row["activity"]) == pytest.approx(raman[k][1], rel=1e-5, abs=1e-6)
        if raman[k][1] > 1e-3:
            assert float(row["rho_linear"]) == pytest.approx(raman[k][2], abs=1e-6)
        if raman[k][1] == 0.0:
            assert row["rho_linear"] == "" and row["rho_natural"] == ""


def test_parse_from_text_names_the_source():
    with pytest.raises(InputFormatError, match="^mytext: ORCA output has no vibrational data"):
        parse_orca("* O   R   C   A *\n", where="mytext")


# -- ORCA 6 with symmetry (usesym): labelled frequency list and NORMAL MODES columns ------------
USESYM = FIXTURES / "orca6_n2h2_usesym.out"
WARNED = FIXTURES / "orca5_n2h2_warnings.out"


def test_usesym_layout_is_read_with_the_printed_species():
    ms = read_orca(USESYM)
    # fixture: "6: 1364.33 cm**-1 1-Bu" ... (trans-diazene, PySCF RHF/STO-3G Hessian)
    np.testing.assert_array_equal(ms.freqs_cm1, [1364.33, 1368.77, 1742.33, 2011.27, 4074.98,
                                                 4077.13])  # fmt: skip
    assert ms.program_irreps == ("Bu", "Au", "Ag", "Ag", "Ag", "Bu")
    # the one Au vibration of planar trans-HN=NH (3Ag + Au + 2Bu, common practice) is the
    # torsion, out of the molecular plane (z here): its displacements are along z only
    au = ms.displacements()[1]
    assert np.abs(au[:, :2]).max() < 1e-6 and np.abs(au[:, 2]).max() > 0.5
    assert any("ORCA ran with symmetry (C2h)" in n for n in ms.provenance.notes)


def test_usesym_symmetry_command_compares_species(capsys):
    assert main(["symmetry", str(USESYM)]) == 0
    assert "species labels agree with vibrapol's for all 6 modes" in capsys.readouterr().out


def test_usesym_wrong_label_is_named(tmp_path):
    # contract: a printed species that is not vibrapol's is reported with the mode number
    path = tmp_path / "relabelled.out"
    path.write_text(USESYM.read_text().replace("1-Au", "1-Bg"))
    ms = read_orca(path)
    from vibrapol.symmetry import mode_symmetry

    with pytest.warns(AccuracyWarning, match=r"mode 2 \(printed Bg, vibrapol Au\)"):
        mode_symmetry(ms, symmetrize=False)


def test_usesym_labels_must_agree_between_blocks(tmp_path):
    lines = USESYM.read_text().splitlines()
    k = next(i for i, line in enumerate(lines) if line.rstrip().endswith("1-Au"))
    lines[k] = lines[k].replace("1-Au", "1-Ag")  # only in the frequency list
    path = tmp_path / "edited.out"
    path.write_text("\n".join(lines))
    with pytest.warns(AccuracyWarning, match="mode 7 is labelled Ag in VIBRATIONAL"):
        ms = read_orca(path)
    assert ms.program_irreps is None
    np.testing.assert_array_equal(ms.freqs_cm1, read_orca(USESYM).freqs_cm1)


def test_modes_json_keeps_program_species():
    from vibrapol.sources.modes_json import modeset_from_dict, modeset_to_dict

    ms = read_orca(USESYM)
    back = modeset_from_dict(modeset_to_dict(ms))
    assert back.program_irreps == ms.program_irreps
    assert back.subset([1, 0]).program_irreps == ("Au", "Bu")


# -- ORCA's own warnings -------------------------------------------------------------------------
def test_orca_warnings_are_passed_on():
    with pytest.warns(AccuracyWarning) as record:
        ms = read_orca(WARNED)
    said = [str(w.message) for w in record if issubclass(w.category, AccuracyWarning)]
    # fixture lines: "SCF NOT CONVERGED", "It seems that the Hessian Matrix ISN'T COMPLETE!",
    # "WARNING: the displaced calculation 7 did not finish" (twice)
    assert len(said) == 3
    assert any("Hessian is incomplete" in s for s in said)
    assert any("SCF that did not converge" in s for s in said)
    assert any("displaced calculation 7 did not finish (line 75, and 1 more times)" in s
               for s in said)  # fmt: skip
    assert all(s.startswith(str(WARNED)) for s in said)
    notes = ms.provenance.notes
    assert sum("ORCA warning passed on" in n for n in notes) == 3
    # the set-up block before the input is kept as a note, not a warning
    assert any(n.startswith("ORCA set-up: WARNING: Gradients needed") for n in notes)


@pytest.mark.parametrize("name", REAL)
def test_real_outputs_give_no_accuracy_warning(name):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        ms = read_orca(qc_output(name))
    # printed before the input: "WARNING: Symmetry is not implemented for Numerical Hessian ...
    # ===> : Turning off Symmetry"
    assert any("Turning off Symmetry" in n for n in ms.provenance.notes)
    assert ms.program_irreps is None


# -- IR intensities (km/mol) --------------------------------------------------------------------
@pytest.mark.parametrize(
    ("name", "mode", "km_mol"),
    [
        # pasted from the IR SPECTRUM blocks ('Int' column over 'km/mol'; ORCA's mode numbers)
        ("ORCA5.0.0_dvb_raman.out", 6, 0.08),
        ("ORCA5.0.0_dvb_raman.out", 8, 0.41),
        ("ORCA6.0.1_dvb_raman.out", 6, 0.02),
        ("ORCA6.0.1_dvb_raman.out", 8, 0.37),
    ],
)
def test_real_ir_intensities_as_printed(name, mode, km_mol):
    assert read_orca(qc_output(name)).ir_intensity_km_mol[mode - 6] == km_mol


def test_real_orca5_ir_intensities_agree_with_cclib():
    path = qc_output("ORCA5.0.0_dvb_raman.out")
    data = cclib_data(path.name)  # reference library
    np.testing.assert_array_equal(read_orca(path).ir_intensity_km_mol, data.vibirs)


def test_fixture_ir_intensities():
    # fixture IR SPECTRUM rows: 12.34, 12.34, 0.00, 345.67 km/mol
    np.testing.assert_array_equal(read_orca(CO2).ir_intensity_km_mol, [12.34, 12.34, 0.0, 345.67])


def test_ir_block_without_km_mol_column_is_not_guessed(tmp_path):
    text = CO2.read_text().replace(
        " Mode   freq       eps      Int      T**2         TX        TY        TZ\n"
        "       cm**-1   L/(mol*cm) km/mol    a.u.\n",
        " Mode    freq (cm**-1)   T**2         TX         TY         TZ\n",
    )
    assert "km/mol" not in text.split("IR SPECTRUM")[1].split("RAMAN")[0]
    path = tmp_path / "old_ir.out"
    path.write_text(text)
    ms = read_orca(path)
    assert ms.ir_intensity_km_mol is None
    assert any("IR intensities not read" in n for n in ms.provenance.notes)


# -- an unknown layout is not a truncated file ----------------------------------------------------
def test_unknown_layout_is_named_as_such(tmp_path):
    lines = CO2.read_text().splitlines()
    k = next(i for i, line in enumerate(lines) if line.split() == ["6", "7", "8"]) + 4
    lines[k] = "   something ORCA never printed before"
    path = tmp_path / "variant.out"
    path.write_text("\n".join(lines))
    with pytest.raises(InputFormatError) as err:
        read_orca(path)
    message = str(err.value)
    assert f"unrecognised layout of the ORCA NORMAL MODES block at line {k + 1}" in message
    assert "truncated" not in message


def test_warning_inside_a_line_is_passed_on(tmp_path):
    path = tmp_path / "w.out"
    path.write_text(
        CO2.read_text().replace(
            "NORMAL MODES\n------------\n",
            "NORMAL MODES\n------------\n  *** WARNING: the Raman activities are unreliable ***\n",
        )
    )
    with pytest.warns(AccuracyWarning, match=r"ORCA printed: WARNING: the Raman activities are"):
        read_orca(path)
