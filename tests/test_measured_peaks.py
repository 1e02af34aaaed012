"""Band detection on uneven axes and the multi-band least-squares fit.

Invented data from vibrapol.measured.synthetic: positions, widths and areas of the bands are
known by construction and are the expected values.  The accuracy targets (0.1 cm-1 in
position, 2 % in area for overlapping bands with noise) are those of the project's issue 6.
"""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.measured import MeasuredSpectrum, find_bands, fit_bands
from vibrapol.measured.synthetic import TrueBand, band_sum, synthetic_pair


def uneven(lo: float, hi: float, n: int, seed: int = 0) -> np.ndarray:
    """Axis whose spacing varies smoothly by a factor 2 plus 10 % jitter (like a grating)."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0.0, 1.0, n)
    x = lo + (hi - lo) * (t + 0.25 * t * (1 - t))
    x += 0.1 * np.median(np.diff(x)) * rng.uniform(-1, 1, n)
    return np.sort(x)


ISOLATED = [
    TrueBand(300.0, 12.0, 6000.0),
    TrueBand(520.0, 8.0, 4000.0),
    TrueBand(800.0, 10.0, 5000.0),
    TrueBand(1100.0, 6.0, 3000.0),
    TrueBand(1450.0, 14.0, 7000.0),
]


@pytest.mark.parametrize("seed", range(3))
def test_detection_on_uneven_axis(seed):
    x = uneven(200.0, 1600.0, 1500, seed)
    vv = synthetic_pair(x, ISOLATED, noise_sigma=4.0, rng=np.random.default_rng(seed)).vv
    found = find_bands(vv)
    assert len(found) == len(ISOLATED)
    for cand, band in zip(found, ISOLATED, strict=True):
        assert cand.position_cm1 == pytest.approx(band.position_cm1, abs=0.3)
        # Width at half prominence of an isolated Lorentzian on zero baseline is its FWHM.
        assert cand.fwhm_cm1 == pytest.approx(band.fwhm_cm1, rel=0.15)


@pytest.mark.parametrize("seed", range(5))
def test_no_bands_in_pure_noise(seed):
    x = np.linspace(0.0, 1000.0, 2000)
    y = np.random.default_rng(seed).normal(0.0, 3.0, x.size)
    assert find_bands(MeasuredSpectrum(x, y)) == ()


def test_min_separation_is_in_cm1_on_uneven_axis():
    x = uneven(900.0, 1100.0, 400)
    bands = [TrueBand(990.0, 3.0, 3000.0), TrueBand(998.0, 3.0, 1500.0)]
    vv = MeasuredSpectrum(x, band_sum(x, bands, "lorentzian"))
    assert len(find_bands(vv)) == 2
    kept = find_bands(vv, min_separation_cm1=10.0)
    assert [round(c.position_cm1) for c in kept] == [990]
    assert len(find_bands(vv, min_separation_cm1=7.0)) == 2


def test_shoulder_is_detected():
    # 950 and 962 cm-1, FWHM 10 and 12: the weaker band makes no maximum of its own.
    x = np.linspace(800.0, 1100.0, 601)
    bands = [TrueBand(950.0, 10.0, 10000.0), TrueBand(962.0, 12.0, 6000.0)]
    vv = synthetic_pair(x, bands, noise_sigma=5.0, rng=np.random.default_rng(0)).vv
    assert len(find_bands(vv, shoulders=False)) == 1
    with_shoulder = find_bands(vv)
    assert len(with_shoulder) == 2
    assert with_shoulder[1].position_cm1 == pytest.approx(962.0, abs=2.0)


OVERLAPPING = [
    TrueBand(950.0, 10.0, 10000.0),
    TrueBand(962.0, 12.0, 6000.0),
    TrueBand(1050.0, 8.0, 4000.0),
    TrueBand(1062.0, 8.0, 4000.0),
]


@pytest.mark.parametrize(
    ("shape", "eta"), [("lorentzian", 0.5), ("gaussian", 0.5), ("pseudo_voigt", 0.6)]
)
@pytest.mark.parametrize("seed", range(3))
def test_overlapping_noisy_bands_recovered(shape, eta, seed):
    # Peak heights 320–640, noise σ = 3, uneven axis of ≈ 0.5 cm-1 spacing (invented).
    x = uneven(850.0, 1150.0, 600, seed)
    bands = [TrueBand(b.position_cm1, b.fwhm_cm1, b.area, eta=eta) for b in OVERLAPPING]
    vv = synthetic_pair(x, bands, shape=shape, noise_sigma=3.0, rng=np.random.default_rng(seed)).vv
    fit = fit_bands(vv, shape=shape)
    assert len(fit.bands) == len(bands) and fit.converged
    for got, want in zip(fit.bands, bands, strict=True):
        assert got.position_cm1 == pytest.approx(want.position_cm1, abs=0.1)
        assert got.area == pytest.approx(want.area, rel=0.02)
        assert got.fwhm_cm1 == pytest.approx(want.fwhm_cm1, rel=0.05)
    assert fit.reduced_chi2 == pytest.approx(1.0, abs=0.25)
    # The model without its local baselines reproduces the noise-free bands.
    truth = band_sum(x, bands, shape)
    assert np.max(np.abs(fit.evaluate(x) - truth)) < 0.05 * truth.max()


def test_standard_errors_match_the_scatter():
    # 40 noise realizations of two overlapping bands: the standard errors from the Jacobian
    # should equal the observed scatter of the estimates (ratio 1 within sampling error of a
    # standard deviation from 40 values, ≈ ±22 % at 2σ).
    x = np.linspace(900.0, 1020.0, 241)
    bands = OVERLAPPING[:2]
    pos, area, pos_se, area_se = [], [], [], []
    for seed in range(40):
        vv = synthetic_pair(x, bands, noise_sigma=8.0, rng=np.random.default_rng(100 + seed)).vv
        fit = fit_bands(vv, [950.0, 962.0], fwhm_cm1=10.0)
        pos.append(fit.bands[1].position_cm1)
        area.append(fit.bands[1].area)
        pos_se.append(fit.bands[1].position_err_cm1)
        area_se.append(fit.bands[1].area_err)
    assert np.std(pos, ddof=1) / np.mean(pos_se) == pytest.approx(1.0, abs=0.3)
    assert np.std(area, ddof=1) / np.mean(area_se) == pytest.approx(1.0, abs=0.3)
    assert abs(np.mean(pos) - 962.0) < 3 * np.mean(pos_se) / np.sqrt(40)


def test_spurious_start_is_dropped():
    x = np.linspace(900.0, 1100.0, 401)
    vv = synthetic_pair(x, OVERLAPPING[:1], noise_sigma=5.0).vv
    fit = fit_bands(vv, [950.0, 1040.0], fwhm_cm1=10.0)
    assert [round(b.position_cm1) for b in fit.bands] == [950]
    with pytest.warns(AccuracyWarning, match="band starting at 1040.0 cm-1 ended at a bound"):
        kept = fit_bands(vv, [950.0, 1040.0], fwhm_cm1=10.0, min_area_snr=None)
    assert len(kept.bands) == 2 and kept.bands[1].area < 3 * kept.bands[1].area_err


def test_bad_fit_requests():
    x = np.linspace(900.0, 1100.0, 401)
    vv = synthetic_pair(x, OVERLAPPING[:1], noise_sigma=5.0).vv
    with pytest.raises(VibrapolError, match="unknown band shape 'voigt'"):
        fit_bands(vv, shape="voigt")
    with pytest.raises(VibrapolError, match="must lie inside 900–1100 cm-1"):
        fit_bands(vv, [1200.0])
    with pytest.raises(VibrapolError, match="local_baseline"):
        fit_bands(vv, local_baseline="cubic")
    flat = MeasuredSpectrum(x, np.random.default_rng(0).normal(0, 1, x.size))
    with pytest.raises(VibrapolError, match="no bands found"):
        fit_bands(flat)
