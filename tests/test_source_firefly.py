"""The GAMESS-family reader: Firefly (fixture contract and the real dvb output of Firefly 8.0.1),
PC GAMESS and GAMESS-US (fixtures of our own in their layouts).

The PC GAMESS 6.2 layout (``RAMAN INTENSITY:`` rows under ``RAMAN INTENSITIES IN
ANGSTROM**4/AMU``) is the one reported for real PC GAMESS 6.2 outputs; the GAMESS-US layout
(28-space mode numbers, ``SYMMETRY:`` rows, the warning texts) is quoted in cclib 1.8.1's GAMESS
parser, and its Raman heading and banner box are from memory (see
tests/fixtures/generators/make_gamess_family_fixtures.py).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import FIXTURE_ACTIVITY, FIXTURE_RHO, SourceContract, read_quietly, read_real
from vibrapol.errors import AccuracyWarning, InputFormatError, PrintedValueMismatch
from vibrapol.ramantable import raman_table
from vibrapol.sources import firefly, read_modes, sniff

REAL = "Firefly8.0.1_dvb_raman.out"


class TestFireflyContract(SourceContract):
    kind = "firefly"
    fixture = "firefly_water_raman.out"
    family_fixtures = ("pcgamess_water_raman.out", "gamessus_water_raman.out")
    real_file = REAL
    sniff = firefly.sniff
    read = firefly.read_firefly
    # derivatives printed in bohr² with 4 decimals: ±5e-5 bohr² moves S by up to ~1e-4 here
    fixture_atol = 5e-4
    truncations = (
        ("ALPHA POLARIZABILITY DERIVATIVE TENSOR", 6),  # no mode analysis at all
        ("RAMAN ACTIVITY:", 0),  # second group of modes cut before its ratios
        ("2   H            X", 0),  # displacements of the last group cut
    )
    garble = ("    5.6732", "*********")
    tamper = ("      34.050", "      35.050")
    # Firefly8.0.1_dvb_raman.out: 'Firefly version 8.0.1, build number 8540'; RHF because
    # DFTTYP=NONE in the program's option echo; STO-3G
    real_provenance = ("8.0.1+8540", "RHF", "STO-3G")
    # cclib reads the same FREQUENCY rows (2 decimals); first vibration 38.65, last 3816.56 cm-1
    real_freq_ends_cm1 = (38.65, 3816.56)
    # The program's own Sayvetz rotation conditions reach 0.012 in this output (numerical
    # Hessian, not projected).
    real_rigid_overlap_max = 0.01
    real_rotation_rule_max = 0.01  # finite-field derivatives: 0.1 % measured
    # mode 48 of the output: 1948.25 cm-1, activity 577.846, ρ 0.429
    real_table_row = ("1948.25", ("577.8", "0.4289"))
    real_table_header = ("Firefly 8.0.1", "RHF/STO-3G")


def test_fixture_keeps_the_imaginary_mode_and_drops_the_rigid_ones():
    modes = read_quietly(firefly.read_firefly, FIXTURES / "firefly_water_raman.out")
    # the fixture prints '812.44 I' for mode 1 and says modes 2-7 are rotations/translations;
    # mode 7 carries a spurious activity of 1.890 that must not appear
    assert modes.freqs_cm1 == pytest.approx([-812.44, 1650.87, 3700.12])
    table = firefly.read_mode_table((FIXTURES / "firefly_water_raman.out").read_text().splitlines())
    assert table.rigid == (1, 2, 3, 4, 5, 6) and table.activities[6] == pytest.approx(1.890)
    assert table.vibrations.tolist() == [0, 7, 8]


def real_modes():
    return read_real(firefly.read_firefly, REAL)


def printed_table():
    return firefly.read_mode_table(Path(qc_output(REAL)).read_text().splitlines())


def test_real_activities_and_ratios_equal_the_printed_ones():
    table = raman_table(real_modes())
    printed = printed_table()
    vib = printed.vibrations
    s_printed, rho_printed = printed.activities[vib], printed.rho_linear[vib]
    # Activity: 3 printed decimals (half unit 5e-4) plus the rounding of the 4-decimal bohr²
    # derivatives (up to ~2e-5 of S); measured worst 1.4e-3 at S = 67.9.
    assert np.abs(table.activity - s_printed).max() > 0  # really computed, not copied
    np.testing.assert_allclose(table.activity, s_printed, atol=1e-3, rtol=1e-4)
    # ρ: 3 printed decimals; compared where the mode has activity (the program prints a ratio
    # for inactive modes too); measured worst 4.9e-4.
    active = s_printed >= 0.5
    assert active.sum() == 27  # the Ag + Bg vibrations of dvb
    np.testing.assert_allclose(table.rho_linear[active], rho_printed[active], atol=1e-3)
    # ρ for natural light follows from the printed ρ (Long 2002): tolerance doubled (slope ≤ 2)
    natural = 2 * rho_printed / (1 + rho_printed)
    np.testing.assert_allclose(table.rho_natural[active], natural[active], atol=2e-3)
    # spot check, Firefly8.0.1_dvb_raman.out mode 48: 1948.25 cm-1, 577.846, ρ 0.429
    k = int(np.argmin(np.abs(table.freqs_cm1 - 1948.25)))
    assert table.activity[k] == pytest.approx(577.846, abs=0.06)
    assert table.rho_linear[k] == pytest.approx(0.429, abs=1e-3)


def test_real_rotations_are_dropped():
    printed = printed_table()
    assert printed.rigid == (0, 1, 2, 3, 4, 5)  # 'MODES 1 TO 6 ARE TAKEN AS ROTATIONS ...'
    # their spurious activities (12.675 and 9.607 printed) are not in vibrapol's modes
    assert printed.activities[0] == pytest.approx(12.675)
    assert 12.675 not in np.round(raman_table(real_modes()).activity, 3)


def test_real_truncated_in_the_mode_analysis(tmp_path):
    text = qc_output(REAL).read_text()
    cut = tmp_path / "cut.out"
    cut.write_text(text[: text.index("DEPOLARIZATION:", text.index("FREQUENCY:      1552.60"))])
    with pytest.raises(InputFormatError, match="truncated"):
        firefly.read_firefly(cut)


def test_method_from_the_option_echo():
    # layout of the program's '$CONTRL OPTIONS' echo; the functional wins over SCFTYP, MPn next
    echo = ["     $CONTRL OPTIONS", "     ---------------", "     SCFTYP=RHF          RUNTYP=RAMAN"]
    assert firefly.read_method([*echo, "     MPLEVL=       0", "     DFTTYP=B3LYP   "]) == "B3LYP"
    assert firefly.read_method([*echo, "     MPLEVL=       2", "     DFTTYP=NONE    "]) == "MP2"
    assert firefly.read_method([*echo, "     MPLEVL=       0", "     DFTTYP=NONE    "]) == "RHF"
    assert firefly.read_method(["no options here"]) == ""


# -- IR intensities -------------------------------------------------------------------------
def test_real_ir_intensities_in_km_mol():
    # Firefly8.0.1_dvb_raman.out prints 'IR INTENSITY:' in DEBYE**2/AMU-ANGSTROM**2; its
    # strongest vibration (3658.18 cm-1) prints 3.24145 and mode 24 (1021.12 cm-1) 0.43241.
    # 1 D^2/(amu A^2) = 42.2561 km/mol (Wilson, Decius & Cross 1955; checked against DALTON's
    # two printed columns in test_source_dalton.py).
    modes = real_modes()
    ir = modes.ir_intensity_km_mol
    assert ir.shape == (54,)
    k = int(np.argmin(np.abs(modes.freqs_cm1 - 3658.18)))
    assert ir[k] == pytest.approx(3.24145 * 42.2561, rel=2e-6) == pytest.approx(136.971, abs=1e-3)
    assert ir[int(np.argmax(ir))] == ir[k]
    k = int(np.argmin(np.abs(modes.freqs_cm1 - 1021.12)))
    assert ir[k] == pytest.approx(0.43241 * 42.2561, rel=2e-6)
    assert any("converted to km/mol" in n for n in modes.provenance.notes)


def test_real_file_passes_on_no_warning():
    # The only warnings Firefly8.0.1_dvb_raman.out prints are about the build ('not optimized
    # for this CPU type', 'running without fastdiag'): nothing about the results.
    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        firefly.read_firefly(qc_output(REAL))


# -- PC GAMESS and GAMESS-US ----------------------------------------------------------------
PCGAMESS = FIXTURES / "pcgamess_water_raman.out"
GAMESSUS = FIXTURES / "gamessus_water_raman.out"


def _read_recorded(path):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        modes = read_modes(path)
    return modes, [w for w in caught if issubclass(w.category, AccuracyWarning)]


@pytest.mark.parametrize(
    ("path", "program", "version"),
    [(PCGAMESS, "PC GAMESS", "6.2+2068"), (GAMESSUS, "GAMESS-US", "30 SEP 2019 (R2)")],
)
def test_family_members_read_with_their_ratios(path, program, version):
    # Both fixtures print no derivatives: a2, gamma2 come from the printed activity and ratio.
    # Hand values of the fixture's vibrations (tests/_source_contract.py): S = 0, 34.05, 17.01
    # and rho = 1.2/32.85, 3/4, printed with 3 decimals (half a unit 5e-4).
    assert sniff(path) == "firefly"
    modes, _ = _read_recorded(path)
    table = raman_table(modes)
    assert modes.freqs_cm1 == pytest.approx([-812.44, 1650.87, 3700.12])
    assert table.activity == pytest.approx(FIXTURE_ACTIVITY, abs=5e-4)
    assert np.isnan(table.rho_linear[0])
    assert table.rho_linear[1:] == pytest.approx(FIXTURE_RHO[1:], abs=5e-4)
    p = modes.provenance
    assert (p.program, p.program_version, p.method, p.basis) == (program, version, "RHF", "STO-3G")
    # IR rows printed 0.00500, 0.07500, 0.08500 for modes 1, 8, 9 (D^2/amu/A^2) x 42.2561
    assert modes.ir_intensity_km_mol == pytest.approx(
        np.array([0.005, 0.075, 0.085]) * 42.2561, rel=1e-5
    )


def test_pcgamess_raman_intensity_rows_are_activities():
    modes, caught = _read_recorded(PCGAMESS)
    assert not caught
    assert any("labelled RAMAN INTENSITY" in n for n in modes.provenance.notes)


def _pcgamess_with_derivatives() -> str:
    """The PC GAMESS fixture with the Firefly fixture's derivative block (same molecule)."""
    lines = (FIXTURES / "firefly_water_raman.out").read_text().splitlines(keepends=True)
    first = next(i for i, line in enumerate(lines) if "ALPHA POLARIZABILITY DERIVATIVE" in line)
    block = "".join(lines[first - 1 : first + 13])
    assert block.count("D/D") == 9
    return PCGAMESS.read_text().replace(" TOTAL NUMBER OF ATOMS", block + " TOTAL NUMBER OF ATOMS")


