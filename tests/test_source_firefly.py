"""The Firefly reader: fixture contract, and the real dvb output of Firefly 8.0.1."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import SourceContract, read_quietly, read_real
from vibrapol.errors import InputFormatError
from vibrapol.ramantable import raman_table
from vibrapol.sources import firefly

REAL = "Firefly8.0.1_dvb_raman.out"


class TestFireflyContract(SourceContract):
    kind = "firefly"
    fixture = "firefly_water_raman.out"
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
