"""Cleaning of measured spectra: cosmic-ray spikes, baseline, optional smoothing.

:func:`clean` runs the three steps in that order, each one optional, and returns the cleaned
spectrum with a :class:`CleaningReport` of what every step changed.  The steps are also pure
functions on arrays (:func:`find_spikes`, :func:`remove_spikes`, :func:`estimate_baseline`,
:func:`smooth`, :func:`noise_sigma`).
"""

from __future__ import annotations

import dataclasses
import inspect
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from pybaselines import Baseline
from scipy.signal import savgol_filter

from vibrapol.errors import VibrapolError
from vibrapol.measured.density import bin_means, limit_points, noise_estimate, noise_sigma
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair

__all__ = [
    "BASELINE_METHOD",
    "BASELINE_PERIOD_CM1",
    "SPIKE_MAX_POINTS",
    "SPIKE_THRESHOLD",
    "CleaningReport",
    "clean",
    "clean_pair",
    "estimate_baseline",
    "find_spikes",
    "modified_z_scores",
    "noise_sigma",
    "remove_spikes",
    "smooth",
    "whittaker_lam",
]

#: Modified z-score above which a jump between neighbouring points counts as a spike edge.
#: 3.5 is the usual outlier cut for modified z-scores (B. Iglewicz and D. C. Hoaglin, *How to
#: Detect and Handle Outliers*, ASQC (1993); from memory); we use 5 so that shot noise on
#: strong bands is not taken for spikes (tested on invented spectra, tests/test_measured_cleaning).
SPIKE_THRESHOLD = 5.0
#: Modified z-score of the weaker outer edges of a spike found with :data:`SPIKE_THRESHOLD`
#: (a spike shared by two pixels): the usual outlier cut of 3.5 (Iglewicz and Hoaglin 1993,
#: from memory).
SPIKE_EDGE_THRESHOLD = 3.5
#: Widest spike removed, in points: cosmic rays hit one to three detector pixels; anything
#: wider is treated as a band.
SPIKE_MAX_POINTS = 3
#: Fewest bin means a default-lam baseline is estimated on (see :data:`MAX_DEFAULT_LAM`).
MIN_BASELINE_POINTS = 500
#: Default baseline algorithm of pybaselines: arPLS (Baek et al. 2015) needs no threshold and
#: is robust to bands of very different heights.
BASELINE_METHOD = "arpls"
#: Default stiffness of penalized-least-squares baselines, as the period in cm⁻¹ that the
#: smoother passes at half amplitude; turned into pybaselines' ``lam`` from the point spacing
#: by :func:`whittaker_lam`.  Bands are far narrower (5–30 cm⁻¹) than this.
BASELINE_PERIOD_CM1 = 400.0
#: Largest default ``lam`` used as such.  The banded Cholesky solve of W + lam DᵀD loses all
#: precision near lam ≈ 10¹⁶ (it fails outright on a million points 0.003 cm⁻¹ apart); with
#: the default lam the baseline of a denser spectrum is estimated on means of neighbouring
#: points, spaced so that lam stays at most this, and interpolated back (the baseline varies
#: over hundreds of cm⁻¹, the bins are about 1 cm⁻¹ wide).
MAX_DEFAULT_LAM = 1e8


#: Φ⁻¹(3/4): the median absolute deviation of a normal distribution in units of its σ
#: (common practice for the modified z-score; from memory).
MAD_PER_SIGMA = 0.6745
#: √(2/π): the mean absolute deviation of a normal distribution in units of its σ.
MEAN_AD_PER_SIGMA = float(np.sqrt(2.0 / np.pi))


def modified_z_scores(values: np.ndarray) -> np.ndarray:
    """Modified z-scores (v − median) / σ̂, with σ̂ = MAD / 0.6745.

    When more than half the values equal the median (MAD = 0), σ̂ is taken from the mean
    absolute deviation instead, σ̂ = mean|v − median| / √(2/π); either way a score of z means
    z standard deviations of a normal distribution.

    References
    ----------
    B. Iglewicz and D. C. Hoaglin, *How to Detect and Handle Outliers*, ASQC (1993) (modified
    z-score 0.6745 (v − median)/MAD; from memory), as used for spikes by D. A. Whitaker and
    K. Hayes, Chemom. Intell. Lab. Syst. 179, 82 (2018).
    """
    v = np.asarray(values, dtype=float)
    med = np.median(v)
    mad = np.median(np.abs(v - med))
    if mad > 0:
        sigma = mad / MAD_PER_SIGMA
    else:
        sigma = np.mean(np.abs(v - med)) / MEAN_AD_PER_SIGMA or 1.0
    return (v - med) / sigma


