"""The Q-Chem reader: block parsers on a fixture of our own, and the real Q-Chem 5.4.1 output.

The fixture (tests/fixtures/qchem54_co2.out, written by
tests/fixtures/generators/make_orca_qchem_fixtures.py) has Q-Chem's layout; its frequencies, modes,
force constants and reduced masses come from a PySCF RHF/STO-3G Hessian of CO2, its Raman
activities, ratios, IR intensities and polarizability are invented.
"""

from __future__ import annotations

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import BOHR3_ANG3, cclib_data, table_rows
from vibrapol import invariants as inv
from vibrapol.cli import main
from vibrapol.errors import InputFormatError
from vibrapol.ramantable import raman_table
from vibrapol.sources import read_modes, sniff
from vibrapol.sources.qchem import parse_qchem, read_qchem, sniff_qchem, vibration_blocks
from vibrapol.vibrations import rigid_body_vectors

CO2 = FIXTURES / "qchem54_co2.out"
REAL = "QChem5.4.1_dvb_raman.out"


def _blocks(path, n_atoms):
    lines = path.read_text().splitlines()
    title = next(i for i, line in enumerate(lines) if "VIBRATIONAL ANALYSIS" in line)
    return vibration_blocks(lines, title, n_atoms, str(path))


def _reduced_masses(ms):
    """μ_k = 1 / Σ_i L_ki² / m_i (Wilson, Decius & Cross, Molecular Vibrations, 1955)."""
    return 1.0 / np.sum(ms.modes**2 / np.repeat(ms.masses_da, 3)[None, :], axis=1)


# -- sniffing and the fixture -----------------------------------------------------------------
def test_sniffing_by_content():
    assert sniff(CO2) == "qchem"
    assert sniff_qchem(CO2.read_text()[:500], "")
    assert not sniff_qchem((FIXTURES / "orca5_co2.out").read_text(), "")


def test_fixture_blocks_of_three_and_a_partial_one():
    ms = read_qchem(CO2)
    # fixture: modes 1-3 in the first block, mode 4 alone in the second
    np.testing.assert_array_equal(ms.freqs_cm1, [532.44, 532.44, 1473.28, 2618.84])
    np.testing.assert_array_equal(ms.masses_da, [12.0, 15.99491, 15.99491])  # "Has Mass" lines
    assert ms.provenance.program_version == "5.4.1"
    assert (ms.provenance.method, ms.provenance.basis) == ("HF", "STO-3G")  # $rem section
    # first "Total energy in the final basis set" of the job, not the displaced one after it
    assert ms.energy_hartree == pytest.approx(-185.0681058380, abs=1e-10)


def test_fixture_activities_ratios_and_polarizability():
    ms = read_qchem(CO2)
    # fixture rows: Raman Intens 0, 0, 21.305, 0; Depolar 0, 0, 0.184, 0
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), [0, 0, 21.305, 0], atol=1e-9)
    rho = inv.rho_linear(ms.a2, ms.gamma2)
    assert rho[2] == pytest.approx(0.184, abs=1e-9) and np.isnan(rho[[0, 1, 3]]).all()
    table = raman_table(ms, degeneracy_tol_cm1=0.0)
    # ρ_natural = 2ρ/(1+ρ) (D. A. Long, The Raman Effect, 2002, ch. 5)
    assert table.rho_natural[2] == pytest.approx(2 * 0.184 / 1.184, abs=1e-9)
    # printed as −α: diag(−10.21, −10.21, −25.73) a.u. in the fixture
    np.testing.assert_allclose(
        np.diag(ms.polarizability_ang3), np.array([10.21, 10.21, 25.73]) * BOHR3_ANG3, rtol=1e-8
    )


def test_fixture_reduced_masses_follow_from_the_modes():
    # The fixture's "Red. Mass:" row (4 decimals) was printed from the exact modes; the 3-decimal
    # displacements must give it back to print precision.
    ms = read_qchem(CO2)
    np.testing.assert_allclose(_reduced_masses(ms), [12.8774, 12.8774, 15.9949, 12.8774], rtol=2e-3)


def test_fixture_ir_row():
    blocks = _blocks(CO2, 3)
    np.testing.assert_array_equal(blocks.ir_km_mol, [12.341, 12.341, 0.0, 345.672])  # fixture