def test_pcgamess_with_derivatives_checks_the_printed_rows(tmp_path):
    # The activities vibrapol computes from the derivatives meet the printed RAMAN INTENSITY
    # rows: they are activities, not intensities.
    text = _pcgamess_with_derivatives()
    path = tmp_path / "pcgamess_with_derivatives.out"
    path.write_text(text)
    modes = read_quietly(firefly.read_firefly, path)  # a mismatch would raise here
    assert modes.dalpha_dx is not None
    assert raman_table(modes).activity == pytest.approx(FIXTURE_ACTIVITY, abs=5e-4)
    tampered = tmp_path / "tampered.out"
    tampered.write_text(text.replace("       34.050", "       35.050"))
    with pytest.warns(PrintedValueMismatch, match="Raman activity"):
        firefly.read_firefly(tampered)


def test_gamessus_warnings_are_passed_on():
    # the fixture prints the stationary-point box twice and the mode-choice warning once
    # (texts quoted in cclib 1.8.1's GAMESS parser)
    modes, caught = _read_recorded(GAMESSUS)
    messages = [str(w.message) for w in caught]
    assert len(messages) == 2 and all("\n" not in m for m in messages)
    assert "THE VIBRATIONAL ANALYSIS IS NOT VALID" in messages[0]
    assert "printed 2 times" in messages[0] and str(GAMESSUS) in messages[0]
    assert "MODE 1 HAS BEEN CHOSEN AS A VIBRATION" in messages[1]
    assert "PLEASE VERIFY" in messages[1]
    notes = modes.provenance.notes
    assert sum("printed a warning about its results" in n for n in notes) == 2


