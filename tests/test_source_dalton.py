"""The DALTON reader: fixture contract, and the real dvb output of DALTON 2015."""

from __future__ import annotations

import functools

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import SourceContract, cclib_data, read_quietly, read_real
from vibrapol.errors import InputFormatError
from vibrapol.ramantable import raman_table
from vibrapol.sources import dalton

REAL = "DALTON2015_dvb_raman.out"


class TestDaltonContract(SourceContract):
    kind = "dalton"
    fixture = "dalton_water_raman.out"
    real_file = REAL
    sniff = dalton.sniff
    read = dalton.read_dalton
    # derivatives with 8 decimals, modes with 6: S moves by ~1e-5 here
    fixture_atol = 1e-4
    truncations = (
        ("Column   6", 3),  # gradient cut, nothing after it
        ("Normal Coordinates (bohrs*amu**(1/2))", 9),  # modes cut after the first atom
        ("Beta(a)**2", 3),  # Raman table cut after two of three rows
    )
    garble = ("5.67316730", "**********")
    tamper = ("32.850000", "33.850000")
    # DALTON2015_dvb_raman.out: 'This is output from DALTON 2015.0', B3LYP/STO-3G
    real_provenance = ("2015.0", "B3LYP", "STO-3G")
    # cclib reads the same 2-decimal frequency table (and sorts it ascending);
    # DALTON2015_dvb_raman.out: mode 54 46.65 cm-1 (lowest), mode 1 3546.72 cm-1 (highest)
    real_freq_ends_cm1 = (46.65, 3546.72)
    real_rigid_overlap_max = 1e-4
    real_rotation_rule_max = 0.01  # numerical derivatives: 0.03 % measured
    # mode 13 of the output: 1738.58 cm-1, Pol.Int. 744.969751 + Depol.Int. 295.066751, ρ 0.396079
    real_table_row = ("1738.58", ("1040", "0.3961"))
    real_table_header = ("DALTON 2015.0", "B3LYP/STO-3G")


def test_fixture_modes_are_put_in_ascending_order():
    lines = (FIXTURES / "dalton_water_raman.out").read_text().splitlines()
    printed = dalton.read_frequencies(lines)
    assert printed == pytest.approx([3749.91, 3650.48, 1602.35])  # highest first, as printed
    modes = read_quietly(dalton.read_dalton, FIXTURES / "dalton_water_raman.out")
    assert modes.freqs_cm1 == pytest.approx([1602.35, 3650.48, 3749.91])
    # the inactive mode's printed 'Dep. Ratio' (0.512345) is noise and is not used
    assert np.isnan(raman_table(modes).rho_linear[0])


def real_modes():
    return read_real(dalton.read_dalton, REAL)


@functools.cache
def real_rows():
    return dalton.read_raman_rows(qc_output(REAL).read_text().splitlines())


def test_real_invariants_activities_and_ratios_equal_the_printed_ones():
    table = raman_table(real_modes())
    rows = real_rows()
    up = slice(None, None, -1)  # printed highest first
    a2, g2 = rows.a2[up], rows.gamma2[up]
    s, rho = rows.activities[up], rows.rho_linear[up]
    # All printed with 6 decimals (half unit 5e-7); the 6-decimal normal coordinates move the
    # values by up to ~6e-5 of themselves (measured): atol 1e-5, rtol 3e-4.
    for computed, printed in ((table.a2, a2), (table.gamma2, g2), (table.activity, s)):
        np.testing.assert_allclose(computed, printed, atol=1e-5, rtol=3e-4)
    np.testing.assert_allclose(
        45 * table.a2 + 4 * table.gamma2, rows.parallel[up], atol=1e-5, rtol=3e-4
    )
    np.testing.assert_allclose(3 * table.gamma2, rows.crossed[up], atol=1e-5, rtol=3e-4)
    # ρ where the mode has intensity (DALTON prints a ratio for every mode); worst 7.6e-6
    active = s >= 1e-2
    assert active.sum() == 27
    np.testing.assert_allclose(table.rho_linear[active], rho[active], atol=1e-4)
    np.testing.assert_allclose(table.rho_natural[active], (2 * rho / (1 + rho))[active], atol=2e-4)
    # spot check, mode 13: 1738.58 cm-1, Pol.Int. 744.969751 + Depol.Int. 295.066751
    k = int(np.argmin(np.abs(table.freqs_cm1 - 1738.58)))
    assert table.activity[k] == pytest.approx(744.969751 + 295.066751, rel=3e-4)
    assert table.rho_linear[k] == pytest.approx(0.396079, abs=1e-4)


def test_real_activity_is_not_what_cclib_reports():
    # cclib 1.8.1 gives Pol.Int. (45a′² + 4γ′²) as the activity; the activity is
    # 45a′² + 7γ′² = Pol.Int. + Depol.Int. (Polavarapu 1990)
    data = cclib_data(REAL)
    table = raman_table(real_modes())
    k = int(np.argmax(table.activity))
    assert data.vibramans[k] == pytest.approx(744.969751, abs=1e-6)
    assert table.activity[k] - data.vibramans[k] == pytest.approx(295.066751, rel=3e-4)


