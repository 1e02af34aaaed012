"""Gaussian log and fchk readers: real Gaussian 09/16 outputs, our own fixtures, bad input.

External references used here:
- the real outputs in ../shared/qc-outputs (Gaussian 16 A.03 and Gaussian 09 D.01, B3LYP/STO-3G
  trans-1,4-divinylbenzene, C2h): the values Gaussian printed;
- cclib 1.8.1, an independent parser of the same files (frequencies, activities, IR intensities);
- the rule of mutual exclusion for centrosymmetric molecules (common practice);
- the fixtures tests/fixtures/gaussian_hood_raman.{log,fchk}: invented spring/polarizability
  models written in Gaussian's layouts by tests/fixtures/generators/make_gaussian_fixtures.py,
  whose reference values come from numpy and the textbook formulas, not from vibrapol.
"""

from __future__ import annotations

import importlib.util
import warnings
from contextlib import contextmanager
from functools import cache
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pytest

from _paths import FIXTURES, QC_OUTPUTS, qc_output
from _source_contract import cclib_data, table_rows
from vibrapol import invariants as inv
from vibrapol.cli import main
from vibrapol.errors import InputFormatError, PrintedValueMismatch
from vibrapol.sources import read_modes, sniff
from vibrapol.sources.gaussian_fchk import (
    parse_gaussian_fchk,
    read_gaussian_fchk,
    sniff_gaussian_fchk,
)
from vibrapol.sources.gaussian_log import parse_gaussian_log, read_gaussian_log, sniff_gaussian_log
from vibrapol.units import BOHR2_TO_ANG2, BOHR3_TO_ANG3

G16_LOG = "Gaussian16-A.03_dvb_raman.out"
G09_LOG = "Gaussian09-D.01_dvb_raman.out"
G16_FCHK = "Gaussian16-A.03_dvb_raman.fchk"
G09_FCHK = "Gaussian09_dvb_raman.fchk"
LOGS = [G16_LOG, G09_LOG]
FIXTURE_LOG = FIXTURES / "gaussian_hood_raman.log"
FIXTURE_FCHK = FIXTURES / "gaussian_hood_raman.fchk"

# Printed activities ≥ this (1000 units of the 4th decimal) carry a meaningful ρ.
RHO_MIN_ACTIVITY = 0.05


@contextmanager
def _strict():
    """Context in which a PrintedValueMismatch fails the test."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", PrintedValueMismatch)
        yield


@cache
def _read(read, parse, name: str):
    """vibrapol's ModeSet of a real file (no warnings allowed) and the values it prints."""
    path = QC_OUTPUTS / name
    with _strict():
        modes = read(path)
    return modes, parse(path.read_text(), str(path)).printed


def _log(name: str):
    return _read(read_gaussian_log, parse_gaussian_log, name)


def _fchk(name: str):
    return _read(read_gaussian_fchk, parse_gaussian_fchk, name)


def _raman(modes):
    a2, g2 = modes.raman_invariants()
    return inv.activity(a2, g2), inv.rho_linear(a2, g2), inv.rho_natural(a2, g2)


def _assert_raman_as_printed(modes, printed, *, activity_atol, activity_rtol, rho_atol):
    """Activities and both ratios of ``modes`` against printed ones (ρ with rtol 0).

    ρ is compared where the printed activity carries it (≥ RHO_MIN_ACTIVITY); returns that mask.
    """
    activity, rho_p, rho_u = _raman(modes)
    np.testing.assert_allclose(activity, printed.activity, atol=activity_atol, rtol=activity_rtol)
    shown = printed.activity >= RHO_MIN_ACTIVITY
    np.testing.assert_allclose(rho_p[shown], printed.rho_linear[shown], atol=rho_atol, rtol=0)
    np.testing.assert_allclose(rho_u[shown], printed.rho_natural[shown], atol=rho_atol, rtol=0)
    return shown


