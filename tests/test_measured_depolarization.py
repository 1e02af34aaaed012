"""Measured depolarization ratios from joint VV/VH fits, and the instrument correction.

Invented VV/VH pairs from vibrapol.measured.synthetic are built from bands of known ρ; the
values 0.02 (a strongly polarized totally symmetric band) and 0.75 (the depolarized limit for
non-totally-symmetric modes, a fact of the trade; D. A. Long, The Raman Effect (2002), ch. 5)
are the targets, to be recovered within 0.02 (project issue 6).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.measured import (
    apply_correction,
    clean_pair,
    derive_correction,
    measure_bands,
    ratio_with_error,
    read_correction,
    write_correction,
)
from vibrapol.measured.synthetic import TrueBand, synthetic_pair

X = np.linspace(150.0, 1250.0, 2201)  # 0.5 cm-1 spacing
BANDS = [
    TrueBand(218.0, 9.0, 4000.0, 0.75),
    TrueBand(314.0, 11.0, 5000.0, 0.75),
    TrueBand(459.0, 7.0, 12000.0, 0.02),
    TrueBand(762.0, 10.0, 2500.0, 0.75),
    TrueBand(790.0, 10.0, 2500.0, 0.75),
    TrueBand(1000.0, 6.0, 8000.0, 0.02),
    TrueBand(1012.0, 8.0, 3000.0, 0.75),
]


def by_position(bands, position):
    return min(bands.bands, key=lambda b: abs(b.position_cm1 - position))


@pytest.mark.parametrize("seed", range(3))
def test_rho_recovered_for_polarized_and_depolarized_bands(seed):
    pair = synthetic_pair(X, BANDS, noise_sigma=4.0, rng=np.random.default_rng(seed))
    measured = measure_bands(pair)
    assert len(measured) == len(BANDS)
    for band in BANDS:
        got = by_position(measured, band.position_cm1)
        assert got.rho == pytest.approx(band.rho, abs=0.02)
        assert abs(got.rho - band.rho) < 4 * got.rho_err
    assert measured.vh_fit is not None and measured.correction is None


def test_rho_recovered_after_cleaning_spikes_and_baseline():
    baseline = 200 + 0.15 * X + 80 * np.sin(X / 300)
    spikes = [(300, 500.0), (1400, 300.0), (1401, 200.0)]
    pair = synthetic_pair(X, BANDS, noise_sigma=4.0, baseline=baseline, spikes=spikes)
    cleaned, vv_report, _ = clean_pair(pair)
    assert vv_report.spike_indices == (300, 1400, 1401)
    measured = measure_bands(cleaned)
    for band in BANDS:
        assert by_position(measured, band.position_cm1).rho == pytest.approx(band.rho, abs=0.02)


def test_rho_errors_match_the_scatter():
    # 30 realizations of one polarized and one depolarized band: mean reported σ(ρ) should
    # equal the observed spread (ratio 1 within ≈ ±26 % at 2σ for 30 samples).
    x = np.linspace(400.0, 520.0, 241)
    bands = [TrueBand(450.0, 8.0, 3000.0, 0.02), TrueBand(466.0, 8.0, 1500.0, 0.75)]
    rho = {450: [], 466: []}
    err = {450: [], 466: []}
    for seed in range(30):
        pair = synthetic_pair(x, bands, noise_sigma=6.0, rng=np.random.default_rng(50 + seed))
        m = measure_bands(pair, [450.0, 466.0], fwhm_cm1=8.0)
        for p in rho:
            rho[p].append(by_position(m, p).rho)
            err[p].append(by_position(m, p).rho_err)
    for p in rho:
        assert np.std(rho[p], ddof=1) / np.mean(err[p]) == pytest.approx(1.0, abs=0.35)


def test_ratio_error_propagation():
    # Independent areas: (σρ/ρ)² = (σvv/vv)² + (σvh/vh)² (GUM, uncorrelated inputs).
    rho, err = ratio_with_error(np.array([100.0]), np.array([50.0]), 4.0**2, 3.0**2, 0.0)
    assert rho[0] == 0.5
    assert err[0] == pytest.approx(0.5 * np.hypot(0.04, 0.06), rel=1e-12)
    # Fully correlated with equal relative errors: the ratio has no error at all.
    _, err = ratio_with_error(np.array([100.0]), np.array([50.0]), 4.0**2, 2.0**2, 4.0 * 2.0)
    assert err[0] == pytest.approx(0.0, abs=1e-12)


def test_vv_only_gives_nan_ratios():
    pair = synthetic_pair(X, BANDS[:3], noise_sigma=4.0)
    measured = measure_bands(pair.vv)
    assert measured.vh_fit is None and np.all(np.isnan(measured.rho))
    assert by_position(measured, 459.0).vv_area == pytest.approx(12000.0, rel=0.02)


REFERENCE = [(218.0, 0.75), (314.0, 0.75), (762.0, 0.75), (790.0, 0.75), (1012.0, 0.75)]


def test_instrument_factor_recovered_and_applied():
    g_true = 0.85  # invented VH/VV throughput of the spectrometer
    ref = measure_bands(synthetic_pair(X, BANDS, noise_sigma=4.0, instrument_factor=g_true))
    corr = derive_correction(ref, REFERENCE, note="invented reference")
    assert corr.factor == pytest.approx(g_true, abs=0.02)
    assert abs(corr.factor - g_true) < 3 * corr.factor_err
    assert corr.n_reference_bands == 5
    # A later measurement of other bands through the same instrument.
    later_bands = [TrueBand(600.0, 9.0, 5000.0, 0.3), TrueBand(880.0, 9.0, 5000.0, 0.75)]
    later = synthetic_pair(
        X, later_bands, noise_sigma=4.0, instrument_factor=g_true, rng=np.random.default_rng(9)
    )
    raw = measure_bands(later)
    assert by_position(raw, 880.0).rho == pytest.approx(0.75 * g_true, abs=0.02)
    fixed = measure_bands(later, correction=corr)
    assert by_position(fixed, 600.0).rho == pytest.approx(0.3, abs=0.02)
    assert by_position(fixed, 880.0).rho == pytest.approx(0.75, abs=0.02)
    assert by_position(fixed, 880.0).rho_err > by_position(raw, 880.0).rho_err / g_true
    assert fixed.correction is corr
    with pytest.raises(VibrapolError, match="already corrected"):
        apply_correction(fixed, corr)
    with pytest.raises(VibrapolError, match="uncorrected ratios"):
        derive_correction(fixed, REFERENCE)


def test_correction_round_trip_and_bad_files(tmp_path):
    ref = measure_bands(synthetic_pair(X, BANDS, noise_sigma=4.0, instrument_factor=1.1))
    corr = derive_correction(ref, REFERENCE, note="invented")
    path = write_correction(tmp_path / "instrument.json", corr)
    again = read_correction(path)
    assert again == corr
    with pytest.raises(VibrapolError, match="already exists"):
        write_correction(path, corr)
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", encoding="utf-8")
    with pytest.raises(InputFormatError, match="bad.json: not valid JSON"):
        read_correction(bad)
    other = tmp_path / "other.json"
    other.write_text(json.dumps({"schema": "something else"}), encoding="utf-8")
    with pytest.raises(InputFormatError, match="not a vibrapol polarization correction"):
        read_correction(other)
    broken = corr.to_dict() | {"factor": -1.0}
    other.write_text(json.dumps(broken), encoding="utf-8")
    with pytest.raises(InputFormatError, match="must be positive"):
        read_correction(other)


def test_reference_problems_are_reported():
    ref = measure_bands(synthetic_pair(X, BANDS, noise_sigma=4.0))
    with pytest.raises(VibrapolError, match="no fitted band within 5 cm-1 of reference band 600"):
        derive_correction(ref, [(600.0, 0.75)])
    with pytest.raises(VibrapolError, match="true ratio above 0"):
        derive_correction(ref, [(459.0, 0.0)])
    with pytest.raises(VibrapolError, match="outside 0–6/7"):
        derive_correction(ref, [(459.0, 0.9)])
    vv_only = measure_bands(synthetic_pair(X, BANDS, noise_sigma=4.0).vv)
    with pytest.raises(VibrapolError, match="needs a reference measured in VV and VH"):
        derive_correction(vv_only, REFERENCE)
