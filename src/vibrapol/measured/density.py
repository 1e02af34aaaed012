"""Noise of spectra sampled on any grid, and binning of dense spectra.

Exports of stitched or high-resolution spectra have 10⁴–10⁶ points, often interpolated onto
a uniform grid finer than the detector pixels.  Interpolated noise is correlated over several
points: second differences of neighbouring points then see almost none of it, and a noise
estimate from them would make every wiggle a "band".  :func:`noise_estimate` therefore looks
at the noise over growing point lags and reports the per-point noise, the lag beyond which it
is uncorrelated, and the factor by which correlation inflates the variance of sums (and hence
of fitted areas).  :func:`bin_spectrum` averages groups of neighbouring points.
"""

from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import AccuracyWarning
from vibrapol.measured.spectrum import MeasuredSpectrum

#: 1/Φ⁻¹(3/4): σ of a normal distribution per unit of its median absolute deviation (common
#: practice).
SIGMA_PER_MAD = 1.4826
#: Longest lag, in cm⁻¹, over which the noise is examined: short beside band widths (5–30
#: cm⁻¹), so second differences over it still see mostly noise.
MAX_NOISE_LAG_CM1 = 8.0
#: Fewest second differences per lag for a usable estimate.
MIN_POINTS_PER_LAG = 64
#: The noise counts as white (uncorrelated between neighbours) unless doubling the lag raises
#: the estimate by more than this factor at some step up to :data:`MAX_JUMP_LAG_CM1`.  On
#: white noise a doubling changes it by a few percent, and by 1.1–1.4 where bands cover much
#: of a short spectrum (their curvature grows with the lag); on linearly interpolated copies
#: of the bundled invented spectrum one step jumps by 1.8 (1.25 times as many points), 2.1
#: (1.5), 3.1 (2), 7.8 (3) and more (measured while writing this module).
CORRELATED_RATIO = 1.75
#: Longest lag, in cm⁻¹, at which that jump counts.  Interpolation onto a finer grid makes it
#: below the spacing of the original pixels (0.6–1 cm⁻¹ for copies of the bundled spectrum,
#: pixels 1 cm⁻¹ apart); the curvature of crowded narrow bands makes it only at lags of
#: several cm⁻¹ (4 cm⁻¹ for 100 invented bands 5–10 cm⁻¹ wide, 30 cm⁻¹ apart), and must not
#: be taken for correlated noise.
MAX_JUMP_LAG_CM1 = 1.5
#: For correlated noise, the lag used is the shortest whose estimate lies within this factor
#: of the largest (where the estimate stops growing with the lag).
PLATEAU_RATIO = 1.1
#: Most points per channel that the measured chain works on; denser spectra are binned to
#: this (with a warning), which keeps time and memory bounded.
MAX_POINTS = 200_000


@dataclass(frozen=True)
class NoiseEstimate:
    """Noise of one spectrum.

    Attributes
    ----------
    sigma : float
        Standard deviation of the noise of one point.
    lag_points : int
        Point lag beyond which the noise is uncorrelated (1: white noise).
    variance_factor : float
        τ in var(Σᵢ₌₁ⁿ eᵢ) = n τ σ² for long sums (the integrated autocorrelation; 1 for white
        noise, ≈ 1.5 L for noise linearly interpolated onto a grid L times finer).  Standard
        errors of fitted areas and positions scale with √τ.
    """

    sigma: float
    lag_points: int
    variance_factor: float


def _sigma_d2(values: np.ndarray, lag: int = 1) -> float:
    """σ from the MAD of second differences at a lag, all phases pooled.

    For white noise of variance σ², Δ²y has variance 6σ²; the median absolute deviation
    (× 1.4826 for a normal distribution) ignores the few points where bands curve.
    """
    if lag == 1:
        d2 = np.diff(values, 2)
    else:
        d2 = np.concatenate([np.diff(values[p::lag], 2) for p in range(lag)])
    if d2.size == 0:
        return 0.0
    return float(SIGMA_PER_MAD * np.median(np.abs(d2 - np.median(d2))) / np.sqrt(6.0))


