"""Spike removal, baseline, smoothing and the noise estimate on invented spectra.

The spectra come from vibrapol.measured.synthetic (invented data): the true bands, baseline,
spike positions and noise level are known by construction and are the expected values.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import savgol_coeffs

from vibrapol.errors import VibrapolError
from vibrapol.measured import clean, clean_pair, estimate_baseline, find_spikes, noise_sigma, smooth
from vibrapol.measured.cleaning import modified_z_scores, whittaker_lam
from vibrapol.measured.spectrum import MeasuredSpectrum
from vibrapol.measured.synthetic import TrueBand, synthetic_pair

X = np.linspace(200.0, 1800.0, 1601)  # 1 cm-1 spacing
NARROW = [
    TrueBand(459.0, 4.0, 20000.0, 0.02),
    TrueBand(1000.0, 3.0, 30000.0, 0.05),
    TrueBand(1600.0, 15.0, 5000.0),
]
SPIKES = [(100, 400.0), (700, 150.0), (701, 300.0), (1201, 80.0)]  # (index, height), invented


@pytest.mark.parametrize("seed", range(3))
def test_spikes_found_exactly_and_bands_left_alone(seed):
    # Bands 3–4 points wide with peak SNR ≈ 1000–1300 must not be taken for spikes; spikes of
    # 16σ to 80σ must all be found (noise σ = 5).
    pair = synthetic_pair(
        X, NARROW, noise_sigma=5.0, spikes=SPIKES, rng=np.random.default_rng(seed)
    )
    np.testing.assert_array_equal(find_spikes(pair.vv.intensity), [100, 700, 701, 1201])
    assert find_spikes(pair.vh.intensity).size == 0
    cleaned, report = clean(pair.vv, baseline=None)
    assert report.spike_indices == (100, 700, 701, 1201)
    truth = synthetic_pair(X, NARROW, noise_sigma=0.0).vv.intensity
    # Replaced points lie on the noise-free spectrum within a few noise σ.
    assert (
        np.max(np.abs(cleaned.intensity[[100, 700, 701, 1201]] - truth[[100, 700, 701, 1201]]))
        < 20.0
    )
    untouched = np.setdiff1d(np.arange(X.size), [100, 700, 701, 1201])
    np.testing.assert_array_equal(cleaned.intensity[untouched], pair.vv.intensity[untouched])


def test_every_step_can_be_turned_off_and_input_is_unchanged():
    pair = synthetic_pair(X, NARROW, noise_sigma=5.0, spikes=SPIKES, baseline=100 + 0.1 * X)
    before = pair.vv.intensity.copy()
    same, report = clean(pair.vv, spikes=False, baseline=None)
    np.testing.assert_array_equal(same.intensity, before)
    assert report.steps == ("nothing changed (all steps off)",) and report.baseline is None
    clean(pair.vv)
    np.testing.assert_array_equal(pair.vv.intensity, before)


BANDS = [
    TrueBand(218.0, 10.0, 4000.0),
    TrueBand(314.0, 12.0, 5000.0),
    TrueBand(459.0, 8.0, 8000.0, 0.02),
    TrueBand(1000.0, 6.0, 6000.0, 0.05),
    TrueBand(1030.0, 9.0, 3000.0),
    TrueBand(1600.0, 15.0, 5000.0, 0.4),
]


def uneven_axis() -> np.ndarray:
    rng = np.random.default_rng(1)
    x = np.concatenate([np.linspace(150, 1800, 1200), rng.uniform(150, 1800, 300)])
    return np.unique(np.round(x, 3))


def test_default_arpls_baseline_follows_a_curved_sloping_background():
    x = uneven_axis()
    base = 300 + 0.2 * (x - 200) + 200 * np.exp(-(((x - 900) / 500) ** 2))
    pair = synthetic_pair(x, BANDS, noise_sigma=4.0, baseline=base, rng=np.random.default_rng(3))
    cleaned, report = clean(pair.vv)
    err = np.abs(report.baseline - base)
    # Tolerances: bands are 300–640 high, noise σ = 4; measured 1.4 (median) and 8.5 (max).
    assert np.median(err) < 4.0 and err.max() < 16.0
    assert report.baseline_method == "arpls"
    assert dict(report.baseline_options)["lam"] == pytest.approx(
        whittaker_lam(float(np.median(np.diff(x)))), rel=1e-12
    )
    assert report.noise_sigma == pytest.approx(4.0, rel=0.1)


def test_baseline_method_is_switchable_and_checked():
    pair = synthetic_pair(X, NARROW, noise_sigma=2.0, baseline=50 + 0.05 * X)
    _, report = clean(pair.vv, baseline="imodpoly", baseline_options={"poly_order": 1})
    # A straight background is recovered by a first-order modified polynomial (Zhao 2007).
    assert np.max(np.abs(report.baseline - (50 + 0.05 * X))) < 3.0
    with pytest.raises(VibrapolError, match="unknown baseline method 'nosuch'"):
        clean(pair.vv, baseline="nosuch")
    with pytest.raises(VibrapolError, match="bad option"):
        estimate_baseline(X, pair.vv.intensity, "arpls", {"not_an_option": 1})


def test_whittaker_lam_passes_half_amplitude_at_the_period():
    # A second-difference Whittaker smoother (P. H. C. Eilers, Anal. Chem. 75, 3631 (2003))
    # passes a sine of period P at amplitude ½ when lam = (P/(2π Δx))⁴.  asls with p = 0.5
    # is that smoother with all weights ½, i.e. (I + 2 lam DᵀD) z = y: hence lam/2 here.
    x = np.arange(0.0, 2000.0, 1.0)
    period = 100.0
    y = np.sin(2 * np.pi * x / period)
    lam = whittaker_lam(1.0, period) / 2
    smoothed, _ = estimate_baseline(x, y, "asls", {"lam": lam, "p": 0.5})
    middle = slice(500, 1500)
    gain = np.std(smoothed[middle]) / np.std(y[middle])
    assert gain == pytest.approx(0.5, abs=0.03)


def test_savitzky_golay_noise_reduction_matches_its_coefficients():
    # For white noise the filter scales σ by sqrt(Σ c²); the 7-point cubic coefficients are
    # (-2, 3, 6, 7, 6, 3, -2)/21 (Savitzky and Golay 1964, Table I), Σ c² = 147/441 = 1/3.
    np.testing.assert_allclose(
        savgol_coeffs(7, 3), np.array([-2, 3, 6, 7, 6, 3, -2]) / 21, atol=1e-12
    )
    rng = np.random.default_rng(5)
    x = np.arange(20000.0) * 0.5
    y = rng.normal(0.0, 1.0, x.size)
    smoothed, points = smooth(x, y, 3.5)  # 3.5 cm-1 / 0.5 cm-1 = 7 points
    assert points == 7
    assert np.std(smoothed) == pytest.approx(np.sqrt(1 / 3), rel=0.03)
    spectrum = MeasuredSpectrum(x, y)
    out, report = clean(spectrum, spikes=False, baseline=None, smooth_window_cm1=3.5)
    assert report.smoothing_window_points == 7 and "Savitzky-Golay" in out.notes[-1]
    with pytest.raises(VibrapolError, match="smoothing window"):
        smooth(x, y, 0.6)


def test_noise_estimate_ignores_bands():
    pair = synthetic_pair(X, BANDS, noise_sigma=7.0, rng=np.random.default_rng(11))
    # Statistical spread of the MAD estimate for 1600 points is ≈ 3 %.
    assert noise_sigma(pair.vv.intensity) == pytest.approx(7.0, rel=0.08)


def test_clean_pair_cleans_both_channels():
    pair = synthetic_pair(X, NARROW, noise_sigma=5.0, spikes=SPIKES, baseline=80 + 0.02 * X)
    cleaned, vv_report, vh_report = clean_pair(pair)
    assert len(vv_report.spike_indices) == 4 and len(vh_report.spike_indices) == 0
    assert abs(np.median(cleaned.vh.intensity[:150])) < 5.0


def _quantized_flat(spike_height: float) -> np.ndarray:
    # A flat digitized spectrum: 70 single-count bumps, so 140 of the 299 first differences
    # are ±1 and the other 159 (more than half) are 0 -- the median absolute deviation of the
    # differences is 0 and the mean-absolute-deviation fallback decides.  One spike at 260.
    y = np.full(300, 100.0)
    y[5 + 3 * np.arange(70)] += 1.0
    y[260] += spike_height
    return y


@pytest.mark.parametrize(("height", "found"), [(3.5, True), (2.8, False)])
def test_spike_threshold_when_the_mad_is_zero_is_five_sigma(height, found):
    # Issue 13 point 9.  With MAD = 0 the scale is σ̂ = mean|d − median| / √(2/π) (the mean
    # absolute deviation of a normal distribution is √(2/π) σ), here
    # σ̂ = (140 + 2h) / 299 / 0.7979, and an edge counts at (d − median)/σ̂ > 5.  A 3.5-count
    # spike has edges of 3.5/σ̂ = 5.68 σ̂ (found); a 2.8-count one 4.65 σ̂ (left).  The old
    # code multiplied by 0.6745 = Φ⁻¹(3/4) once more, i.e. it asked for 5/0.6745 = 7.41 σ̂
    # and missed the 5.68 σ̂ spike.  (0.6745 belongs with the MAD only: modified z-score of
    # Iglewicz and Hoaglin 1993, common practice, from memory.)
    y = _quantized_flat(height)
    d = np.diff(y)
    assert np.median(np.abs(d - np.median(d))) == 0
    sigma = (140 + 2 * height) / 299 / np.sqrt(2 / np.pi)
    np.testing.assert_allclose(modified_z_scores(d), d / sigma, rtol=1e-12)
    expected = [260] if found else []
    np.testing.assert_array_equal(find_spikes(y), expected)
