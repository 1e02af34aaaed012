"""Gaussian layouts other than the Gaussian 09/16 Raman log: older versions, exports, special jobs.

External references used here:
- the fixtures written by tests/fixtures/generators/make_gaussian_variants.py (invented models,
  Gaussian 98 / Windows Gaussian 03 / Gaussian 16 layouts); the expected numbers are the
  generator's own, from numpy and the textbook formulas written out there (Raman: D. A. Long,
  The Raman Effect, 2002, ch. 5; IR: the double-harmonic formula, Wilson, Decius and Cross,
  Molecular Vibrations, 1955; projection: Miller, Handy and Adams, J. Chem. Phys. 72, 99
  (1980), written there as a projector, here as a complement basis), never from vibrapol;
- cclib 1.8.1 reading the real outputs in ../shared/qc-outputs (IR intensities as printed);
- the print precision of Gaussian's rows (4 decimals; displacements 2, high-precision 5).
"""

from __future__ import annotations

import importlib.util
import warnings
from functools import cache
from pathlib import Path

import numpy as np
import pytest

from _paths import FIXTURES, qc_output
from _source_contract import cclib_data
from vibrapol import invariants as inv
from vibrapol.errors import AccuracyWarning, InputFormatError, PrintedValueMismatch
from vibrapol.sources import read_modes, sniff
from vibrapol.sources.gaussian_blocks import row_values
from vibrapol.sources.gaussian_log import sniff_gaussian_log
from vibrapol.sources.gaussian_path import asks_projected, route_blocks
from vibrapol.vibrations import harmonic_analysis

G98 = FIXTURES / "gaussian98_hood_raman.log"
G98_OVERFLOW = FIXTURES / "gaussian98_hood_overflow.log"
G03W = FIXTURES / "gaussian03w_hood_raman.log"
EXPORT = FIXTURES / "gaussian_export_hood.out"
PROJECTED = FIXTURES / "gaussian_hood_projected.log"
ERROR = FIXTURES / "gaussian_hood_error.log"
IR_ONLY = FIXTURES / "gaussian_hood_ir_only.fchk"
OPT = FIXTURES / "gaussian_hood_opt.fchk"

#: Half a unit of the 4th printed decimal, plus floating point.
PRINT_4 = 5.1e-5


@cache
def _gen():
    spec = importlib.util.spec_from_file_location(
        "make_gaussian_variants", FIXTURES / "generators" / "make_gaussian_variants.py"
    )
    gen = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(gen)
    return gen


