"""Least-squares fit of overlapping bands, in one spectrum or jointly in VV and VH.

Model of channel c (VV, VH) on the points within ``window_fwhm`` FWHM of any band:

    y_c(x) = Σ_j A_jc P(x; x0_j, w_jc, η_j) + b_kc + s_kc (x − x̄_k)

with unit-area profiles P (:mod:`vibrapol.measured.profiles`), so A is the band area; the
positions x0_j (and by default the widths w_j and the Lorentzian fraction η_j) are shared by
the channels; b, s are a local offset and slope per connected fit window k and channel, taking
up what the baseline removal left.  Every band contributes at every point (tails of one band
under its neighbour are modelled, not cut): the bands of one window are fitted together, and
the tails of bands of other windows are held at their values from a first pass of
window-by-window fits (:mod:`vibrapol.measured.window_fit`), so the cost grows with the
number of points and bands, not with their product.

The residuals of each channel are divided by its noise standard deviation; the fit is
:func:`scipy.optimize.least_squares` (trust-region reflective, analytic Jacobian); standard
errors are the square roots of the diagonal of s²(JᵀJ)⁻¹ at the solution, with s² the
reduced χ² of all windows together (so they reflect the actual scatter about the model),
times the variance factor τ of noise correlated between neighbouring points
(:func:`vibrapol.measured.density.noise_estimate`; τ = 1 for white noise).

References
----------
Covariance of least-squares estimates from the Jacobian: W. H. Press et al., *Numerical
Recipes*, 3rd ed., Cambridge (2007), §15.5.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.measured.density import noise_estimate
from vibrapol.measured.peaks import BandCandidate, find_bands
from vibrapol.measured.profiles import SHAPES, height_factor, profile
from vibrapol.measured.spectrum import MeasuredSpectrum
from vibrapol.measured.window_fit import WindowFit, fit_window

#: Default half-width of the fit window around each band, in units of its starting FWHM.
WINDOW_FWHM = 4.0
#: Default band shape.  Condensed-phase Raman bands are close to Lorentzian (dephasing
#: broadening) when the spectrometer's slit function is narrower than the band.
SHAPE = "lorentzian"

Starts = Sequence[BandCandidate] | Sequence[float] | None


@dataclass(frozen=True)
class Band:
    """One fitted band in one channel.

    Attributes
    ----------
    position_cm1, position_err_cm1 : float
        Centre and its standard error, cm⁻¹.
    fwhm_cm1, fwhm_err_cm1 : float
        Full width at half maximum and its standard error, cm⁻¹.
    area, area_err : float
        Integrated intensity (intensity units × cm⁻¹) and its standard error.
    eta, eta_err : float
        Lorentzian fraction of a pseudo-Voigt band (NaN for the other shapes).
    height : float
        Peak height of the fitted profile.
    """

    position_cm1: float
    position_err_cm1: float
    fwhm_cm1: float
    fwhm_err_cm1: float
    area: float
    area_err: float
    eta: float
    eta_err: float
    height: float


@dataclass(frozen=True, eq=False)
class BandFit:
    """Result of fitting bands in one channel.

    Attributes
    ----------
    label : str
        Channel (e.g. ``"VV"``).
    shape : str
        Band shape used.
    bands : tuple of Band
        Sorted by position.
    windows_cm1 : tuple of (float, float)
        The fitted ranges (connected windows).
    n_points : int
        Points fitted (in this channel).
    reduced_chi2 : float
        χ²/(degrees of freedom) of the whole (joint) fit with the noise estimate as σ; ≈ 1 for
        a good model.
    noise_sigma : float
        Noise standard deviation used to weight this channel.
    converged : bool
        Whether the optimizer reported success.
    message : str
        The optimizer's message.
    """

    label: str
    shape: str
    bands: tuple[Band, ...]
    windows_cm1: tuple[tuple[float, float], ...]
    n_points: int
    reduced_chi2: float
    noise_sigma: float
    converged: bool
    message: str

    @property
    def positions_cm1(self) -> np.ndarray:
        """Band centres, cm⁻¹."""
        return np.array([b.position_cm1 for b in self.bands])

    @property
    def areas(self) -> np.ndarray:
        """Band areas."""
        return np.array([b.area for b in self.bands])

    def evaluate(self, shift_cm1: np.ndarray) -> np.ndarray:
        """Sum of the fitted bands at the given shifts (without the local baselines)."""
        x = np.asarray(shift_cm1, dtype=float)
        total = np.zeros_like(x)
        for b in self.bands:
            eta = 0.5 if np.isnan(b.eta) else b.eta
            total += b.area * profile(self.shape, x, b.position_cm1, b.fwhm_cm1, eta)
        return total


@dataclass(frozen=True, eq=False)
class JointResult:
    """Full result of :func:`fit_joint`: one :class:`BandFit` per channel and the covariances.

    Attributes
    ----------
    fits : tuple of BandFit
        Per channel, in the order given.
    area_covariance : ndarray, shape (n_bands, n_channels, n_channels)
        Covariance of the areas of each band across channels (for ratios such as ρ).
    """

    fits: tuple[BandFit, ...]
    area_covariance: np.ndarray


def _starts(
    spectrum: MeasuredSpectrum, starts: Starts, fwhm_cm1: float | None
) -> tuple[np.ndarray, np.ndarray]:
    if starts is None:
        starts = find_bands(spectrum)
        if not starts:
            raise VibrapolError(f"{spectrum.where}: no bands found to fit (try a lower min_snr)")
    items = list(starts)
    if not items:
        raise VibrapolError(f"{spectrum.where}: no starting bands given")
    candidates = [c for c in items if isinstance(c, BandCandidate)]
    if candidates:
        pos = np.array([c.position_cm1 for c in candidates])
        fwhm = np.array([c.fwhm_cm1 for c in candidates])
    else:
        pos = np.array(items, dtype=float)
        if fwhm_cm1 is not None:
            fwhm = np.full(pos.shape, float(fwhm_cm1))
        else:
            found = find_bands(spectrum, min_snr=3.0)
            fwhm = np.full(pos.shape, 6.0 * spectrum.spacing_cm1)
            for i, p in enumerate(pos):
                near = [c for c in found if abs(c.position_cm1 - p) < c.fwhm_cm1]
                if near:
                    fwhm[i] = min(near, key=lambda c: abs(c.position_cm1 - p)).fwhm_cm1
    if fwhm_cm1 is not None:
        fwhm = np.full(pos.shape, float(fwhm_cm1))
    x = spectrum.shift_cm1
    if pos.size == 0 or np.any(~np.isfinite(pos)) or np.any((pos < x[0]) | (pos > x[-1])):
        raise VibrapolError(
            f"{spectrum.where}: band start positions must lie inside {x[0]:g}–{x[-1]:g} cm-1"
        )
    if np.any(fwhm <= 0):
        raise VibrapolError(f"{spectrum.where}: starting FWHM must be positive")
    order = np.argsort(pos)
    return pos[order], fwhm[order]


def _windows(
    x: np.ndarray, pos: np.ndarray, fwhm: np.ndarray, width: float
) -> list[tuple[float, float]]:
    spans = sorted(zip(pos - width * fwhm, pos + width * fwhm, strict=True))
    merged: list[list[float]] = []
    for lo, hi in spans:
        if merged and lo <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], hi)
        else:
            merged.append([lo, hi])
    return [(max(lo, x[0]), min(hi, x[-1])) for lo, hi in merged]


def fit_joint(
    spectra: Sequence[MeasuredSpectrum],
    starts: Starts = None,
    *,
    fwhm_cm1: float | None = None,
    shape: str = SHAPE,
    share_fwhm: bool = True,
    window_fwhm: float = WINDOW_FWHM,
    local_baseline: str = "linear",
    position_freedom_cm1: float | None = None,
    min_area_snr: float | None = 3.0,
) -> JointResult:
    """Fit the same bands in one or more channels on a common axis.

    Bands whose windows (``window_fwhm`` starting FWHMs on either side) overlap are fitted
    together; separate windows are fitted one by one, each with the tails of the bands of
    the other windows held at their values from a first pass.  Time and memory therefore
    grow with the number of points and of bands, not with their product.

    Parameters
    ----------
    spectra : sequence of MeasuredSpectrum
        Channels on the same shift axis (e.g. VV, VH); the first drives detection and has
        areas bounded at ≥ 0; the others' areas are free (a VH area may come out slightly
        negative for a strongly polarized band on a noisy spectrum, keeping ratios unbiased).
    starts : sequence of BandCandidate or of float, optional
        Starting bands; default :func:`vibrapol.measured.peaks.find_bands` on the first
        channel.
    fwhm_cm1 : float, optional
        Starting FWHM for all bands; default from the candidates (or from detection near
        each given position).
    shape : {"lorentzian", "gaussian", "pseudo_voigt"}
    share_fwhm : bool
        One width per band for all channels (default).  In liquids the anisotropic (VH)
        spectrum of a polarized band can be broader through reorientation; set False to
        fit each channel's width.
    window_fwhm : float
        Half-width of the fit window around each band in starting FWHMs.
    local_baseline : {"linear", "constant", "none"}
        Local baseline per window and channel.
    position_freedom_cm1 : float, optional
        How far a centre may move from its start; default its starting FWHM (at least two
        points).
    min_area_snr : float or None
        After a fit, the band of the first channel with the smallest area/standard error in
        its window is dropped when that ratio is below this, and the window refitted, until
        all pass (spurious starts, e.g. a noise "shoulder", vanish this way).  None keeps
        every start.

    Returns
    -------
    JointResult

    Raises
    ------
    VibrapolError
        Unknown shape or baseline, channels on different axes, too few points for the bands.

    Warns
    -----
    AccuracyWarning
        When the optimizer did not converge or a band ended at a bound of its position or
        width.
    """
    if shape not in SHAPES:
        raise VibrapolError(f"unknown band shape {shape!r}; use one of {', '.join(SHAPES)}")
    n_base = {"none": 0, "constant": 1, "linear": 2}.get(local_baseline)
    if n_base is None:
        raise VibrapolError(
            f"local_baseline must be linear, constant or none, not {local_baseline!r}"
        )
    x = spectra[0].shift_cm1
    for s in spectra[1:]:
        if s.shift_cm1.shape != x.shape or not np.allclose(s.shift_cm1, x):
            raise VibrapolError(f"{s.where}: channels must share one axis (use align_pair)")
    pos0, w0 = _starts(spectra[0], starts, fwhm_cm1)
    spacing = spectra[0].spacing_cm1
    estimates = [noise_estimate(s.intensity, spacing) for s in spectra]
    noise = [
        e.sigma if e.sigma > 0 else 1e-9 * max(float(np.max(np.abs(s.intensity))), 1e-300)
        for e, s in zip(estimates, spectra, strict=True)
    ]
    fit = _Fitter(
        x, [s.intensity for s in spectra], noise, max(e.variance_factor for e in estimates),
        shape, share_fwhm, window_fwhm, n_base, position_freedom_cm1, spectra[0].where,
    )  # fmt: skip
    first: list[WindowFit] = []
    dropped: list[WindowFit] = []
    for sel in fit.groups(pos0, w0):
        first += fit.with_dropping(pos0[sel], w0[sel], min_area_snr, dropped)
    if not first:  # every band fell below min_area_snr: keep the best one, as a lone start
        first = [max(dropped, key=lambda w: float(w.area_snr()[0]))]
    final = first
    if len(first) > 1:  # refit each window with the other windows' tails in place
        final = [
            fit.window(w.starts_cm1, w.start_fwhm_cm1, fit.tails(first, k), init=w)
            for k, w in enumerate(first)
        ]
    for message in (msg for w in final for msg in w.problems):
        warnings.warn(message, AccuracyWarning, stacklevel=2)
    return _assemble(spectra, final, shape, noise)


class _Fitter:
    """The fixed settings of one :func:`fit_joint` call, fitting window by window."""

    def __init__(
        self,
        x: np.ndarray,
        ys: list[np.ndarray],
        noise: list[float],
        tau: float,
        shape: str,
        share_fwhm: bool,
        window_fwhm: float,
        n_base: int,
        freedom: float | None,
        where: str,
    ) -> None:
        self.x, self.ys, self.noise, self.tau = x, ys, noise, tau
        self.shape, self.share_fwhm, self.window_fwhm = shape, share_fwhm, window_fwhm
        self.n_base, self.freedom, self.where = n_base, freedom, where

    def groups(self, pos0: np.ndarray, w0: np.ndarray) -> list[np.ndarray]:
        """Indices of the bands of each connected window, in window order."""
        windows = _windows(self.x, pos0, w0, self.window_fwhm)
        out = []
        for lo, hi in windows:
            inside = np.flatnonzero(
                (pos0 - self.window_fwhm * w0 <= hi) & (pos0 + self.window_fwhm * w0 >= lo)
            )
            if inside.size:
                out.append(inside)
        return out

    def span(self, pos0: np.ndarray, w0: np.ndarray) -> slice:
        """Points of the (single, connected) window of these bands."""
        lo = max(float(np.min(pos0 - self.window_fwhm * w0)), float(self.x[0]))
        hi = min(float(np.max(pos0 + self.window_fwhm * w0)), float(self.x[-1]))
        return slice(
            int(np.searchsorted(self.x, lo, "left")), int(np.searchsorted(self.x, hi, "right"))
        )

    def window(
        self,
        pos0: np.ndarray,
        w0: np.ndarray,
        tails: list[np.ndarray] | None = None,
        init: WindowFit | None = None,
    ) -> WindowFit:
        """Fit one connected window of bands (minus fixed tails of other bands)."""
        sel = self.span(pos0, w0)
        ys = [y[sel] for y in self.ys]
        if tails is not None:
            ys = [y - t for y, t in zip(ys, tails, strict=True)]
        return fit_window(
            self.x[sel], ys, self.noise, pos0, w0, shape=self.shape, share_fwhm=self.share_fwhm,
            n_base=self.n_base, position_freedom_cm1=self.freedom, tau=self.tau, where=self.where,
            init=init,
        )  # fmt: skip

    def with_dropping(
        self,
        pos0: np.ndarray,
        w0: np.ndarray,
        min_snr: float | None,
        dropped: list[WindowFit],
    ) -> list[WindowFit]:
        """Fit a window; drop its weakest band below ``min_snr`` and refit (it may split).

        A window's last band is dropped too (its fit goes to ``dropped``).
        """
        fit = self.window(pos0, w0)
        if min_snr is None:
            return [fit]
        snr = fit.area_snr()
        if snr.min() >= min_snr:
            return [fit]
        if pos0.size == 1:
            dropped.append(fit)
            return []
        keep = np.delete(np.arange(pos0.size), int(np.argmin(snr)))
        pos0, w0 = pos0[keep], w0[keep]
        out = []
        for sel in self.groups(pos0, w0):
            out += self.with_dropping(pos0[sel], w0[sel], min_snr, dropped)
        return out

    def tails(self, fits: list[WindowFit], k: int) -> list[np.ndarray]:
        """Sum of the bands of every window but k on the points of window k, per channel."""
        own = fits[k]
        x = self.x[self.span(own.starts_cm1, own.start_fwhm_cm1)]
        out = [np.zeros(x.size) for _ in self.ys]
        for i, w in enumerate(fits):
            if i == k:
                continue
            for j in range(w.starts_cm1.size):
                eta = w.value("eta", j) if self.shape == "pseudo_voigt" else 0.5
                for c in range(len(self.ys)):
                    out[c] += w.value("area", j, c) * profile(
                        self.shape, x, w.value("pos", j), w.value("w", j, c), eta
                    )
        return out


def _assemble(
    spectra: Sequence[MeasuredSpectrum], fits: list[WindowFit], shape: str, noise: list[float]
) -> JointResult:
    """One BandFit per channel from the window fits, with the s² of the whole fit."""
    rows = sum(w.n_rows for w in fits)
    n_p = sum(w.n_params for w in fits)
    s2 = sum(w.chi2 for w in fits) / (rows - n_p)
    success = all(w.success for w in fits)
    message = next((w.message for w in fits if not w.success), fits[0].message)
    n_points = sum(w.n_points for w in fits)
    windows = tuple(w.window_cm1 for w in fits)
    order = sorted(
        ((w.value("pos", j), k, j) for k, w in enumerate(fits) for j in range(w.starts_cm1.size))
    )
    result = []
    for c, s in enumerate(spectra):
        bands = []
        for _, k, j in order:
            w = fits[k]
            width, area = w.value("w", j, c), w.value("area", j, c)
            pv = shape == "pseudo_voigt"
            eta = w.value("eta", j) if pv else np.nan
            bands.append(
                Band(
                    w.value("pos", j), w.error("pos", j, 0, s2),
                    width, w.error("w", j, c, s2),
                    area, w.error("area", j, c, s2),
                    eta, w.error("eta", j, 0, s2) if pv else np.nan,
                    area * height_factor(shape, 0.5 if np.isnan(eta) else eta) / width,
                )
            )  # fmt: skip
        result.append(
            BandFit(s.label, shape, tuple(bands), windows, n_points, s2, noise[c], success, message)
        )
    n_c = len(spectra)
    area_cov = np.empty((len(order), n_c, n_c))
    for b, (_, k, j) in enumerate(order):
        w = fits[k]
        idx = [w._at("area", j, c) for c in range(n_c)]
        area_cov[b] = w.covariance[np.ix_(idx, idx)] * s2
    area_cov.setflags(write=False)
    return JointResult(tuple(result), area_cov)


def fit_bands(spectrum: MeasuredSpectrum, starts: Starts = None, **options: object) -> BandFit:
    """Fit overlapping bands in one spectrum (see :func:`fit_joint` for the options).

    Parameters
    ----------
    spectrum : MeasuredSpectrum
        Baseline-corrected spectrum.
    starts : sequence of BandCandidate or float, optional
        Starting bands (default: :func:`vibrapol.measured.peaks.find_bands`).
    **options
        ``fwhm_cm1``, ``shape``, ``window_fwhm``, ``local_baseline``,
        ``position_freedom_cm1``.

    Returns
    -------
    BandFit
    """
    return fit_joint([spectrum], starts, **options).fits[0]  # type: ignore[arg-type]