class _Reference(NamedTuple):
    """The fixture generator's own values (numpy and textbook formulas, not vibrapol)."""

    coordinates_ang: np.ndarray  # standard orientation
    dalpha_dx_bohr2: np.ndarray
    freqs_cm1: np.ndarray
    modes: np.ndarray  # mass-weighted
    raman: dict[str, np.ndarray]  # activity, rho_p, rho_u


@cache
def _reference() -> _Reference:
    spec = importlib.util.spec_from_file_location(
        "make_gaussian_fixtures", FIXTURES / "generators" / "make_gaussian_fixtures.py"
    )
    gen = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(gen)
    std_bohr = gen.STD_ANG / gen.BOHR_ANG
    dalpha_dx = gen.dalpha_dx(std_bohr)
    freqs, modes = gen.normal_modes(gen.spring_hessian(std_bohr))
    return _Reference(gen.STD_ANG, dalpha_dx, freqs, modes, gen.raman(modes, dalpha_dx))


# ---------------------------------------------------------------- sniffing -----------------


def test_sniffers_recognise_their_own_layout_only():
    log, fchk = FIXTURE_LOG.read_text(), FIXTURE_FCHK.read_text()
    assert sniff_gaussian_log(log, log) and not sniff_gaussian_log(fchk, fchk)
    assert sniff_gaussian_fchk(fchk, fchk) and not sniff_gaussian_fchk(log, log)
    json_text = '{"format": "vibrapol.modes", "schema_version": 1}'
    assert not sniff_gaussian_log(json_text, json_text) and not sniff_gaussian_fchk(
        json_text, json_text
    )
    assert sniff(FIXTURE_LOG) == "gaussian-log" and sniff(FIXTURE_FCHK) == "gaussian-fchk"


@pytest.mark.parametrize(
    ("name", "kind"),
    [
        (G16_LOG, "gaussian-log"),
        (G09_LOG, "gaussian-log"),
        (G16_FCHK, "gaussian-fchk"),
        (G09_FCHK, "gaussian-fchk"),
    ],
)
def test_real_gaussian_files_are_sniffed_by_content(name, kind):
    assert sniff(qc_output(name)) == kind


def test_other_programs_outputs_are_not_taken_for_gaussian():
    if not QC_OUTPUTS.is_dir():
        pytest.skip("../shared/qc-outputs is absent in this checkout")
    others = [
        p for p in QC_OUTPUTS.iterdir() if p.suffix == ".out" and not p.name.startswith("Gaussian")
    ]
    assert len(others) >= 6  # README of qc-outputs: DALTON, Firefly, GAMESS-UK, ORCA ×2, Q-Chem, …
    for path in others:
        text = path.read_text(errors="replace")
        assert not sniff_gaussian_log(text[:200_000], text[-200_000:]), path.name
        assert not sniff_gaussian_fchk(text[:200_000], text[-200_000:]), path.name


# ---------------------------------------------------------------- real files ---------------


@pytest.mark.parametrize("name", LOGS)
def test_log_printed_values_agree_with_cclib(name):
    # our block readers against cclib 1.8.1's parser of the same file
    _, printed = _log(qc_output(name).name)
    data = cclib_data(name)
    np.testing.assert_allclose(printed.freqs_cm1, data.vibfreqs, atol=1e-9)
    np.testing.assert_allclose(printed.activity, data.vibramans, atol=1e-9)
    assert printed.displacements.shape == (54, 60)


@pytest.mark.parametrize("name", LOGS)
def test_log_frequencies_match_printed(name):
    # Printed with 4 decimals; ours come from the archive Hessian (8 decimals), whose rounding
    # moves soft modes most: 1e-3 cm⁻¹ allows for it (worst seen 3.1e-4 cm⁻¹, both logs).
    modes, printed = _log(qc_output(name).name)
    assert modes.n_modes == 54
    np.testing.assert_allclose(modes.freqs_cm1, printed.freqs_cm1, atol=1e-3, rtol=0)


