"""Band detection on a (possibly uneven) Raman-shift axis.

:func:`find_bands` wraps :func:`scipy.signal.find_peaks`, whose distances and widths are in
samples, and states every criterion in cm⁻¹ or in units of the noise instead: prominence as a
signal-to-noise ratio, widths and separations in cm⁻¹ converted with the local spacing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import find_peaks, savgol_filter

from vibrapol.errors import VibrapolError
from vibrapol.measured.density import noise_sigma
from vibrapol.measured.spectrum import MeasuredSpectrum, check_range

#: Default prominence a band needs, in noise standard deviations.  Five keeps noise maxima out
#: (a Gaussian excursion of 5σ is a 1-in-3·10⁶ event per point) while finding bands a trained
#: eye would call clear.
MIN_SNR = 5.0
#: Default narrowest band, in points of the local spacing: single-point maxima are noise or
#: left-over spikes.
MIN_FWHM_POINTS = 2.0
#: Default narrowest band in cm⁻¹ whatever the point spacing: bands of liquids and solutions
#: are several cm⁻¹ wide and dispersive Raman spectrometers resolve about 0.5–2 cm⁻¹ (common
#: practice, from memory), so a narrower maximum on a densely sampled axis is a noise
#: excursion.  Pass ``min_fwhm_cm1`` for gas-phase or other narrow lines.
MIN_FWHM_CM1 = 0.5


@dataclass(frozen=True)
class BandCandidate:
    """A band found by :func:`find_bands` (a starting point for fitting, not a fit).

    Attributes
    ----------
    position_cm1 : float
        Top of the band, refined by a parabola through the highest point and its neighbours.
    height : float
        Intensity at the highest point.
    prominence : float
        Height above the higher of the two surrounding minima (scipy's definition).
    fwhm_cm1 : float
        Width at half prominence in cm⁻¹ (overlapping bands make this an upper bound).
    snr : float
        Prominence over the noise standard deviation.
    """

    position_cm1: float
    height: float
    prominence: float
    fwhm_cm1: float
    snr: float


def _vertex(x: np.ndarray, y: np.ndarray, i: int) -> float:
    """Abscissa of the parabola through points i−1, i, i+1 (uneven spacing allowed)."""
    if i == 0 or i == x.size - 1:
        return float(x[i])
    x0, x1, x2 = x[i - 1 : i + 2]
    y0, y1, y2 = y[i - 1 : i + 2]
    den = (x0 - x1) * (x0 - x2) * (x1 - x2)
    a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / den
    b = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / den
    if a >= 0:
        return float(x1)
    return float(np.clip(-b / (2 * a), x0, x2))


def _shoulders(
    x: np.ndarray, y: np.ndarray, sigma: float, found: list[BandCandidate], min_snr: float
) -> list[BandCandidate]:
    """Bands without a maximum of their own: maxima of −y'' away from the found bands.

    The second derivative is taken with a cubic Savitzky–Golay filter over about half the
    median width of the bands already found (at least 5 points); its noise is estimated by
    the MAD of the derivative itself.
    """
    if not found:
        return []
    spacing = float(np.median(np.diff(x)))
    points = max(5, int(round(0.5 * np.median([c.fwhm_cm1 for c in found]) / spacing)) | 1)
    if points >= x.size:
        return []
    d2 = -savgol_filter(y, points, 3, deriv=2, delta=spacing)
    d2_sigma = 1.4826 * float(np.median(np.abs(d2 - np.median(d2))))
    if d2_sigma <= 0:
        return []
    idx, props = find_peaks(d2, height=min_snr * d2_sigma, width=0.0, rel_height=0.5)
    grid = np.arange(x.size, dtype=float)
    out = []
    for k, i in enumerate(idx):
        pos = _vertex(x, d2, int(i))
        if y[i] < min_snr * sigma:
            continue
        if any(abs(pos - c.position_cm1) < 0.5 * c.fwhm_cm1 for c in found):
            continue
        width = float(
            np.interp(props["right_ips"][k], grid, x) - np.interp(props["left_ips"][k], grid, x)
        )
        out.append(BandCandidate(pos, float(y[i]), float("nan"), 2.0 * width, float(y[i] / sigma)))
    return out


def find_bands(
    spectrum: MeasuredSpectrum,
    *,
    min_snr: float = MIN_SNR,
    min_fwhm_cm1: float | None = None,
    max_fwhm_cm1: float | None = None,
    min_separation_cm1: float = 0.0,
    range_cm1: tuple[float, float] | None = None,
    noise: float | None = None,
    shoulders: bool = True,
) -> tuple[BandCandidate, ...]:
    """Find bands in a baseline-corrected spectrum.

    A band is a local maximum whose height above zero and whose prominence both exceed
    ``min_snr`` noise standard deviations, and whose width at half prominence is at least
    ``min_fwhm_cm1``.  (Prominence alone is not enough: in pure noise the prominence of the
    largest maximum reaches 6–7 σ, its height only ≈ 3.7 σ in a thousand points.)
    With ``shoulders``, bands that make no maximum of their own (a shoulder on a stronger
    neighbour) are added from maxima of the smoothed second derivative −y''.

    Parameters
    ----------
    spectrum : MeasuredSpectrum
        Baseline-corrected spectrum (see :func:`vibrapol.measured.cleaning.clean`).
    min_snr : float
        Smallest height and prominence in noise standard deviations (:data:`MIN_SNR`).
    min_fwhm_cm1 : float, optional
        Narrowest band; default :data:`MIN_FWHM_POINTS` × the local spacing, and at least
        :data:`MIN_FWHM_CM1`.
    max_fwhm_cm1 : float, optional
        Widest band (e.g. to skip broad fluorescence humps); default none.
    min_separation_cm1 : float
        Of two candidates closer than this, only the more prominent is kept.
    range_cm1 : (low, high), optional
        Only bands inside this range.
    noise : float, optional
        Noise standard deviation of one point; default
        :func:`vibrapol.measured.density.noise_sigma` (which allows for noise correlated
        between neighbouring points, as in spectra interpolated onto a finer grid).
    shoulders : bool
        Also report shoulders (their ``prominence`` is NaN).

    Returns
    -------
    tuple of BandCandidate
        Sorted by position.

    Raises
    ------
    VibrapolError
        For a reversed or empty ``range_cm1``, or a ``min_snr`` that is not positive.
    """
    if not (np.isfinite(min_snr) and min_snr > 0):
        raise VibrapolError(f"min_snr (--min-snr) must be a positive number, got {min_snr}")
    x, y = spectrum.shift_cm1, spectrum.intensity
    lo, hi = check_range(*range_cm1, "band range") if range_cm1 else (-np.inf, np.inf)
    sigma = noise_sigma(y, spectrum.spacing_cm1) if noise is None else float(noise)
    if sigma <= 0:
        sigma = 1e-12 * max(float(np.max(np.abs(y))), 1e-300)
    idx, props = find_peaks(
        y, height=min_snr * sigma, prominence=min_snr * sigma, width=0.0, rel_height=0.5
    )
    grid = np.arange(x.size, dtype=float)
    left = np.interp(props["left_ips"], grid, x)
    right = np.interp(props["right_ips"], grid, x)
    found: list[BandCandidate] = []
    for k, i in enumerate(idx.tolist()):
        local = 0.5 * (x[min(i + 1, x.size - 1)] - x[max(i - 1, 0)])
        fwhm = float(right[k] - left[k])
        narrowest = max(MIN_FWHM_POINTS * local, MIN_FWHM_CM1)
        if fwhm < (min_fwhm_cm1 if min_fwhm_cm1 is not None else narrowest):
            continue
        if max_fwhm_cm1 is not None and fwhm > max_fwhm_cm1:
            continue
        prominence = float(props["prominences"][k])
        found.append(
            BandCandidate(_vertex(x, y, int(i)), float(y[i]), prominence, fwhm, prominence / sigma)
        )
    if shoulders:
        found += _shoulders(x, y, sigma, found, min_snr)
    found = [c for c in found if lo <= c.position_cm1 <= hi]
    if min_separation_cm1 > 0:
        kept: list[BandCandidate] = []
        for cand in sorted(found, key=lambda c: -c.height):
            if all(abs(cand.position_cm1 - k.position_cm1) >= min_separation_cm1 for k in kept):
                kept.append(cand)
        found = kept
    return tuple(sorted(found, key=lambda c: c.position_cm1))