# -- layouts not known here ------------------------------------------------------------------
@pytest.mark.parametrize(
    ("old", "new", "match"),
    [
        # a Raman heading without the activity's unit: the rows could be anything
        (
            "RAMAN INTENSITIES IN ANGSTROM**4/AMU",
            "RAMAN INTENSITIES IN ARBITRARY UNITS",
            "unrecognised layout of the normal coordinate analysis at line 42",
        ),
        # a row of Raman data under a label not known here
        ("  DEPOLARIZATION:", " DEPOLARIZATION U:", "row 'DEPOLARIZATION U' is not one known"),
    ],
)
def test_unknown_layout_is_named_not_called_truncated(tmp_path, old, new, match):
    path = tmp_path / "variant.out"
    path.write_text(PCGAMESS.read_text().replace(old, new))
    with pytest.raises(InputFormatError, match=match) as info:
        firefly.read_firefly(path)
    assert "truncated" not in str(info.value)


def test_unknown_derivative_columns_are_named_and_skipped(tmp_path):
    # contract: a derivative block in another column order is not read wrongly; the printed
    # activities and ratios (the program's own numbers) stand in, with a warning
    text = (FIXTURES / "firefly_water_raman.out").read_text()
    path = tmp_path / "columns.out"
    path.write_text(text.replace("ALP-XY     ALP-YY", "ALP-YY     ALP-XY"))
    with pytest.warns(AccuracyWarning, match="unrecognised layout of the polarizability deriv"):
        modes = firefly.read_firefly(path)
    assert modes.dalpha_dx is None
    table = raman_table(modes)
    assert table.activity == pytest.approx(FIXTURE_ACTIVITY, abs=5e-4)
    assert table.rho_linear[1:] == pytest.approx(FIXTURE_RHO[1:], abs=5e-4)
    assert any("printed activities and ratios are used" in n for n in modes.provenance.notes)
    # without printed Raman rows to stand in, the same block is refused
    no_ratios = tmp_path / "no_ratios.out"
    no_ratios.write_text(
        "".join(
            line
            for line in path.read_text().splitlines(keepends=True)
            if "DEPOLARIZATION:" not in line and "RAMAN ACTIVITY:" not in line
        )
    )
    with pytest.raises(InputFormatError, match="unrecognised layout of the polarizability"):
        firefly.read_firefly(no_ratios)