@pytest.mark.parametrize("name", LOGS)
def test_log_activities_and_ratios_match_printed(name):
    # Gaussian prints activity, ρ(plane) and ρ(unpolarized) with 4 decimals.  Tolerances: half
    # a printed unit (5e-5) plus the rounding of the archive Hessian behind our modes: 2e-6
    # relative on the activity (worst seen 1.7e-4 Å⁴/amu at S = 503, i.e. 3.3e-7) and 5e-5 on
    # ρ (worst seen 5.02e-5 in all).
    modes, printed = _log(qc_output(name).name)
    shown = _assert_raman_as_printed(
        modes, printed, activity_atol=5e-5, activity_rtol=2e-6, rho_atol=1e-4
    )
    assert shown.sum() == 27  # the 19 Ag + 8 Bg modes (irrep labels printed in the log)


def test_log_polarizability_rotated_to_standard_orientation():
    # Gaussian 16 log, link 716 "Polarizability=" line (standard orientation, bohr³):
    # 6.82380169D+01 6.77786427D+00 1.43009536D+02 -7.8D-18 -1.4D-17 1.13432987D+01
    modes, _ = _log(qc_output(G16_LOG).name)
    expected = np.array(
        [[68.2380169, 6.77786427, 0], [6.77786427, 143.009536, 0], [0, 0, 11.3432987]]
    )
    np.testing.assert_allclose(modes.polarizability_ang3 / BOHR3_TO_ANG3, expected, atol=2e-5)


def test_log_and_fchk_of_the_same_job_agree():
    # Gaussian 16 log and fchk are one job: the log's archive (input orientation, rotated by
    # vibrapol) must give the fchk's standard-orientation derivatives.  Tolerance: 1e-5 bohr²,
    # the archive's 7 decimals plus the rotation fitted to 6-decimal coordinates.
    log_modes, _ = _log(qc_output(G16_LOG).name)
    fchk_modes, _ = _fchk(qc_output(G16_FCHK).name)
    np.testing.assert_allclose(log_modes.coordinates_ang, fchk_modes.coordinates_ang, atol=2e-6)
    np.testing.assert_allclose(
        log_modes.dalpha_dx / BOHR2_TO_ANG2, fchk_modes.dalpha_dx / BOHR2_TO_ANG2, atol=1e-5
    )
    np.testing.assert_allclose(log_modes.masses_da, fchk_modes.masses_da, atol=1e-7)
    overlap = np.abs(np.sum(log_modes.modes * fchk_modes.modes, axis=1))
    assert overlap.min() > 0.9999


def test_g16_fchk_matches_its_own_vib_e2_block():
    # Vib-E2 holds Gaussian's frequencies, activities and ratios with 9 significant digits;
    # ours from the fchk Hessian and derivatives (9 digits).  Worst seen: 9.2e-6 cm⁻¹,
    # 8.9e-6 Å⁴/amu (6e-8 relative), 1.2e-8 in ρ.
    modes, printed = _fchk(qc_output(G16_FCHK).name)
    data = cclib_data(G16_FCHK)
    np.testing.assert_allclose(
        printed.freqs_cm1, data.vibfreqs, atol=1e-6
    )  # cclib reads Vib-E2 too
    np.testing.assert_allclose(modes.freqs_cm1, printed.freqs_cm1, atol=1e-4, rtol=0)
    _assert_raman_as_printed(modes, printed, activity_atol=1e-6, activity_rtol=1e-7, rho_atol=1e-6)


def test_g16_fchk_reproduces_the_g16_log_printout():
    # same job; the log's values are the fchk analysis rounded to 4 decimals: half a unit
    # (5e-5) plus 1e-6 for floating point (worst seen 5.0e-5 in all three quantities).
    modes, _ = _fchk(qc_output(G16_FCHK).name)
    _, printed = _log(qc_output(G16_LOG).name)
    np.testing.assert_allclose(modes.freqs_cm1, printed.freqs_cm1, atol=5.1e-5, rtol=0)
    _assert_raman_as_printed(modes, printed, activity_atol=5.1e-5, activity_rtol=0, rho_atol=5.1e-5)


