"""Dense measured spectra: the same bands, ratios and assignment whatever the point spacing.

Measured side: the bundled INVENTED dichloromethane VV/VH pair (src/vibrapol/data, 3,150 points
1 cm⁻¹ apart), linearly interpolated onto other grids, as exports of stitched spectra are.
Computed side: examples/solvent-check/dichloromethane.modes.json (vibrapol's engine).  The
contract checked: resampling a spectrum changes neither which bands are found, nor the
assignment, nor the measured ratios beyond a small fraction of their own standard errors.
"""

from __future__ import annotations

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol import measured
from vibrapol.compare import assign, candidate_from_modes
from vibrapol.errors import AccuracyWarning
from vibrapol.measured.cleaning import estimate_baseline
from vibrapol.measured.density import MAX_POINTS, noise_estimate
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair
from vibrapol.sources import read_modes

BUNDLED = PROJECT_ROOT / "src" / "vibrapol" / "data" / "dichloromethane_liquid_vv_vh_INVENTED.txt"
MODES = PROJECT_ROOT / "examples" / "solvent-check" / "dichloromethane.modes.json"


def resampled_pair(n: int) -> PolarizedPair:
    """The bundled pair linearly interpolated onto n evenly spaced points."""
    d = np.loadtxt(BUNDLED, comments="#", skiprows=10)
    x = np.linspace(d[0, 0], d[-1, 0], n)
    return PolarizedPair(
        MeasuredSpectrum(x, np.interp(x, d[:, 0], d[:, 1]), label="VV"),
        MeasuredSpectrum(x, np.interp(x, d[:, 0], d[:, 2]), label="VH"),
    )


def measure(pair: PolarizedPair):
    pair, _, _ = measured.clean_pair(pair)
    return pair, measured.measure_bands(pair, measured.find_bands(pair.vv))


def test_resampled_ten_times_finer_gives_the_same_bands_ratios_and_assignment():
    coarse_pair, coarse = measure(resampled_pair(3_000))
    fine_cleaned, _, _ = measured.clean_pair(resampled_pair(30_000))
    # Interpolated noise is correlated over ~10 points; a noise level taken from neighbouring
    # points alone is ~30 times too small and turns every wiggle into a "band" (hundreds).
    assert len(measured.find_bands(fine_cleaned.vv)) == len(coarse)
    fine_pair, fine = measure(resampled_pair(30_000))
    np.testing.assert_allclose(fine.positions_cm1, coarse.positions_cm1, atol=0.1)
    # Same noise realization, so the ratios differ only by the processing: well below their
    # standard errors (observed ≤ 0.2 σ); the errors themselves agree within 30 % once the
    # correlation of interpolated noise is allowed for (without it they shrink by √10).
    assert np.all(np.abs(fine.rho - coarse.rho) < 0.3 * coarse.rho_err)
    np.testing.assert_allclose(fine.rho_err / coarse.rho_err, 1.0, atol=0.3)
    cand = candidate_from_modes(read_modes(MODES), laser_nm=532.0)
    a, b = assign(cand, coarse, pair=coarse_pair), assign(cand, fine, pair=fine_pair)
    assert [r.mode for r in a.bands] == [r.mode for r in b.bands]
    assert a.scale.factor == pytest.approx(b.scale.factor, abs=0.002)


def test_noise_estimate_of_white_and_interpolated_noise():
    rng = np.random.default_rng(7)
    white = rng.normal(0.0, 2.0, 40_000)
    est = noise_estimate(white, 0.1)
    assert est.lag_points == 1 and est.variance_factor == 1.0
    assert est.sigma == pytest.approx(2.0, rel=0.03)
    # White noise (σ = 2) on knots 1 cm⁻¹ apart, linearly interpolated 4 times finer: a point
    # a fraction t from a knot has variance (t² + (1 − t)²)σ², averaged over t = 0, ¼, ½, ¾
    # 0.6875σ² (σ_point = 1.658); a long sum of n points holds n/4 knots with weight 4
    # each, variance 4nσ², so τ = 4/0.6875 = 5.82 (our derivation).
    knots = rng.normal(0.0, 2.0, 10_001)
    fine = np.interp(np.arange(40_001) / 4.0, np.arange(10_001), knots)
    est = noise_estimate(fine, 0.25)
    assert est.lag_points > 1
    assert est.sigma == pytest.approx(2.0 * np.sqrt(0.6875), rel=0.1)
    assert est.variance_factor == pytest.approx(4 / 0.6875, rel=0.25)


def test_default_baseline_of_a_million_points_is_estimated_on_bin_means():
    # 10⁶ points 0.003 cm⁻¹ apart made the banded Cholesky solve of arPLS fail ("not positive
    # definite"): its default lam ~ 10¹⁷ is beyond double precision.
    # Invented spectrum: a curved baseline 2–6 high, one band 50 high, noise σ = 0.05.  The
    # same spectrum on 3,151 points (no binning) is off by 0.08 under the band.
    x = np.linspace(150.0, 3300.0, 1_000_000)
    base = 2.0 + 1e-3 * (x - 150.0) + 0.5 * np.exp(-(((x - 1500.0) / 600.0) ** 2))
    y = base + 50.0 / (1.0 + ((x - 1000.0) / 4.0) ** 2)
    y += np.random.default_rng(1).normal(0.0, 0.05, x.size)
    got, used = estimate_baseline(x, y)
    assert 500 <= used["estimated_on_points"] <= 10_000
    assert np.max(np.abs(got - base)) < 0.1


def test_more_than_max_points_are_binned_with_a_warning():
    n = MAX_POINTS + 50_000
    x = np.linspace(150.0, 3300.0, n)
    rng = np.random.default_rng(3)
    y = 100.0 / (1.0 + ((x - 1000.0) / 3.0) ** 2) + rng.normal(0.0, 1.0, n)
    with pytest.warns(AccuracyWarning, match=f"binned {n} points to"):
        cleaned, report = measured.clean(MeasuredSpectrum(x, y, label="VV"), baseline=None)
    assert len(cleaned) <= MAX_POINTS
    assert report.steps[0].startswith(f"binned {n} points")
    assert any(note.startswith("binned") for note in cleaned.notes)


def test_crowded_narrow_bands_are_not_taken_for_correlated_noise():
    # 100 invented bands 5–10 cm⁻¹ wide, 30 cm⁻¹ apart, on 1 cm⁻¹ spacing with white noise:
    # their curvature makes the estimate jump between lags of 2 and 4 cm⁻¹, which must not be
    # read as interpolated noise (it once gave τ ≈ 90, and the fit then dropped 97 of the 100
    # bands as insignificant).  The contract: white noise gives the neighbour estimate, τ = 1.
    from vibrapol.measured.synthetic import TrueBand, synthetic_pair

    rng = np.random.default_rng(0)
    pos = np.linspace(200.0, 3200.0, 100) + rng.uniform(-3.0, 3.0, 100)
    bands = [TrueBand(p, rng.uniform(5, 10), rng.uniform(5, 50), 0.75) for p in pos]
    x = np.linspace(150.0, 3300.0, 3151)
    vv = synthetic_pair(x, bands, noise_sigma=0.02, rng=rng).vv
    est = noise_estimate(vv.intensity, vv.spacing_cm1)
    assert (est.lag_points, est.variance_factor) == (1, 1.0)
    assert est.sigma == measured.noise_sigma(vv.intensity)