def test_real_truncated_in_the_normal_coordinates(tmp_path):
    text = qc_output(REAL).read_text()
    start = text.index("Normal Coordinates (bohrs*amu**(1/2))")
    cut = tmp_path / "cut.out"
    cut.write_text(text[: start + 5000])
    with pytest.raises(InputFormatError, match="truncated"):
        dalton.read_dalton(cut)


# -- IR intensities and the program's own warnings ---------------------------------------------
def test_real_ir_intensities_from_the_km_mol_column():
    # DALTON2015_dvb_raman.out, 'Vibrational Frequencies and IR Intensities': mode 4 3471.43
    # cm-1 prints 5.520 km/mol, mode 8 3432.91 cm-1 3.654 km/mol
    modes = real_modes()
    ir = modes.ir_intensity_km_mol
    for freq, km_mol in ((3471.43, 5.520), (3432.91, 3.654)):
        assert ir[int(np.argmin(np.abs(modes.freqs_cm1 - freq)))] == km_mol


def test_real_two_ir_columns_give_the_conversion_factor():
    # DALTON prints each IR intensity twice, in km/mol (3 decimals) and in (D/A)**2/amu (4
    # decimals): the ratio is the factor 42.2561 vibrapol uses for the GAMESS family (derived
    # in vibrapol.units from CODATA constants; Wilson, Decius & Cross 1955).
    from vibrapol.units import DEBYE2_PER_AMU_ANG2_TO_KM_MOL as factor

    lines = qc_output(REAL).read_text().splitlines()
    start = max(i for i, s in enumerate(lines) if "Vibrational Frequencies and IR Int" in s)
    rows = [s.split() for s in lines[start + 7 : start + 61]]
    km_mol = np.array([float(r[4]) for r in rows])
    debye2 = np.array([float(r[5]) for r in rows])
    strong = debye2 >= 0.05
    assert strong.sum() >= 10
    # half a unit of each printed last digit (5e-4 km/mol, 5e-5 (D/A)^2/amu x factor), plus
    # 2e-5 relative for DALTON's own constants: the rows' print intervals put its factor at
    # 42.2540-42.2557 (measured), 1e-5 below the CODATA value
    np.testing.assert_allclose(
        km_mol[strong], factor * debye2[strong], atol=5e-4 + factor * 5e-5, rtol=2e-5
    )
    assert factor == pytest.approx(42.2561, abs=1e-4)


def test_real_non_equilibrium_warning_passed_on():
    # DALTON2015_dvb_raman.out line 47761, continued on the two lines after it
    from vibrapol.errors import AccuracyWarning

    with pytest.warns(AccuracyWarning) as record:
        modes = dalton.read_dalton(qc_output(REAL))
    (message,) = [str(w.message) for w in record if "printed a warning" in str(w.message)]
    assert "line 47761" in message and "non-equilibrium geometry" in message
    assert "better results may be obtained using .INTERN" in message and "\n" not in message
    assert any("non-equilibrium" in n for n in modes.provenance.notes)


def test_fixture_ir_intensities():
    # dalton_water_raman.out prints its (invented) km/mol column highest mode first
    lines = (FIXTURES / "dalton_water_raman.out").read_text().splitlines()
    printed = dalton.read_ir_intensities(lines)
    modes = read_quietly(dalton.read_dalton, FIXTURES / "dalton_water_raman.out")
    np.testing.assert_array_equal(modes.ir_intensity_km_mol, printed[::-1])


def test_truncation_found_after_an_earlier_cclib_read(tmp_path, capfd):
    # Regression: cclib gives the logger of a parser class a handler only once per process, so
    # after any earlier read of the same kind (here through the generic reader) a file cut
    # inside a block was no longer recognised as truncated, and cclib's log reached stderr.
    import warnings

    from _source_contract import cut_after
    from vibrapol.sources import read_modes

    fixture = FIXTURES / "dalton_water_raman.out"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        read_modes(fixture, kind="cclib")
    cut = tmp_path / "cut.out"
    cut.write_text(cut_after(fixture.read_text(), "Normal Coordinates", 9))
    with pytest.raises(InputFormatError, match="ends in the middle of a block"):
        dalton.read_dalton(cut)
    assert capfd.readouterr().err == ""


@pytest.mark.parametrize(
    ("banner", "version"),
    [
        ("    This is output from DALTON 2015.0", "2015.0"),  # DALTON2015_dvb_raman.out
        # later banners, from memory
        ("    This is output from DALTON release Dalton2016.2 (2016)", "2016.2"),
        ("    This is output from DALTON release Dalton2020.0 (2020)", "2020.0"),
    ],
)
def test_version_from_each_banner_form(banner, version):
    assert dalton._version(["", banner]) == version