def test_hessian_only_g09_fchk_matches_its_sibling_log():
    # Gaussian09_dvb_raman.fchk has only the Hessian and derivatives; the Gaussian 09 D.01 log
    # of the same job (same SCF energy, -382.30826658) prints the frequencies.  Gaussian 09's
    # printed values differ from the analysis of its own 9-digit Hessian by more than their
    # rounding (worst seen 1.1e-4 cm⁻¹ and 1.7e-4 Å⁴/amu; Gaussian 16's do not): 1e-3 cm⁻¹,
    # 5e-5 + 2e-6·S and 1e-4 in ρ allow for that.
    modes, printed_e2 = _fchk(qc_output(G09_FCHK).name)
    assert printed_e2.freqs_cm1 is None  # nothing printed in this fchk: no check possible
    _, printed = _log(qc_output(G09_LOG).name)
    assert modes.energy_hartree == pytest.approx(-382.308266580, abs=1e-9)  # log: SCF Done line
    np.testing.assert_allclose(modes.freqs_cm1, printed.freqs_cm1, atol=1e-3, rtol=0)
    _assert_raman_as_printed(modes, printed, activity_atol=5e-5, activity_rtol=2e-6, rho_atol=1e-4)
    assert "does not record the Gaussian version" in " ".join(modes.provenance.notes)


@pytest.mark.parametrize(
    ("name", "ir_source"),
    [(G16_LOG, G16_LOG), (G09_LOG, G09_LOG), (G16_FCHK, G16_FCHK), (G09_FCHK, G09_LOG)],
)
def test_mutual_exclusion_in_centrosymmetric_dvb(name, ir_source):
    # trans-divinylbenzene is C2h (centrosymmetric): IR-active (u) modes are Raman-inactive and
    # Raman-active (g) modes IR-inactive (rule of mutual exclusion, common practice).  IR
    # intensities from cclib 1.8.1 (km/mol, printed with 4 decimals); for the Hessian-only
    # G09 fchk from its sibling log, whose modes are in the same order (frequencies checked).
    reader = read_gaussian_fchk if name.endswith(".fchk") else read_gaussian_log
    modes = reader(qc_output(name))
    data = cclib_data(ir_source)
    np.testing.assert_allclose(modes.freqs_cm1, data.vibfreqs, atol=1e-3)
    activity, _, _ = _raman(modes)
    ir_active = data.vibirs > 0.1
    raman_active = activity > 0.1
    assert ir_active.sum() >= 15 and raman_active.sum() >= 20
    assert np.max(activity[ir_active]) < 1e-6  # printed as 0.0000 Å⁴/amu
    assert np.max(data.vibirs[raman_active]) < 1e-3


@pytest.mark.parametrize("name", [G16_LOG, G09_LOG, G16_FCHK, G09_FCHK])
def test_table_command_on_real_files(name, capsys):
    path = qc_output(name)
    sibling = {G09_FCHK: G09_LOG, G16_FCHK: G16_LOG}.get(name, name)
    _, printed = _log(qc_output(sibling).name)
    rows = table_rows(capsys, str(path))
    assert len(rows) == 54
    freqs = np.array([float(r["frequency_cm1"]) for r in rows])
    activity = np.array([float(r["activity"]) for r in rows])
    np.testing.assert_allclose(freqs, printed.freqs_cm1, atol=1e-3)  # CSV: 4 decimals
    np.testing.assert_allclose(activity, printed.activity, atol=2e-4, rtol=1e-5)  # CSV: 6 digits
    # the table gives ρ for degenerate sets (modes within 1 cm⁻¹): compare isolated modes only
    isolated = [
        i
        for i, r in enumerate(rows)
        if sum(q["degenerate_set"] == r["degenerate_set"] for q in rows) == 1
    ]
    for i in isolated:
        if printed.activity[i] >= RHO_MIN_ACTIVITY:
            assert float(rows[i]["rho_linear"]) == pytest.approx(printed.rho_linear[i], abs=1e-4)
            assert float(rows[i]["rho_natural"]) == pytest.approx(printed.rho_natural[i], abs=1e-4)
        elif printed.activity[i] == 0:
            assert rows[i]["rho_linear"] == ""  # Raman-inactive: no ratio
    assert main(["table", str(path)]) == 0
    text = capsys.readouterr().out
    assert "RB3LYP/STO-3G" in text and "Gaussian" in text


