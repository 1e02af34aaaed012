"""A measured isotopologue beside the parent in `match` and `rank` (vibrapol.compare.isotopologue).

Measured spectra are INVENTED DATA drawn from published fundamentals: CHCl₃ as in
compare_helpers.py, CDCl₃ gas phase 262 (E), 367 (A1), 651 (A1), 738 (E), 908 (E), 2266 (A1)
cm⁻¹ (T. Shimanouchi, Tables of Molecular Vibrational Frequencies, NSRDS-NBS 39 (1972),
deuterochloroform entry; positions from memory), with the invented areas and ratios of the
CHCl₃ bands of the same number.  Computed side: the engine's CHCl₃ HF/6-31G* fixture.
"""

from __future__ import annotations

import csv
import io
import warnings

import numpy as np
import pytest

from compare_helpers import (
    AXIS_CM1,
    CHCL3,
    CHCL3_MODES,
    FWHM_CM1,
    band_list,
    chcl3_pair,
    clean_measured,
)
from vibrapol.cli import main
from vibrapol.compare import Candidate, assign, candidate_from_modes
from vibrapol.compare.isotopologue import with_isotopologue
from vibrapol.errors import ChangedValuesWarning, VibrapolError
from vibrapol.isotopes import frequencies_only, isotopologue
from vibrapol.measured.synthetic import TrueBand, synthetic_pair
from vibrapol.sources import read_modes
from vibrapol.spectrum import StickSpectrum

D = 2.01410177812
#: CDCl₃ fundamentals in the order of CHCL3 (ν6, ν3, ν2, ν5, ν4, ν1), cm⁻¹, from memory.
CDCL3_CM1 = (262.0, 367.0, 651.0, 738.0, 908.0, 2266.0)


def cdcl3_pair():
    bands = [TrueBand(x, FWHM_CM1, f.area, f.rho) for x, f in zip(CDCL3_CM1, CHCL3, strict=True)]
    return synthetic_pair(AXIS_CM1, bands, noise_sigma=0.05, rng=np.random.default_rng(8))


def two_mode_sticks() -> StickSpectrum:
    """Invented: a heavy-atom mode at 1000 cm⁻¹ (weak) and an H mode at 1040 cm⁻¹ (strong)."""
    nu, inten, rho = np.array([1000.0, 1040.0]), np.array([1.0, 3.0]), np.array([0.75, 0.75])
    return StickSpectrum(
        positions_cm1=nu, heights=np.column_stack([inten, inten * rho]), channels=("vv", "vh"),
        harmonic_cm1=nu, mode_sets=((0,), (1,)), irreps=("", ""), rho_linear=rho,
        rho_natural=2 * rho / (1 + rho), polarized=np.array([False, False]),
        component=np.zeros(2, dtype=int), components=("invented",),
    )  # fmt: skip


def test_the_isotope_term_picks_the_mode_whose_shift_is_seen():
    # contract of the cost (module notes): one measured band at 1022 cm⁻¹, as strong as the
    # H mode and nearer to it; the isotopologue shows a band at 1012 cm⁻¹ = 0.99 × 1022,
    # where the heavy-atom mode (ratio 0.99) goes and not the H mode (ratio 0.75, 767 cm⁻¹)
    bands = band_list([1022.0], [3.0], [0.75], [0.02])
    cand = Candidate("invented", two_mode_sticks(), isotope_ratios=np.array([0.99, 0.75]))
    alone = assign(cand, bands, scale=1.0)
    assert alone.bands[0].mode == "2"
    heavy_bands = band_list([1012.0], [1.0], [0.75], [0.02])
    both = assign(cand, bands, scale=1.0, isotopologue_bands=heavy_bands)
    assert both.bands[0].mode == "1"
    assert both.scores.isotopologue_agreement > 0.9
    assert np.isnan(alone.scores.isotopologue_agreement)


def test_isotopologue_bands_need_the_candidates_ratios():
    bands = band_list([1022.0], [3.0], [0.75], [0.02])
    with pytest.raises(VibrapolError, match="isotope ratios"):
        assign(Candidate("invented", two_mode_sticks()), bands, isotopologue_bands=bands)