# -- bad input --------------------------------------------------------------------------------
@pytest.mark.parametrize(("marker", "keep"), [("Mode:", 12), ("Mode:                 4", 3)])
def test_truncated_file_gives_one_line_error(tmp_path, marker, keep):
    lines = CO2.read_text().splitlines()
    i = next(
        k
        for k, line in enumerate(lines)
        if line.lstrip().startswith(marker.lstrip()) and marker in line
    )
    path = tmp_path / "cut.out"
    path.write_text("\n".join(lines[: i + keep]) + "\n")
    with pytest.raises(InputFormatError, match="truncated") as err:
        read_modes(path)
    assert "\n" not in str(err.value) and str(path) in str(err.value)


def test_garbled_row(tmp_path):
    path = tmp_path / "garbled.out"
    path.write_text(CO2.read_text().replace("21.305", "21.3o5"))
    with pytest.raises(InputFormatError, match="expected numbers"):
        read_qchem(path)


def test_no_vibrational_analysis():
    with pytest.raises(InputFormatError, match="^x.out: Q-Chem output has no vibrational data"):
        parse_qchem("Welcome to Q-Chem\n", where="x.out")


def test_cli_prints_the_fixture(capsys):
    assert main(["table", str(CO2)]) == 0
    out = capsys.readouterr().out
    assert "Q-Chem 5.4.1" in out and "HF/STO-3G" in out and "2618.84" in out


# -- the real Q-Chem output (../shared/qc-outputs) --------------------------------------------
@pytest.fixture(scope="module")
def real():
    path = qc_output(REAL)
    return path, read_qchem(path), _blocks(path, 20)


@pytest.mark.parametrize(
    ("mode", "freq", "act", "rho"),
    [
        # pasted from the VIBRATIONAL ANALYSIS blocks of the file (1-based mode numbers)
        (1, -106.88, 2.048, 0.750),  # one of the two imaginary modes (qc-outputs README)
        (2, -102.92, 0.000, None),
        (41, 1785.84, 587.499, 0.408),
        (50, 3463.95, 142.523, 0.185),
        (11, 580.32, 7.655, 0.354),
    ],
)
def test_real_values_as_printed(real, mode, freq, act, rho):
    _, ms, _ = real
    k = mode - 1
    assert ms.freqs_cm1[k] == freq
    assert inv.activity(ms.a2, ms.gamma2)[k] == pytest.approx(act, abs=5e-4)
    got = inv.rho_linear(ms.a2, ms.gamma2)[k]
    assert np.isnan(got) if rho is None else got == pytest.approx(rho, abs=5e-4)


def test_real_every_mode_as_printed(real):
    _, ms, blocks = real
    assert ms.n_modes == 54 and int((ms.freqs_cm1 < 0).sum()) == 2
    np.testing.assert_array_equal(ms.freqs_cm1, blocks.freqs_cm1)
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), blocks.activity, atol=1e-9)
    active = blocks.activity > 0
    rho = inv.rho_linear(ms.a2, ms.gamma2)
    np.testing.assert_allclose(rho[active], blocks.rho_linear[active], atol=1e-9)
    assert np.isnan(rho[~active]).all()
    table = raman_table(ms, degeneracy_tol_cm1=0.0)
    shown = np.isfinite(table.rho_linear)
    r = blocks.rho_linear[shown]
    # ρ_natural = 2ρ/(1+ρ) (D. A. Long, The Raman Effect, 2002, ch. 5)
    np.testing.assert_allclose(table.rho_natural[shown], 2 * r / (1 + r), atol=1e-9)


def test_real_agrees_with_cclib(real):
    path, ms, blocks = real
    data = cclib_data(path.name)  # reference library
    np.testing.assert_array_equal(ms.freqs_cm1, data.vibfreqs)
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), data.vibramans, atol=1e-9)
    np.testing.assert_array_equal(blocks.ir_km_mol, data.vibirs)
    # Printed reduced masses (4 decimals) from our modes and masses: this checks that Q-Chem's
    # vectors are Cartesian displacements (not mass-weighted); 3-decimal displacements limit
    # the agreement (worst 0.28 %, mode 42).
    np.testing.assert_allclose(_reduced_masses(ms), data.vibrmasses, rtol=5e-3)