# ---------------------------------------------------------------- fixtures -----------------


def test_fixture_log_round_trip():
    ref = _reference()
    with _strict():
        modes = read_modes(FIXTURE_LOG)
    prov = modes.provenance
    assert (prov.program, prov.program_version, prov.method, prov.basis) == (
        "Gaussian 16",
        "C.01",
        "RB3LYP",
        "6-31G(d)",
    )
    # O and ¹H printed with 5 decimals are replaced by the exact isotope masses; D stays as printed
    np.testing.assert_allclose(
        modes.masses_da, [15.99491462, 15.99491462, 1.00782503, 2.01410], atol=1e-8
    )
    np.testing.assert_allclose(modes.coordinates_ang, ref.coordinates_ang, atol=1e-9)
    # the D mass printed as 2.01410 (true 2.01410178) shifts the O–D stretch by ~1e-3 cm⁻¹
    np.testing.assert_allclose(modes.freqs_cm1, ref.freqs_cm1, rtol=1e-6, atol=1e-4)
    # derivatives were written in the input orientation: vibrapol rotated them back, with a
    # rotation fitted to the 6-decimal orientation tables (≈1e-6 relative; archive 7 decimals)
    np.testing.assert_allclose(
        modes.dalpha_dx / BOHR2_TO_ANG2, ref.dalpha_dx_bohr2, atol=1e-5, rtol=0
    )
    activity, rho_p, rho_u = _raman(modes)
    np.testing.assert_allclose(activity, ref.raman["activity"], rtol=1e-5)
    np.testing.assert_allclose(rho_p, ref.raman["rho_p"], atol=1e-6)
    np.testing.assert_allclose(rho_u, ref.raman["rho_u"], atol=1e-6)
    overlap = np.abs(np.sum(modes.modes * ref.modes, axis=1))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-6)


def test_fixture_fchk_round_trip_and_hessian_only_form(tmp_path):
    ref = _reference()
    with _strict():
        modes = read_modes(FIXTURE_FCHK)
    assert modes.provenance.masses == "fchk field 'Vib-AtMass'"
    np.testing.assert_allclose(modes.freqs_cm1, ref.freqs_cm1, rtol=1e-7)
    activity, rho_p, _rho_u = _raman(modes)
    np.testing.assert_allclose(activity, ref.raman["activity"], rtol=1e-6)
    np.testing.assert_allclose(rho_p, ref.raman["rho_p"], atol=1e-7)
    assert modes.energy_hartree == pytest.approx(-151.2345678, abs=1e-9)
    # the Gaussian 09 form: no Vib-* fields, no version
    lines = FIXTURE_FCHK.read_text().splitlines()
    keep, skipping = [], False
    for line in lines:
        if line[:1] not in (" ", ""):
            skipping = line.startswith(("Vib-", "Number of Normal Modes", "Gaussian Version"))
        if not skipping:
            keep.append(line)
    short = tmp_path / "hessian_only.fchk"
    short.write_text("\n".join(keep) + "\n")
    with _strict():
        bare = read_modes(short)
    np.testing.assert_allclose(bare.freqs_cm1, modes.freqs_cm1, atol=1e-9)
    assert bare.provenance.masses == "fchk field 'Real atomic weights'"
    assert bare.provenance.program == "Gaussian" and bare.provenance.program_version == ""