def noise_estimate(intensity: np.ndarray, spacing_cm1: float | None = None) -> NoiseEstimate:
    """Per-point noise of a spectrum and how far it is correlated.

    σ_k is estimated from second differences at lags k = 1, 2, 4, … points, up to
    :data:`MAX_NOISE_LAG_CM1` (and :data:`MIN_POINTS_PER_LAG` differences per lag).  Unless
    some σ_2k with 2k points within :data:`MAX_JUMP_LAG_CM1` exceeds σ_k by
    :data:`CORRELATED_RATIO`, the noise is white and σ = σ₁ (the estimate used before dense
    spectra were considered).
    Otherwise σ is σ_k at the shortest lag within :data:`PLATEAU_RATIO` of the largest σ_k,
    and τ is estimated from means of blocks of 2k points: τ = 2k σ²(mean) / σ².

    Parameters
    ----------
    intensity : ndarray, shape (n,)
    spacing_cm1 : float, optional
        Point spacing; without it only neighbouring points are used (white noise assumed).

    Returns
    -------
    NoiseEstimate
    """
    y = np.asarray(intensity, dtype=float)
    s1 = _sigma_d2(y)
    if spacing_cm1 is None or not spacing_cm1 > 0:
        return NoiseEstimate(s1, 1, 1.0)
    lags = [1]
    while (
        2 * lags[-1] * spacing_cm1 <= MAX_NOISE_LAG_CM1
        and y.size // (2 * lags[-1]) >= MIN_POINTS_PER_LAG
    ):
        lags.append(2 * lags[-1])
    if len(lags) == 1:
        return NoiseEstimate(s1, 1, 1.0)
    sig = np.array([s1, *(_sigma_d2(y, k) for k in lags[1:])])
    short = np.array(lags[1:]) * spacing_cm1 <= MAX_JUMP_LAG_CM1
    if not np.any((sig[1:] > CORRELATED_RATIO * sig[:-1]) & short):
        return NoiseEstimate(s1, 1, 1.0)
    top = float(sig.max())
    i = int(np.flatnonzero(sig * PLATEAU_RATIO >= top)[0])
    lag, sigma = lags[i], float(sig[i])
    block = 2 * lag
    n_blocks = y.size // block
    means = y[: n_blocks * block].reshape(n_blocks, block).mean(axis=1)
    tau = block * _sigma_d2(means) ** 2 / sigma**2 if n_blocks >= 8 else float(lag)
    return NoiseEstimate(sigma, lag, max(1.0, float(tau)))


def noise_sigma(intensity: np.ndarray, spacing_cm1: float | None = None) -> float:
    """Standard deviation of the noise of one point (:func:`noise_estimate`).

    Without ``spacing_cm1``, from second differences of neighbouring points (white noise).
    """
    return noise_estimate(intensity, spacing_cm1).sigma


def bin_means(values: np.ndarray, size: int) -> np.ndarray:
    """Means of consecutive groups of ``size`` points (the last group may be shorter)."""
    v = np.asarray(values, dtype=float)
    n_full = v.size // size
    out = v[: n_full * size].reshape(n_full, size).mean(axis=1)
    if v.size > n_full * size:
        out = np.append(out, v[n_full * size :].mean())
    return out


def bin_spectrum(spectrum: MeasuredSpectrum, size: int) -> MeasuredSpectrum:
    """Average groups of ``size`` neighbouring points (shift and intensity), with a note.

    Band positions and areas are kept (the mean over a bin narrower than the band is the
    integral over it divided by its width); the noise per point falls by up to √size.
    """
    x = bin_means(spectrum.shift_cm1, size)
    note = (
        f"binned {len(spectrum)} points to {x.size} (means of {size} neighbouring points, "
        f"{float(np.median(np.diff(x))):.3g} cm-1 apart)"
    )
    return dataclasses.replace(
        spectrum,
        shift_cm1=x,
        intensity=bin_means(spectrum.intensity, size),
        notes=(*spectrum.notes, note),
    )


def limit_points(spectrum: MeasuredSpectrum, max_points: int = MAX_POINTS) -> MeasuredSpectrum:
    """The spectrum binned to at most ``max_points`` points, announced by a warning.

    Warns
    -----
    AccuracyWarning
        When the spectrum had more points and was binned (the message says how).
    """
    if len(spectrum) <= max_points:
        return spectrum
    size = -(-len(spectrum) // max_points)
    binned = bin_spectrum(spectrum, size)
    warnings.warn(
        f"{spectrum.where}: {binned.notes[-1]}; more than {max_points} points per channel are "
        "binned to bound time and memory",
        AccuracyWarning,
        stacklevel=2,
    )
    return binned