def _read(path: Path, *allowed: type[Warning]):
    """Read with every PrintedValueMismatch (and unexpected AccuracyWarning) an error."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        modes = read_modes(path)
    for w in caught:
        if not issubclass(w.category, allowed) and issubclass(
            w.category, (PrintedValueMismatch, AccuracyWarning)
        ):
            raise AssertionError(f"unexpected warning: {w.message}")
    return modes, [str(w.message) for w in caught]


def _raman(modes):
    a2, g2 = modes.raman_invariants()
    return inv.activity(a2, g2), inv.rho_linear(a2, g2)


def _strip_archive(src: Path, dst: Path) -> Path:
    text = src.read_text()
    start = text.index(" 1\\1\\")
    dst.write_text(text[:start] + text[text.index("@", start) + 2 :])
    return dst


# ---------------------------------------------------------------- sniffing -----------------


@pytest.mark.parametrize(
    ("path", "kind"),
    [
        (G98, "gaussian-log"),
        (G03W, "gaussian-log"),
        (EXPORT, "gaussian-log"),
        (PROJECTED, "gaussian-log"),
        (IR_ONLY, "gaussian-fchk"),
    ],
)
def test_variants_are_sniffed_by_content(path, kind):
    assert sniff(path) == kind


def test_windows_banner_and_bare_blocks_are_recognised():
    # Windows Gaussian 03 prints "Entering Link 1 = C:\...\l1.exe" and no "Entering Gaussian
    # System" (layout of the Windows builds); an export has only the frequency blocks.
    head = G03W.read_text()
    assert "Entering Gaussian System" not in head and "This is part of" not in head
    assert sniff_gaussian_log(head[:2000], head[-2000:])  # banner only, no blocks in view
    export = EXPORT.read_text()
    assert "Gaussian, Inc." not in export and sniff_gaussian_log(export, export)
    # the header alone, without rows and a displacement table, is not enough
    header = " Harmonic frequencies (cm**-1), IR intensities (KM/Mole), Raman scattering\n"
    assert not sniff_gaussian_log(header, header)


# ---------------------------------------------------------------- Gaussian 98 --------------


def test_g98_log_reads_single_ratio_and_high_precision_block():
    gen = _gen()
    freqs, _modes, values = gen.job()
    modes, _ = _read(G98)
    assert (modes.provenance.program, modes.provenance.program_version) == ("Gaussian 98", "A.11")
    # modes from the archive Hessian; the D mass printed with 5 decimals moves the O–D stretch
    np.testing.assert_allclose(modes.freqs_cm1, freqs, rtol=1e-6, atol=1e-4)
    activity, rho = _raman(modes)  # no derivatives in this archive: from the printed rows
    np.testing.assert_allclose(activity, values["activity"], atol=PRINT_4)
    np.testing.assert_allclose(rho, values["rho_p"], atol=1e-4)
    np.testing.assert_allclose(modes.ir_intensity_km_mol, values["ir"], atol=PRINT_4)
    notes = " ".join(modes.provenance.notes)
    assert "Gaussian 98 layout" in notes and "high-precision block" in notes


def test_g98_without_archive_uses_the_five_decimal_displacements(tmp_path):
    # 5-decimal displacements give modes within ~1e-5 of the exact ones; the 2-decimal table
    # alone gives ~1e-2 (print precision).  1 − overlap is second order in that error.
    gen = _gen()
    freqs, ref_modes, _ = gen.job()
    modes, _ = _read(_strip_archive(G98, tmp_path / "g98.log"))
    np.testing.assert_allclose(modes.freqs_cm1, freqs, atol=PRINT_4)
    overlap = np.abs(np.sum(modes.modes * ref_modes, axis=1))
    assert np.max(1 - overlap) < 1e-8


def test_touching_fixed_width_fields_and_stars():
    # F10.4 fields of the high-precision block touch when numbers fill them (fixture line)
    text = " 32405.661118442.515558494.8865**********54100.7014"
    values = row_values(text, 5, "x", 1, last=False)
    np.testing.assert_allclose(values[:3], [32405.6611, 18442.5155, 58494.8865])
    assert np.isnan(values[3]) and values[4] == 54100.7014
    # the usual block: a 10-star field between wide gaps is one field
    assert np.isnan(row_values("   5.0634   **********   9.1398", 3, "x", 1, False)[1])


def test_overflowed_fields_are_named_and_recomputed_from_derivatives():
    gen = _gen()
    _, _, values = gen.job(scale=gen.OVERFLOW_SCALE)
    assert values["activity"][3] > 99999.9999 and values["activity"][5] > 99999.9999
    with pytest.warns(AccuracyWarning, match=r"IR intensity of mode 2, Raman activity of mode 4"):
        modes = read_modes(G98_OVERFLOW)
    activity, rho = _raman(modes)
    # from the archive derivatives (7 decimals, scaled ×80): relative 1e-6
    np.testing.assert_allclose(activity, values["activity"], rtol=2e-6)
    np.testing.assert_allclose(rho, values["rho_p"], atol=1e-6)
    # IR of mode 2 printed as stars: from the archive dipole derivatives instead (7 decimals,
    # rotated with a rotation fitted to 6-decimal coordinates: 1e-5 relative)
    np.testing.assert_allclose(modes.ir_intensity_km_mol, values["ir"], rtol=1e-5)


def test_overflowed_activity_without_derivatives_is_refused(tmp_path):
    path = _strip_archive(G98_OVERFLOW, tmp_path / "overflow.log")
    with pytest.raises(InputFormatError, match=r"Raman activity of mode 4 was printed as \*\*\*\*"):
        read_modes(path)


# ---------------------------------------------------------------- Windows G03, export ------


def test_windows_g03_log_keeps_derivatives():
    gen = _gen()
    freqs, _, values = gen.job()
    modes, _ = _read(G03W)
    assert modes.provenance.source_kind == "gaussian-log"
    assert (modes.provenance.program, modes.provenance.program_version) == ("Gaussian 03", "C.02")
    assert modes.dalpha_dx is not None
    np.testing.assert_allclose(modes.freqs_cm1, freqs, rtol=1e-6, atol=1e-4)
    activity, rho = _raman(modes)
    np.testing.assert_allclose(activity, values["activity"], rtol=1e-5)
    np.testing.assert_allclose(rho, values["rho_p"], atol=1e-6)
    # archive DipoleDeriv (input orientation, rotated): generator's double-harmonic values
    np.testing.assert_allclose(modes.ir_intensity_km_mol, values["ir"], rtol=1e-5)


def test_export_without_banner_reads_as_printed():
    gen = _gen()
    freqs, _, values = gen.job()
    modes, _ = _read(EXPORT)
    prov = modes.provenance
    assert prov.program == "" and "frequency export" in " ".join(prov.notes)
    assert "most abundant isotopes" in " ".join(prov.notes)
    np.testing.assert_allclose(modes.freqs_cm1, freqs, atol=PRINT_4)
    activity, rho = _raman(modes)
    np.testing.assert_allclose(activity, values["activity"], atol=PRINT_4)
    np.testing.assert_allclose(rho, values["rho_p"], atol=PRINT_4)


# ---------------------------------------------------------------- Freq=Projected -----------


@pytest.mark.parametrize(
    ("route", "projected"),
    [
        ("#p b3lyp/6-31g(d) freq(projected,raman)", True),
        ("#P B3LYP/6-31G(d) Freq=(Raman,Projected)", True),
        ("#p freq=(raman, projected) scf=tight", True),
        ("# FREQ=PROJ", True),
        ("#p rb3lyp/sto-3g freq=raman", False),
        ("#p opt freq", False),
        ("#p irc=(maxpoints=10) b3lyp/6-31g(d)", False),
    ],
)
def test_projected_keyword_in_any_spelling(route, projected):
    # Gaussian's route syntax: keyword=option, keyword=(options), keyword(options)
    assert asks_projected(route) is projected


def test_route_wrapped_inside_a_word_is_joined():
    lines = PROJECTED.read_text().splitlines()
    (_, route), *_ = route_blocks(lines)
    assert "Freq=(Raman,Projected)" in route  # printed over two lines in the fixture


def test_projected_log_reproduces_the_printed_modes():
    gen = _gen()
    freqs, ref_modes, values = gen.job(*gen.path_hessian_and_gradient(gen.STD_ANG / gen.BOHR_ANG))
    # without the projection the same Hessian has an imaginary mode (negative curvature)
    h, _ = gen.path_hessian_and_gradient(gen.STD_ANG / gen.BOHR_ANG)
    plain = harmonic_analysis(h, gen.MASSES, gen.STD_ANG)
    assert plain.freqs_cm1.size == 6 and plain.freqs_cm1[0] < 0
    modes, _ = _read(PROJECTED)
    assert modes.n_modes == 5
    np.testing.assert_allclose(modes.freqs_cm1, freqs, rtol=1e-6, atol=1e-4)
    overlap = np.abs(np.sum(modes.modes * ref_modes, axis=1))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-6)
    activity, rho = _raman(modes)
    np.testing.assert_allclose(activity, values["activity"], rtol=1e-5)
    np.testing.assert_allclose(rho, values["rho_p"], atol=1e-6)
    assert "Freq=Projected" in " ".join(modes.provenance.notes)


def test_projected_fchk_is_detected_from_its_route_field():
    # Gaussian 16 fchk: Route "#p rb3lyp/6-31g(d) freq(projected,raman)", 9-digit Vib-E2
    gen = _gen()
    freqs, _, values = gen.job(*gen.path_hessian_and_gradient(gen.STD_ANG / gen.BOHR_ANG))
    with warnings.catch_warnings():
        warnings.simplefilter("error", PrintedValueMismatch)
        modes = read_modes(FIXTURES / "gaussian_hood_projected.fchk")
    assert modes.n_modes == 5
    np.testing.assert_allclose(modes.freqs_cm1, freqs, rtol=1e-7)
    activity, _ = _raman(modes)
    np.testing.assert_allclose(activity, values["activity"], rtol=1e-6)
    np.testing.assert_allclose(modes.ir_intensity_km_mol, values["ir"], rtol=1e-6)


def test_projected_log_without_gradient_uses_printed_modes(tmp_path):
    text = PROJECTED.read_text()
    start = text.index(" 1\\1\\")
    end = text.index("@", start)
    archive = text[start:end].replace("\n ", "")
    gradient = archive.rsplit("\\\\", 2)[-2]
    short = archive.replace("\\\\" + gradient + "\\\\", "\\\\")
    path = tmp_path / "no_gradient.log"
    path.write_text(text[:start] + short + "@" + text[end + 1 :])
    gen = _gen()
    _, _, values = gen.job(*gen.path_hessian_and_gradient(gen.STD_ANG / gen.BOHR_ANG))
    modes, _ = _read(path)
    assert modes.n_modes == 5  # never the 6 modes of the unprojected Hessian
    notes = " ".join(modes.provenance.notes)
    assert "Freq=Projected and no gradient" in notes and "derivatives not used" in notes
    activity, _ = _raman(modes)  # the printed activities, not a recomputation on rounded modes
    np.testing.assert_allclose(activity, values["activity"], atol=PRINT_4)


# ---------------------------------------------------------------- messages, errors ---------


def test_gaussian_failure_lines_become_warnings():
    modes, messages = _read(ERROR, AccuracyWarning)
    assert modes.n_modes == 6  # the frequency job itself finished
    assert any("Error termination via Lnk1e" in m for m in messages)
    assert any("Convergence failure -- run terminated." in m for m in messages)
    assert "Error termination" in " ".join(modes.provenance.notes)


def test_job_that_failed_before_the_frequencies_names_the_failure(tmp_path):
    lines = ERROR.read_text().splitlines()
    cut = next(i for i, line in enumerate(lines) if "Harmonic frequencies" in line)
    path = tmp_path / "failed.log"
    path.write_text("\n".join(lines[:cut] + lines[-2:]) + "\n")
    with pytest.raises(
        InputFormatError, match="no vibrational frequencies; Gaussian printed 'Error"
    ):
        read_modes(path)


def test_unknown_layout_is_not_called_truncated(tmp_path):
    text = G98.read_text()
    row = " Raman Activ --"
    i = text.index(row)
    j = text.index("\n", i)
    path = tmp_path / "extra_column.log"
    path.write_text(text[:j] + "   1.0000" + text[j:])
    with pytest.raises(InputFormatError, match=r"unrecognised layout .* at line \d+") as err:
        read_modes(path)
    assert "truncated" not in str(err.value)


# ---------------------------------------------------------------- fchk ---------------------


def test_ir_only_fchk_has_no_raman_data():
    gen = _gen()
    _, _, values = gen.job()
    modes, _ = _read(IR_ONLY)
    assert modes.dalpha_dq is None and modes.a2 is None and modes.activity is None
    assert "Raman rows are all zero" in " ".join(modes.provenance.notes)
    # Dipole Derivatives (9 digits) against the generator's IR
    np.testing.assert_allclose(modes.ir_intensity_km_mol, values["ir"], rtol=1e-6)


def test_optimisation_fchk_and_fchk_without_hessian_name_the_cause(tmp_path):
    with pytest.raises(InputFormatError, match="Hessian of this FOpt job is not from a frequency"):
        read_modes(OPT)
    lines = IR_ONLY.read_text().splitlines()
    k = next(i for i, line in enumerate(lines) if line.startswith("Cartesian Force Constants"))
    m = next(i for i in range(k + 1, len(lines)) if not lines[i].startswith(" "))
    path = tmp_path / "sp.fchk"
    path.write_text("\n".join(lines[:k] + lines[m:]) + "\n")
    with pytest.raises(InputFormatError, match=r"no Hessian \('Cartesian Force Constants'\)"):
        read_modes(path)


def test_fchk_without_masses_uses_gaussian_default_isotopes(tmp_path):
    keep, skipping = [], False
    for line in IR_ONLY.read_text().splitlines():
        if not line.startswith(" "):
            skipping = line.startswith(("Real atomic weights", "Vib-AtMass"))
        if not skipping:
            keep.append(line)
    path = tmp_path / "no_masses.fchk"
    path.write_text("\n".join(keep) + "\n")
    # the fixture has a D atom: Gaussian's default (¹H) is not what the job used, and the
    # comparison with the job's own Vib-E2 frequencies says so
    with pytest.warns(PrintedValueMismatch, match="frequency"):
        modes = read_modes(path)
    assert "most abundant isotopes" in " ".join(modes.provenance.notes)


# ---------------------------------------------------------------- real files: IR -----------


@pytest.mark.parametrize(
    ("name", "printed_by", "atol"),
    [
        ("Gaussian16-A.03_dvb_raman.out", "Gaussian16-A.03_dvb_raman.out", 1e-4),
        ("Gaussian09-D.01_dvb_raman.out", "Gaussian09-D.01_dvb_raman.out", 1e-4),
        ("Gaussian16-A.03_dvb_raman.fchk", "Gaussian16-A.03_dvb_raman.fchk", 2e-5),
        ("Gaussian09_dvb_raman.fchk", "Gaussian09-D.01_dvb_raman.out", 1e-4),
    ],
)
def test_real_ir_intensities_match_printed(name, printed_by, atol):
    # cclib 1.8.1 reads Gaussian's printed IR intensities (log: 4 decimals; fchk: Vib-E2).
    # vibrapol's come from the dipole derivatives: half a printed unit plus the rounding of
    # the archive (worst seen 8.9e-5 km/mol in the logs, 8.9e-6 for the G16 fchk).
    modes, _ = _read(qc_output(name))
    data = cclib_data(printed_by)
    np.testing.assert_allclose(modes.ir_intensity_km_mol, data.vibirs, atol=atol, rtol=1e-6)


def test_export_without_section_header_reads_the_same(tmp_path):
    # some exports print the blocks without the "Harmonic frequencies ..." lines above them
    lines = EXPORT.read_text().splitlines()
    i = next(k for k, line in enumerate(lines) if "Harmonic frequencies" in line)
    path = tmp_path / "bare.out"
    path.write_text("\n".join(lines[:i] + lines[i + 3 :]) + "\n")
    assert sniff(path) == "gaussian-log"
    bare, _ = _read(path)
    full, _ = _read(EXPORT)
    np.testing.assert_array_equal(bare.freqs_cm1, full.freqs_cm1)
    np.testing.assert_array_equal(bare.modes, full.modes)


def test_every_truncation_of_the_g98_log_reads_or_refuses_in_one_line(tmp_path):
    # contract of every reader (DEVELOPERS.md, bad input): a file cut at any line either
    # reads or raises a one-line InputFormatError, never another exception
    lines = G98.read_text().splitlines(keepends=True)
    path = tmp_path / "cut.log"
    for k in range(1, len(lines), 3):
        path.write_text("".join(lines[:k]) + lines[k][: len(lines[k]) // 2])
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                read_modes(path, kind="gaussian-log")
        except InputFormatError as exc:
            assert "\n" not in str(exc)