def test_chcl3_with_cdcl3_keeps_the_right_assignment_and_scores_the_shifts():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ChangedValuesWarning)
        parent = frequencies_only(read_modes(CHCL3_MODES))
        heavy = isotopologue(parent, f"H={D}")
    cand = with_isotopologue(candidate_from_modes(read_modes(CHCL3_MODES)), parent, heavy)
    pair, bands = clean_measured(chcl3_pair())
    _, heavy_bands = clean_measured(cdcl3_pair())
    result = assign(cand, bands, pair=pair, isotopologue_bands=heavy_bands)
    modes = {round(b.band_cm1): b.mode for b in result.bands}
    # engine fixture order: 1 2 (E, ν6), 3 (ν3), 4 (ν2), 5 6 (E, ν5), 7 8 (E, ν4), 9 (ν1)
    assert modes == {261: "1 2", 363: "3", 680: "4", 774: "5 6", 1220: "7 8", 1540: "", 3034: "9"}
    # harmonic ratios agree with the measured ones to about 1 % (module notes)
    assert result.scores.isotopologue_agreement > 0.7


@pytest.fixture(scope="module")
def spectra(tmp_path_factory):
    d = tmp_path_factory.mktemp("iso")
    out = {}
    for name, pair in (("h", chcl3_pair()), ("d", cdcl3_pair())):
        text = "# invented data (vibrapol tests)\nRaman shift (cm-1),VV,VH\n" + "".join(
            f"{x:.2f},{a:.6g},{b:.6g}\n"
            for x, a, b in zip(pair.vv.shift_cm1, pair.vv.intensity, pair.vh.intensity, strict=True)
        )
        (d / f"{name}.csv").write_text(text)
        out[name] = str(d / f"{name}.csv")
    return out


def test_match_cli_with_an_isotopologue(spectra, tmp_path, capsys):
    out = tmp_path / "a.csv"
    argv = ["match", str(CHCL3_MODES), "--vv", spectra["h"], "--iso-vv", spectra["d"],
            "--isotopes", f"H={D}", "--laser-nm", "532", "-o", str(out)]  # fmt: skip
    assert main(argv) == 0
    assert "isotopologue agreement:" in capsys.readouterr().out
    text = out.read_text()
    assert f"isotopologue {spectra['d']}: given: H2 1.00783" in text  # the CSV says so
    assert "isotopologue agreement" in text
    body = "".join(x for x in text.splitlines(True) if not x.startswith("#"))
    modes = {round(float(r["band_cm1"])): r["mode"] for r in csv.DictReader(io.StringIO(body))}
    assert modes[3034] == "9" and modes[680] == "4"


def test_rank_cli_with_an_isotopologue(spectra, capsys):
    argv = ["rank", str(CHCL3_MODES), "--vv", spectra["h"], "--iso-vv", spectra["d"],
            "--isotopes", f"H={D}", "--laser-nm", "532"]  # fmt: skip
    assert main(argv) == 0
    assert "chcl3_hf_631gd.modes.json" in capsys.readouterr().out


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--isotopes", "H=2"], "go together"),
        (["--iso-vv", "D"], "go together"),
        (["--iso-vh", "D"], "--iso-vh needs --iso-vv"),
        (["--iso-vv", "H", "--isotopes", "H=2"], "is a parent spectrum"),
    ],
)
def test_isotopologue_options_refused_in_one_line(spectra, tmp_path, capsys, extra, message):
    extra = [spectra["d"] if x == "D" else spectra["h"] if x == "H" else x for x in extra]
    out = tmp_path / "a.csv"
    argv = ["match", str(CHCL3_MODES), "--vv", spectra["h"], "-o", str(out), *extra]
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]
    assert not out.exists()


def test_rank_refuses_an_isotopologue_with_a_mixture(spectra, capsys):
    argv = ["rank", "--mixture", f"{CHCL3_MODES},{CHCL3_MODES}", "--vv", spectra["h"],
            "--iso-vv", spectra["d"], "--isotopes", f"H={D}"]  # fmt: skip
    assert main(argv) == 2
    assert "cannot go with --mixture" in capsys.readouterr().err
