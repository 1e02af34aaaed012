"""The GAMESS-UK reader: fixture contract, and the real dvb output of GAMESS-UK 8.0."""

from __future__ import annotations

import functools

import cclib
import numpy as np
import pytest

from _source_contract import SourceContract, read_quietly, rigid_overlap
from conftest import FIXTURES, qc_output
from vibrapol.cli import main
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


@functools.cache
def real_modes():
    return read_quietly(gamessuk.read_gamessuk, qc_output(REAL))


@functools.cache
def real_lines():
    return qc_output(REAL).read_text().splitlines()


def vibration_rows():
    """Indices of the printed raman-data rows that are vibrations (the last 54 of 60)."""
    rows = gamessuk.read_raman_rows(real_lines())
    assert len(rows.freqs_cm1) == 60
    return rows, np.arange(6, 60)  # the 6 rigid rows print |ν| ≤ 0.06 cm-1 and come first


def test_real_reads_54_vibrations_without_warnings():
    modes = real_modes()
    assert modes.n_atoms == 20 and modes.n_modes == 54
    assert modes.provenance.program_version.startswith("8.0")
    assert modes.provenance.method == "RHF" and modes.provenance.basis == "sto3g"
    # masses as printed (molecular geometry (angstrom)): c-12 12.0, h-1 1.007825
    assert set(np.round(modes.masses_da, 6)) == {12.0, 1.007825}


def test_real_frequencies_equal_the_printed_ones():
    # cclib reads the IR table (2 decimals); vibrapol takes the 4-decimal Hessian print:
    # they agree to half a unit of the second decimal.
    data = cclib.io.ccread(str(qc_output(REAL)))
    assert real_modes().freqs_cm1 == pytest.approx(data.vibfreqs, abs=0.0051)
    # GAMESS-UK8.0_dvb_raman.out: 'frequencies ----  41.7748 ...' and last 3816.3469
    assert real_modes().freqs_cm1[[0, -1]] == pytest.approx([41.7748, 3816.3469], abs=1e-9)


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


def test_real_mutual_exclusion():
    # C2h: IR-active modes are Raman-inactive (rule of mutual exclusion, common practice);
    # IR intensities as printed, read by cclib (last 54 rows of the IR table).
    data = cclib.io.ccread(str(qc_output(REAL)))
    ir = np.asarray(data.vibirs)
    activity = raman_table(real_modes()).activity
    ir_active = ir > 1e-3 * ir.max()
    assert ir_active.sum() >= 20
    assert np.all(activity[ir_active] < 1e-6 * activity.max())


def test_real_modes_in_the_frame_of_the_coordinates():
    # the reoriented geometry printed just before the modes; a frame turned by 5° gives 0.06
    assert rigid_overlap(real_modes()) < 1e-4


def test_real_table_command(capsys):
    assert main(["table", str(qc_output(REAL))]) == 0
    text = capsys.readouterr().out
    line = next(row for row in text.splitlines() if "1949.63" in row)
    assert "573.3" in line and "0.4289" in line
    assert "GAMESS-UK 8.0" in text


def test_real_truncated_in_the_raman_rows(tmp_path):
    text = qc_output(REAL).read_text()
    cut = tmp_path / "cut.out"
    cut.write_text(text[: text.index("1716.33", text.index("*     raman data     *"))])
    with pytest.raises(InputFormatError, match="do not match"):
        gamessuk.read_gamessuk(cut)