def test_row_cut_at_the_end_of_the_file_is_truncated(tmp_path):
    text = PCGAMESS.read_text()
    path = tmp_path / "cut.out"
    path.write_text(text[: text.index("34.050") + 3])
    with pytest.raises(InputFormatError, match="truncated"):
        firefly.read_firefly(path)


def _variant(tmp_path, old: str, new: str):
    text = GAMESSUS.read_text()
    assert old in text
    path = tmp_path / "variant.out"
    path.write_text(text.replace(old, new))
    return path


def test_activity_rows_without_a_unit_heading_are_read_and_noted(tmp_path):
    # contract: a row labelled RAMAN ACTIVITY names its quantity; without any Raman heading it
    # is read in the family's unit for activities, and the provenance says so
    heading = "     RAMAN ACTIVITIES IN ANGSTROM**4/AMU, DEPOLARIZATIONS ARE DIMENSIONLESS\n"
    modes, _ = _read_recorded(_variant(tmp_path, heading, ""))
    assert raman_table(modes).activity == pytest.approx(FIXTURE_ACTIVITY, abs=5e-4)
    assert any("no unit heading for the RAMAN ACTIVITY rows" in n for n in modes.provenance.notes)


def test_ir_rows_without_a_unit_are_left_out_not_refused(tmp_path):
    old = "IR INTENSITIES IN DEBYE**2/AMU-ANGSTROM**2,"
    modes, _ = _read_recorded(_variant(tmp_path, old, "IR INTENSITIES,"))
    assert modes.ir_intensity_km_mol is None
    assert any("IR INTENSITY rows not read" in n for n in modes.provenance.notes)
    assert raman_table(modes).rho_linear[1:] == pytest.approx(FIXTURE_RHO[1:], abs=5e-4)


def test_any_warning_line_inside_the_analysis_is_passed_on(tmp_path):
    # invented text for this test: a warning line the rules do not know, inside the analysis
    line = " *** WARNING: INVENTED TEXT ABOUT THE HESSIAN FOR THIS TEST\n"
    old = " MODES 2 TO 7 ARE TAKEN AS ROTATIONS AND TRANSLATIONS.\n"
    _, caught = _read_recorded(_variant(tmp_path, old, line + old))
    messages = [str(w.message) for w in caught]
    assert any("INVENTED TEXT ABOUT THE HESSIAN" in m for m in messages)
    # outside the result sections an unknown warning (e.g. about the CPU) is not repeated
    text = GAMESSUS.read_text().replace(" ATOM      ATOMIC", line + " ATOM      ATOMIC", 1)
    path = tmp_path / "outside.out"
    path.write_text(text)
    _, caught = _read_recorded(path)
    assert not any("INVENTED TEXT" in str(w.message) for w in caught)