def test_real_mutual_exclusion(real):
    # dvb is centrosymmetric (C2h): IR-active modes are Raman-inactive and vice versa (rule of
    # mutual exclusion, common practice).  Q-Chem used the symmetry, so it holds both ways.
    _, _, blocks = real
    s_max = blocks.activity.max()
    ir_active = blocks.ir_km_mol >= 0.1
    assert ir_active.sum() >= 20
    assert blocks.activity[ir_active].max() <= 1e-3 * s_max
    raman_active = blocks.activity >= 1e-3 * s_max
    assert blocks.ir_km_mol[raman_active].max() == 0.0


def test_real_modes_and_polarizability(real):
    _, ms, _ = real
    rigid = rigid_body_vectors(ms.coordinates_ang, ms.masses_da)
    # orthogonal to translations and rotations to the precision of 3-decimal displacements
    assert np.abs(ms.modes @ rigid.T).max() < 5e-3
    # printed "Polarizability Matrix (a.u.)": diagonal −126.7909180, −68.1660968, −11.2456351
    np.testing.assert_allclose(
        np.diag(ms.polarizability_ang3) / BOHR3_ANG3,
        [126.7909180, 68.1660968, 11.2456351],
        atol=1e-7,
    )
    p = ms.provenance
    assert (p.program, p.program_version, p.method, p.basis) == (
        "Q-Chem",
        "5.4.1",
        "B3LYP",
        "STO-3G",
    )
    assert "printed by Q-Chem" in p.masses


def test_real_cli_table(real, capsys):
    path, _, blocks = real
    rows = table_rows(capsys, str(path), "--degeneracy-tol-cm1", "0")
    assert len(rows) == 54
    for k, row in enumerate(rows):
        assert float(row["frequency_cm1"]) == blocks.freqs_cm1[k]
        assert float(row["activity"]) == pytest.approx(blocks.activity[k], abs=1e-9)
        if blocks.activity[k] > 0:
            assert float(row["rho_linear"]) == pytest.approx(blocks.rho_linear[k], abs=1e-6)
        else:
            assert row["rho_linear"] == "" and row["polarized"] == "false"


# -- IR intensities and the program's own warnings ---------------------------------------------
def test_fixture_ir_intensities_in_the_modeset():
    # qchem54_co2.out prints 'IR Intens:' 12.341, 12.341, 0.000, 345.672 (km/mol, Q-Chem's
    # unit; this fixture has no unit banner, which the provenance says)
    ms = read_qchem(FIXTURES / "qchem54_co2.out")
    np.testing.assert_array_equal(ms.ir_intensity_km_mol, [12.341, 12.341, 0.0, 345.672])
    assert any("no unit banner" in n for n in ms.provenance.notes)


def test_fixture_with_no_imaginary_mode_passes_on_nothing():
    # the fixture prints 'This Molecule has  0 Imaginary Frequencies': not a warning
    import warnings

    from vibrapol.errors import AccuracyWarning

    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        read_qchem(FIXTURES / "qchem54_co2.out")


def test_real_ir_intensities_and_imaginary_remark():
    # QChem5.4.1_dvb_raman.out: banner 'INFRARED INTENSITIES (KM/MOL)'; 'IR Intens:' of modes
    # 1-3 is 0.000, 0.000, 0.419 and of mode 4 0.313; line 4661 'This Molecule has  2
    # Imaginary Frequencies'
    from vibrapol.errors import AccuracyWarning

    with pytest.warns(AccuracyWarning, match="line 4661: This Molecule has 2 Imaginary Freq"):
        ms = read_qchem(qc_output(REAL))
    np.testing.assert_array_equal(ms.ir_intensity_km_mol[:4], [0.0, 0.0, 0.419, 0.313])
    assert any("Imaginary Frequencies" in n for n in ms.provenance.notes)


def test_row_of_another_length_mid_file_is_an_unknown_layout(tmp_path):
    # contract (error text): a complete file whose block differs is not called truncated
    text = CO2.read_text()
    old = "Depolar:           0.000                  0.000                  0.184"
    assert old in text
    path = tmp_path / "layout.out"
    path.write_text(text.replace(old, "Depolar:           0.000                  0.000"))
    with pytest.raises(InputFormatError, match="unrecognised layout of the vibrational anal") as e:
        read_qchem(path)
    assert "truncated" not in str(e.value) and "line 57" in str(e.value)