def find_spikes(
    intensity: np.ndarray, threshold: float = SPIKE_THRESHOLD, max_points: int = SPIKE_MAX_POINTS
) -> np.ndarray:
    """Indices of points hit by cosmic-ray spikes (positive, narrow outliers).

    Following Whitaker and Hayes (2018), the modified z-score of the first differences
    Δyᵢ = yᵢ₊₁ − yᵢ (in points, not cm⁻¹: spikes are detector-pixel events) marks steep edges.
    A spike is a run of rising edges followed, within ``max_points`` points, by a run of
    falling edges; everything between is replaced, and up to ``max_points // 3`` (at least
    one) more points on either side whose edges score above :data:`SPIKE_EDGE_THRESHOLD`.
    A band, however strong, has edges spread over more points than that and is left alone.

    Parameters
    ----------
    intensity : ndarray, shape (n,)
    threshold : float
        Modified z-score for an edge (see :data:`SPIKE_THRESHOLD`).
    max_points : int
        Widest spike, in points.

    Returns
    -------
    ndarray of int
        Sorted indices of spike points.

    References
    ----------
    D. A. Whitaker and K. Hayes, Chemom. Intell. Lab. Syst. 179, 82 (2018).
    """
    y = np.asarray(intensity, dtype=float)
    if threshold <= 0 or max_points < 1:
        raise VibrapolError("spike threshold must be positive and max_points at least 1")
    z = modified_z_scores(np.diff(y))
    up, down = z > threshold, z < -threshold
    spikes: list[int] = []
    k, n = 0, z.size
    grow = max(1, max_points // 3)
    for first in np.flatnonzero(up):
        if first < k:
            continue
        start = k = int(first)
        while k < n and up[k]:
            k += 1
        gap_end = min(n, k + max_points)
        m = next((j for j in range(k, gap_end) if down[j]), None)
        if m is None:
            continue
        while m + 1 < n and down[m + 1]:
            m += 1
        if m - start <= max_points:
            # A spike shared unevenly by two pixels (or spread by interpolation) has weaker
            # outer edges: take them in while their score exceeds SPIKE_EDGE_THRESHOLD.
            lo, hi = start, m
            while lo > 0 and start - lo < grow and z[lo - 1] > SPIKE_EDGE_THRESHOLD:
                lo -= 1
            while hi + 1 < n and hi - m < grow and z[hi + 1] < -SPIKE_EDGE_THRESHOLD:
                hi += 1
            spikes.extend(range(lo + 1, hi + 1))
        k = m + 1
    return np.array(sorted(set(spikes)), dtype=int)


def remove_spikes(shift_cm1: np.ndarray, intensity: np.ndarray, indices: np.ndarray) -> np.ndarray:
    """Replace spike points by linear interpolation between the nearest clean neighbours."""
    y = np.array(intensity, dtype=float, copy=True)
    bad = np.zeros(y.size, dtype=bool)
    bad[np.asarray(indices, dtype=int)] = True
    if bad.any() and not bad.all():
        x = np.asarray(shift_cm1, dtype=float)
        y[bad] = np.interp(x[bad], x[~bad], y[~bad])
    return y


def whittaker_lam(spacing_cm1: float, period_cm1: float = BASELINE_PERIOD_CM1) -> float:
    """Smoothing parameter ``lam`` of a second-difference Whittaker smoother.

    Its frequency response is 1/(1 + lam (2 sin πf)⁴) for f in cycles per point, which is ½
    at f = 1/(2π lam^¼); a period P in cm⁻¹ on points Δx apart therefore needs
    lam = (P / (2π Δx))⁴.

    References
    ----------
    P. H. C. Eilers, Anal. Chem. 75, 3631 (2003) (the Whittaker smoother).
    """
    return float((period_cm1 / (2.0 * np.pi * spacing_cm1)) ** 4)


def estimate_baseline(
    shift_cm1: np.ndarray,
    intensity: np.ndarray,
    method: str = BASELINE_METHOD,
    options: Mapping[str, object] | None = None,
) -> tuple[np.ndarray, dict[str, object]]:
    """Baseline of a spectrum from any pybaselines algorithm.

    Parameters
    ----------
    shift_cm1, intensity : ndarray, shape (n,)
    method : str
        Name of a :class:`pybaselines.Baseline` method (``"arpls"``, ``"asls"``,
        ``"airpls"``, ``"imodpoly"``, ``"snip"`` …).
    options : mapping, optional
        Keyword arguments of that method.  For methods with a ``lam`` the default is
        :func:`whittaker_lam` of the median spacing.

    Returns
    -------
    baseline : ndarray, shape (n,)
    used : dict
        The options actually passed (including the default ``lam``); when the default lam
        would exceed :data:`MAX_DEFAULT_LAM`, also ``estimated_on_points``: the number of
        bin means the baseline was estimated on before linear interpolation back.

    References
    ----------
    S.-J. Baek, A. Park, Y.-J. Ahn and J. Choo, Analyst 140, 250 (2015) (arPLS);
    D. Erb, pybaselines, https://github.com/derb12/pybaselines.
    """
    x = np.asarray(shift_cm1, dtype=float)
    fitter = Baseline(x_data=x, assume_sorted=True)
    known = sorted(m for m, _ in inspect.getmembers(Baseline, inspect.isfunction) if m[0] != "_")
    name = method.lower()
    if name not in known:
        raise VibrapolError(
            f"unknown baseline method {method!r}; use a pybaselines.Baseline method such as "
            "arpls, asls, airpls, imodpoly or snip"
        )
    func = getattr(fitter, name)
    used = dict(options or {})
    y = np.asarray(intensity, dtype=float)
    size = 1
    if "lam" in inspect.signature(func).parameters and "lam" not in used:
        spacing = float(np.median(np.diff(x)))
        lam = whittaker_lam(spacing)
        if lam > MAX_DEFAULT_LAM and x.size > 2 * MIN_BASELINE_POINTS:
            size = min(int(np.ceil((lam / MAX_DEFAULT_LAM) ** 0.25)), x.size // MIN_BASELINE_POINTS)
            coarse = bin_means(x, size)
            fitter = Baseline(x_data=coarse, assume_sorted=True)
            func = getattr(fitter, name)
            lam = whittaker_lam(float(np.median(np.diff(coarse))))
        used["lam"] = lam
    try:
        if size > 1:
            coarse_base, _ = func(bin_means(y, size), **used)
            baseline = np.interp(x, bin_means(x, size), coarse_base)
        else:
            baseline, _ = func(y, **used)
    except TypeError as exc:
        raise VibrapolError(f"baseline method {method!r}: bad option ({exc})") from exc
    except (np.linalg.LinAlgError, ValueError) as exc:
        raise VibrapolError(
            f"baseline method {method!r} failed on {x.size} points ({exc}); try another "
            "method or a smaller lam"
        ) from exc
    if size > 1:
        used["estimated_on_points"] = -(-x.size // size)
    return np.asarray(baseline, dtype=float), used


def smooth(
    shift_cm1: np.ndarray, intensity: np.ndarray, window_cm1: float, polyorder: int = 3
) -> tuple[np.ndarray, int]:
    """Savitzky–Golay smoothing with a window given in cm⁻¹.

    The window is converted to an odd number of points from the median spacing (the filter
    assumes even spacing; on uneven axes it is approximate).  Smoothing lowers and widens
    narrow bands; fit bands on unsmoothed data when widths matter.

    Returns
    -------
    smoothed : ndarray
    window_points : int

    References
    ----------
    A. Savitzky and M. J. E. Golay, Anal. Chem. 36, 1627 (1964).
    """
    x = np.asarray(shift_cm1, dtype=float)
    points = int(round(window_cm1 / float(np.median(np.diff(x)))))
    points += 1 - points % 2
    if window_cm1 <= 0 or points <= polyorder or points > x.size:
        raise VibrapolError(
            f"smoothing window {window_cm1:g} cm-1 gives {points} points; it must exceed "
            f"polyorder {polyorder} and not exceed the {x.size} points of the spectrum"
        )
    return savgol_filter(np.asarray(intensity, dtype=float), points, polyorder), points


def _read_only(values: np.ndarray) -> np.ndarray:
    out = np.array(values, dtype=float, copy=True)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class CleaningReport:
    """What :func:`clean` did to one spectrum.

    Attributes
    ----------
    spike_indices : tuple of int
        Points replaced as spikes (empty when none or when the step was off).
    spike_shifts_cm1 : tuple of float
        Their Raman shifts.
    spike_threshold : float or None
        Threshold used; None when spike removal was off.
    baseline_method : str or None
        pybaselines method; None when baseline removal was off.
    baseline_options : tuple of (str, object)
        Options passed to it (including the default ``lam``).
    baseline : ndarray or None
        The baseline subtracted, shape (n,).
    smoothing_window_points : int or None
        Savitzky–Golay window; None when smoothing was off.
    noise_sigma : float
        Noise standard deviation of the cleaned spectrum (:func:`noise_sigma`).
    steps : tuple of str
        One line per step saying what changed.
    """

    spike_indices: tuple[int, ...]
    spike_shifts_cm1: tuple[float, ...]
    spike_threshold: float | None
    baseline_method: str | None
    baseline_options: tuple[tuple[str, object], ...]
    baseline: np.ndarray | None
    smoothing_window_points: int | None
    noise_sigma: float
    steps: tuple[str, ...]


def clean(
    spectrum: MeasuredSpectrum,
    *,
    spikes: bool = True,
    spike_threshold: float = SPIKE_THRESHOLD,
    spike_max_points: int = SPIKE_MAX_POINTS,
    baseline: str | None = BASELINE_METHOD,
    baseline_options: Mapping[str, object] | None = None,
    smooth_window_cm1: float | None = None,
    smooth_polyorder: int = 3,
) -> tuple[MeasuredSpectrum, CleaningReport]:
    """Remove spikes, subtract a baseline and optionally smooth one spectrum.

    Parameters
    ----------
    spectrum : MeasuredSpectrum
    spikes : bool
        Remove cosmic-ray spikes (:func:`find_spikes`); default on.
    spike_threshold, spike_max_points
        See :func:`find_spikes`.
    baseline : str or None
        pybaselines method (default arPLS), or None to keep the baseline.
    baseline_options : mapping, optional
        Options of that method (e.g. ``{"lam": 1e7}``).
    smooth_window_cm1 : float, optional
        Savitzky–Golay window in cm⁻¹; default None (no smoothing: the band fit copes with
        noise and smoothing biases widths).
    smooth_polyorder : int
        Polynomial order of the smoothing.

    Returns
    -------
    cleaned : MeasuredSpectrum
        New spectrum (the input is unchanged), with one note per step.
    report : CleaningReport

    Warns
    -----
    AccuracyWarning
        When the spectrum has more than :data:`vibrapol.measured.density.MAX_POINTS` points
        and is binned to fewer (the first step line and a note say how).
    """
    steps: list[str] = []
    dense = limit_points(spectrum)
    if dense is not spectrum:
        steps.append(dense.notes[-1])
    x, y = dense.shift_cm1, dense.intensity.copy()
    spacing = dense.spacing_cm1
    idx = np.array([], dtype=int)
    if spikes:
        # On a grid finer than the detector pixels (interpolated exports) a spike spreads
        # over as many points as the noise is correlated over: widen the limit by τ.
        tau = noise_estimate(y, spacing).variance_factor
        widest = max(spike_max_points, int(round(spike_max_points * tau)))
        idx = find_spikes(y, spike_threshold, widest)
        y = remove_spikes(x, y, idx)
        where = ", ".join(f"{v:.1f}" for v in x[idx][:10]) + (" …" if idx.size > 10 else "")
        steps.append(
            f"removed {idx.size} spike point(s)"
            + (f" at {where} cm-1" if idx.size else "")
            + (
                f" (spikes up to {widest} points wide: the noise is correlated over "
                f"{tau:.1f} points)"
                if widest != spike_max_points
                else ""
            )
        )
    base: np.ndarray | None
    used: dict[str, object]
    base, used = None, {}
    if baseline is not None:
        base, used = estimate_baseline(x, y, baseline, baseline_options)
        y = y - base
        opts = ", ".join(
            f"{k}={v:.3g}" if isinstance(v, float) else f"{k}={v}" for k, v in used.items()
        )
        steps.append(
            f"subtracted {baseline} baseline ({opts}): {base.min():.4g} to {base.max():.4g}"
        )
    window = None
    if smooth_window_cm1 is not None:
        y, window = smooth(x, y, smooth_window_cm1, smooth_polyorder)
        steps.append(f"Savitzky-Golay smoothing over {window} points (order {smooth_polyorder})")
    cleaned = dataclasses.replace(dense, intensity=y, notes=(*spectrum.notes, *steps))
    report = CleaningReport(
        spike_indices=tuple(int(i) for i in idx),
        spike_shifts_cm1=tuple(float(v) for v in x[idx]),
        spike_threshold=spike_threshold if spikes else None,
        baseline_method=baseline,
        baseline_options=tuple(used.items()),
        baseline=None if base is None else _read_only(base),
        smoothing_window_points=window,
        noise_sigma=noise_sigma(y, spacing),
        steps=tuple(steps) or ("nothing changed (all steps off)",),
    )
    return cleaned, report


def clean_pair(
    pair: PolarizedPair, **options: object
) -> tuple[PolarizedPair, CleaningReport, CleaningReport | None]:
    """Clean VV and VH with the same options (see :func:`clean`).

    Returns
    -------
    pair : PolarizedPair
    vv_report, vh_report : CleaningReport (vh_report None without VH)
    """
    vv, vv_report = clean(pair.vv, **options)  # type: ignore[arg-type]
    if pair.vh is None:
        return PolarizedPair(vv), vv_report, None
    vh, vh_report = clean(pair.vh, **options)  # type: ignore[arg-type]
    return PolarizedPair(vv, vh), vv_report, vh_report
