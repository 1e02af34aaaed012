"""The GAMESS-UK reader: fixture contract, and the real dvb output of GAMESS-UK 8.0."""

from __future__ import annotations

import functools

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import SourceContract, read_quietly, read_real
from vibrapol.errors import InputFormatError
from vibrapol.ramantable import raman_table
from vibrapol.sources import gamessuk
from vibrapol.units import BOHR2_TO_ANG2

REAL = "GAMESS-UK8.0_dvb_raman.out"


class TestGamessUKContract(SourceContract):
    kind = "gamess-uk"
    fixture = "gamessuk_water_raman.out"
    real_file = REAL
    sniff = gamessuk.sniff
    read = gamessuk.read_gamessuk
    # derivatives printed with 7 (a.u.) / 8 (Å²) decimals, modes with 6: S moves by ~1e-5
    fixture_atol = 1e-4
    truncations = (
        ("(atomic units)", 3),  # no geometry, no modes
        ("cartesians to normal mode coordinates transformation matrix", 12),  # modes cut
        ("*     raman data     *", 8),  # Raman rows cut: fewer rows than modes
    )
    garble = ("5.6731673", "*********")
    tamper = ("34.05000000", "35.05000000")
    # GAMESS-UK8.0_dvb_raman.out: '===   Opteron version  8.0  ===', 'Revision    6248',
    # '* SCF TYPE   rhf', 'basis selected is sto     sto3g'
    real_provenance = ("8.0 (revision 6248)", "RHF", "sto3g")
    # cclib reads the IR table (2 decimals); vibrapol takes the 4-decimal Hessian print: they
    # agree to half a unit of the second decimal.  'frequencies ----  41.7748 ...', last 3816.3469
    real_freq_atol_vs_cclib = 0.0051
    real_freq_ends_cm1 = (41.7748, 3816.3469)
    # the reoriented geometry printed just before the modes; no polarizability is read
    real_rigid_overlap_max = 1e-4
    # raman data row '1949.63  -1.95366668  7.57401507  573.31653767  0.42893515'
    real_table_row = ("1949.63", ("573.3", "0.4289"))
    real_table_header = ("GAMESS-UK 8.0",)

    def test_real_reads_54_vibrations_without_warnings(self):
        super().test_real_reads_54_vibrations_without_warnings()
        # masses as printed (molecular geometry (angstrom)): c-12 12.0, h-1 1.007825
        assert set(np.round(self.real_modes().masses_da, 6)) == {12.0, 1.007825}


def test_fixture_rigid_modes_found_by_overlap_not_position():
    lines = (FIXTURES / "gamessuk_water_raman.out").read_text().splitlines()
    geometry = gamessuk.read_geometry(lines)
    freqs, disps = gamessuk.read_mode_vectors(lines, 3)
    assert len(freqs) == 9
    assert gamessuk.rigid_modes(disps, geometry).tolist() == [0, 1, 2, 3, 4, 5]
    shuffled = [6, 0, 1, 7, 2, 3, 8, 4, 5]  # vibrations at positions 0, 3 and 6
    assert gamessuk.rigid_modes(disps[shuffled], geometry).tolist() == [1, 2, 4, 5, 7, 8]


def test_fixture_frequencies_take_the_four_decimal_print():
    modes = read_quietly(gamessuk.read_gamessuk, FIXTURES / "gamessuk_water_raman.out")
    assert modes.freqs_cm1 == pytest.approx([1598.7712, 3657.0123, 3755.9876], abs=1e-9)


def real_modes():
    return read_real(gamessuk.read_gamessuk, REAL)


@functools.cache
def real_lines():
    return qc_output(REAL).read_text().splitlines()


def vibration_rows():
    """Indices of the printed raman-data rows that are vibrations (the last 54 of 60)."""
    rows = gamessuk.read_raman_rows(real_lines())
    assert len(rows.freqs_cm1) == 60
    return rows, np.arange(6, 60)  # the 6 rigid rows print |ν| ≤ 0.06 cm-1 and come first