def test_fixture_log_without_archive_uses_printed_values(tmp_path):
    # no archive: modes from the 2-decimal displacements, a² and γ² from the printed activity and
    # plane-polarized ratio (4 decimals), which then reproduce the printed values.
    text = FIXTURE_LOG.read_text()
    start = text.index(" 1\\1\\")
    end = text.index("@", start) + 2
    path = tmp_path / "no_archive.log"
    path.write_text(text[:start] + text[end:])
    with _strict():
        modes = read_modes(path)
    printed = parse_gaussian_log(path.read_text()).printed
    np.testing.assert_array_equal(modes.freqs_cm1, printed.freqs_cm1)
    assert modes.dalpha_dx is None
    activity, rho_p, rho_u = _raman(modes)
    np.testing.assert_allclose(activity, printed.activity, atol=1e-9)
    np.testing.assert_allclose(rho_p, printed.rho_linear, atol=1e-9)
    # ρ(unpolarized) = 2ρ/(1+ρ) from the 4-decimal ρ(plane): slope ≤ 2, so 2·5e-5 + 5e-5
    np.testing.assert_allclose(rho_u, printed.rho_natural, atol=1.5e-4)
    assert any("printed displacements" in note for note in modes.provenance.notes)


def test_a_wrong_printed_activity_is_reported(tmp_path):
    text = FIXTURE_LOG.read_text()
    assert "     19.2958 " in text  # mode 4 of the fixture
    path = tmp_path / "wrong.log"
    path.write_text(text.replace("     19.2958 ", "     19.3958 "))
    with pytest.warns(PrintedValueMismatch, match="Raman activity.*mode 4"):
        read_modes(path)


def test_orientation_tables_of_different_geometries_are_rejected(tmp_path):
    text = FIXTURE_LOG.read_text()
    old = "      3          1           0        0.860000    0.890000    0.460000"
    assert old in text
    path = tmp_path / "mixed.log"
    path.write_text(text.replace(old, old.replace("0.860000", "0.960000")))
    with pytest.raises(InputFormatError, match="differ by more than a rotation"):
        read_modes(path)


# ---------------------------------------------------------------- bad input ----------------


def _cut(src: Path, dst: Path, marker: str, offset: int = 0) -> Path:
    lines = src.read_text().splitlines(keepends=True)
    i = next(k for k, line in enumerate(lines) if marker in line)
    dst.write_text("".join(lines[: i + offset]))
    return dst


@pytest.mark.parametrize(
    ("marker", "offset", "message"),
    [
        ("Depolar (U)", 3, "normal-mode table cut short"),  # inside the first mode table
        (" - Thermochemistry -", 0, "did not finish"),  # frequencies complete, no archive
        ("NImag=0", 0, "archive block is cut short"),
        ("Harmonic frequencies", 0, "no vibrational frequencies"),
    ],
)
def test_truncated_fixture_log(tmp_path, marker, offset, message):
    path = _cut(FIXTURE_LOG, tmp_path / "cut.log", marker, offset)
    with pytest.raises(InputFormatError, match=message) as err:
        read_modes(path)
    assert "\n" not in str(err.value) and str(path) in str(err.value)


def test_truncated_real_log_and_fchk(tmp_path):
    log = _cut(qc_output(G16_LOG), tmp_path / "cut.out", "Frequencies --", 40)
    with pytest.raises(InputFormatError, match="cut short"):
        read_modes(log)
    fchk = _cut(qc_output(G16_FCHK), tmp_path / "cut.fchk", "Cartesian Force Constants", 100)
    with pytest.raises(InputFormatError, match="Cartesian Force Constants.*expected 1830"):
        read_modes(fchk)


def test_garbled_files(tmp_path, capsys):
    bad_log = tmp_path / "garbled.log"
    bad_log.write_text(FIXTURE_LOG.read_text().replace("      9.1398", "      9.1x98"))
    with pytest.raises(InputFormatError, match="line 37 .expected 3 numbers, found .*9.1x98"):
        read_modes(bad_log)
    bad_fchk = tmp_path / "garbled.fchk"
    bad_fchk.write_text(FIXTURE_FCHK.read_text().replace("3.64779721E-01", "3.6477972XE-01"))
    with pytest.raises(InputFormatError, match="not a number"):
        read_modes(bad_fchk)
    out = tmp_path / "table.csv"
    assert main(["table", str(bad_fchk), "--format", "csv", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "not a number" in err and not out.exists()