def test_real_invariants_activities_and_ratios_equal_the_printed_ones():
    modes = real_modes()
    table = raman_table(modes)
    rows, vib = vibration_rows()
    # a′ is printed signed; vibrapol keeps the program's phase of each mode, so the signs
    # match.  Printed with 8 decimals; the 6-decimal modes move a′, γ′ by ≤ 1.1e-5 (measured).
    a_signed = np.trace(modes.dalpha_dq, axis1=1, axis2=2) / 3
    np.testing.assert_allclose(a_signed, rows.isotropic[vib], atol=5e-5)
    np.testing.assert_allclose(np.sqrt(table.gamma2), rows.anisotropy[vib], atol=5e-5)
    # activity: the same rounding moves S by 2(45|a′| + 7γ′)·1e-5: atol for weak modes, rtol
    # for strong ones; measured worst 1.6e-3 at S = 471.4.
    np.testing.assert_allclose(table.activity, rows.activities[vib], atol=5e-4, rtol=2e-5)
    active = rows.activities[vib] >= 1e-2
    assert active.sum() == 27
    # ρ printed with 8 decimals; measured worst 1.1e-5
    rho = rows.rho_linear[vib]
    np.testing.assert_allclose(table.rho_linear[active], rho[active], atol=1e-4)
    np.testing.assert_allclose(table.rho_natural[active], (2 * rho / (1 + rho))[active], atol=2e-4)
    # spot check, raman data row '1949.63  -1.95366668  7.57401507  573.31653767  0.42893515'
    k = int(np.argmin(np.abs(table.freqs_cm1 - 1949.63)))
    assert table.activity[k] == pytest.approx(573.31653767, abs=0.02)
    assert table.rho_linear[k] == pytest.approx(0.42893515, abs=1e-4)


def test_real_derivative_blocks_agree():
    # The same derivatives printed in a.u. (7 decimals) and in Å² (8 decimals); the program
    # converted with an older bohr (0.52917725 Å), 1.5e-7 relative off CODATA 2018/2022.
    au = gamessuk.read_dalpha_dx_au(real_lines(), 20)
    ang2 = gamessuk.read_dalpha_dx_ang2(real_lines(), 20)
    np.testing.assert_allclose(au, ang2, atol=5e-8, rtol=1e-6)
    ratio = ang2[np.abs(ang2) > 1] / (au[np.abs(ang2) > 1] / BOHR2_TO_ANG2)
    assert np.median(ratio) == pytest.approx(0.52917725**2, rel=2e-8)


def test_real_truncated_in_the_raman_rows(tmp_path):
    text = qc_output(REAL).read_text()
    cut = tmp_path / "cut.out"
    cut.write_text(text[: text.index("1716.33", text.index("*     raman data     *"))])
    with pytest.raises(InputFormatError, match="do not match"):
        gamessuk.read_gamessuk(cut)


# -- IR intensities and the program's own warnings ---------------------------------------------
def test_real_ir_intensities_matched_by_frequency():
    # GAMESS-UK8.0_dvb_raman.out infrared table (intensity in km/mole): 41.77 cm-1 0.00469,
    # 1021.16 cm-1 18.37966, 3657.55 cm-1 135.60114; its first row (-0.06 cm-1, a rigid mode)
    # is not a vibration and is skipped
    modes = real_modes()
    ir = modes.ir_intensity_km_mol
    assert ir.shape == (54,)
    for freq, km_mol in ((41.7748, 0.00469), (1021.1622, 18.37966), (3657.55, 135.60114)):
        assert ir[int(np.argmin(np.abs(modes.freqs_cm1 - freq)))] == km_mol
    assert ir.max() == 135.60114


def test_real_warnings_about_other_things_are_not_passed_on():
    # The output's two warnings concern orbital symmetry labels and the thermochemistry's
    # partition functions ("10 modes are below the threshold 900.000"), not the vibrations.
    import warnings

    from vibrapol.errors import AccuracyWarning

    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        gamessuk.read_gamessuk(qc_output(REAL))


def test_ir_table_in_an_unknown_unit_is_named(tmp_path):
    text = qc_output(REAL).read_text().replace("km/mole =", "  a.u.  =")
    path = tmp_path / "ir_unit.out"
    path.write_text(text)
    with pytest.raises(InputFormatError, match="unrecognised layout of the infrared table"):
        gamessuk.read_gamessuk(path)
