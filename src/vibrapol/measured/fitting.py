"""Least-squares fit of overlapping bands, in one spectrum or jointly in VV and VH.

Model of channel c (VV, VH) on the points within ``window_fwhm`` FWHM of any band:

    y_c(x) = Σ_j A_jc P(x; x0_j, w_jc, η_j) + b_kc + s_kc (x − x̄_k)

with unit-area profiles P (:mod:`vibrapol.measured.profiles`), so A is the band area; the
positions x0_j (and by default the widths w_j and the Lorentzian fraction η_j) are shared by
the channels; b, s are a local offset and slope per connected fit window k and channel, taking
up what the baseline removal left.  Every band contributes at every point (tails of one band
under its neighbour are modelled, not cut).

The residuals of each channel are divided by its noise standard deviation; the fit is
:func:`scipy.optimize.least_squares` (trust-region reflective, analytic Jacobian); standard
errors are the square roots of the diagonal of s²(JᵀJ)⁻¹ at the solution, with s² the
reduced χ² (so they reflect the actual scatter about the model).

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
from scipy.optimize import least_squares

from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.measured.cleaning import noise_sigma
from vibrapol.measured.peaks import BandCandidate, find_bands
from vibrapol.measured.profiles import SHAPES, height_factor, profile, profile_derivatives
from vibrapol.measured.spectrum import MeasuredSpectrum

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
    if items and isinstance(items[0], BandCandidate):
        pos = np.array([c.position_cm1 for c in items])
        fwhm = np.array([c.fwhm_cm1 for c in items])
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
        After a fit, the band of the first channel with the smallest area/standard error is
        dropped when that ratio is below this, and the rest refitted, until all pass (spurious
        starts, e.g. a noise "shoulder", vanish this way).  None keeps every start.

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
    while True:
        result, problems = _fit_once(
            spectra, pos0, w0, shape, share_fwhm, window_fwhm, n_base, position_freedom_cm1
        )
        first = result.fits[0].bands
        snr = np.array([b.area / b.area_err if b.area_err > 0 else np.inf for b in first])
        if min_area_snr is None or pos0.size == 1 or snr.min() >= min_area_snr:
            break
        weakest = int(np.argmin(snr))
        pos0, w0 = np.delete(pos0, weakest), np.delete(w0, weakest)
    for message in problems:
        warnings.warn(message, AccuracyWarning, stacklevel=2)
    return result


def _fit_once(
    spectra: Sequence[MeasuredSpectrum],
    pos0: np.ndarray,
    w0: np.ndarray,
    shape: str,
    share_fwhm: bool,
    window_fwhm: float,
    n_base: int,
    position_freedom_cm1: float | None,
) -> tuple[JointResult, list[str]]:
    x = spectra[0].shift_cm1
    n_b, n_c = pos0.size, len(spectra)
    windows = _windows(x, pos0, w0, window_fwhm)
    cluster = np.full(x.size, -1)
    for k, (lo, hi) in enumerate(windows):
        cluster[(x >= lo) & (x <= hi)] = k
    sel = cluster >= 0
    xs, ks = x[sel], cluster[sel]
    noise = []
    for s in spectra:
        sig = noise_sigma(s.intensity)
        noise.append(sig if sig > 0 else 1e-9 * max(float(np.max(np.abs(s.intensity))), 1e-300))
    # Fit in units of the largest intensity: the residuals do not change, but areas and
    # baselines become numbers of order one beside positions in cm-1, which the optimizer's
    # tolerances need (counts or cross sections of 1e-30 cm^2/sr fit alike).
    unit = max(float(np.max(np.abs(spectra[0].intensity[sel]))), 1e-300)
    ys = [s.intensity[sel] / unit for s in spectra]
    sigmas = [sig / unit for sig in noise]
    centres = np.array([0.5 * (lo + hi) for lo, hi in windows])

    # Parameter layout.
    n_w = 1 if share_fwhm else n_c
    per_band = 1 + n_w + (1 if shape == "pseudo_voigt" else 0) + n_c
    i_pos = np.arange(n_b) * per_band
    i_w = i_pos[:, None] + 1 + (np.zeros((1, n_c), int) if share_fwhm else np.arange(n_c)[None, :])
    i_eta = i_pos + 1 + n_w
    i_area = i_pos[:, None] + 1 + n_w + (shape == "pseudo_voigt") + np.arange(n_c)[None, :]
    base0 = n_b * per_band
    i_base = base0 + np.arange(len(windows) * n_c * n_base).reshape(len(windows), n_c, n_base)
    n_p = base0 + i_base.size
    m = xs.size * n_c
    if m <= n_p:
        raise VibrapolError(f"{spectra[0].where}: {m} points cannot fix {n_p} parameters")

    local = np.interp(pos0, x[1:], np.diff(x))
    p0, lo_b, hi_b = np.zeros(n_p), np.full(n_p, -np.inf), np.full(n_p, np.inf)
    for j in range(n_b):
        d = position_freedom_cm1 or max(w0[j], 2 * local[j])
        p0[i_pos[j]], lo_b[i_pos[j]], hi_b[i_pos[j]] = pos0[j], pos0[j] - d, pos0[j] + d
        wlo, whi = 0.5 * local[j], max(10 * w0[j], 20 * local[j])
        p0[i_w[j]], lo_b[i_w[j]], hi_b[i_w[j]] = np.clip(w0[j], wlo, whi), wlo, whi
        if shape == "pseudo_voigt":
            p0[i_eta[j]], lo_b[i_eta[j]], hi_b[i_eta[j]] = 0.5, 0.0, 1.0
    for k in range(len(windows)):
        for c in range(n_c):
            inside = ys[c][ks == k]
            if n_base:
                p0[i_base[k, c, 0]] = np.percentile(inside, 10)
    for j in range(n_b):
        k = cluster[np.argmin(np.abs(x - pos0[j]))]
        for c in range(n_c):
            h = np.interp(pos0[j], xs, ys[c]) - (p0[i_base[k, c, 0]] if n_base else 0.0)
            h = max(h, sigmas[c]) if c == 0 else h
            p0[i_area[j, c]] = h * w0[j] / height_factor(shape)
        lo_b[i_area[j, 0]] = 0.0
    p0 = np.clip(p0, lo_b, hi_b)

    def parts(p: np.ndarray, want_jac: bool) -> tuple[np.ndarray, np.ndarray | None]:
        r = np.empty(m)
        jac = np.zeros((m, n_p)) if want_jac else None
        for c in range(n_c):
            rows = slice(c * xs.size, (c + 1) * xs.size)
            model = np.zeros(xs.size)
            for j in range(n_b):
                eta = p[i_eta[j]] if shape == "pseudo_voigt" else 0.5
                area = p[i_area[j, c]]
                prof, d_x0, d_w, d_eta = profile_derivatives(
                    shape, xs, p[i_pos[j]], p[i_w[j, c]], eta
                )
                model += area * prof
                if jac is not None:
                    jac[rows, i_area[j, c]] = prof / sigmas[c]
                    jac[rows, i_pos[j]] = area * d_x0 / sigmas[c]
                    jac[rows, i_w[j, c]] = area * d_w / sigmas[c]
                    if shape == "pseudo_voigt":
                        jac[rows, i_eta[j]] = area * d_eta / sigmas[c]
            for k in range(len(windows)):
                on = ks == k
                if n_base >= 1:
                    model[on] += p[i_base[k, c, 0]]
                    if jac is not None:
                        jac[rows.start + np.flatnonzero(on), i_base[k, c, 0]] = 1 / sigmas[c]
                if n_base == 2:
                    dx = xs[on] - centres[k]
                    model[on] += p[i_base[k, c, 1]] * dx
                    if jac is not None:
                        jac[rows.start + np.flatnonzero(on), i_base[k, c, 1]] = dx / sigmas[c]
            r[rows] = (model - ys[c]) / sigmas[c]
        return r, jac

    res = least_squares(
        lambda p: parts(p, False)[0],
        p0,
        jac=lambda p: parts(p, True)[1],
        bounds=(lo_b, hi_b),
        method="trf",
        x_scale="jac",
        max_nfev=100 * n_p,
    )
    p = res.x
    r, jac = parts(p, True)
    chi2 = float(r @ r) / (m - n_p)
    _, sv, vt = np.linalg.svd(jac, full_matrices=False)
    keep = sv > np.finfo(float).eps * max(jac.shape) * sv[0]
    cov = (vt[keep].T / sv[keep] ** 2) @ vt[keep] * chi2
    scale = np.ones(n_p)  # back to the spectra's intensity units
    scale[i_area.ravel()] = unit
    scale[i_base.ravel()] = unit
    p, cov = p * scale, cov * np.outer(scale, scale)
    err = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    where = spectra[0].where
    problems = []
    if not res.success:
        problems.append(f"{where}: band fit did not converge ({res.message})")
    for j in range(n_b):
        for name, idx in (("position", i_pos[j]), ("width", i_w[j, 0])):
            if res.active_mask[idx] != 0:
                problems.append(
                    f"{where}: band starting at {pos0[j]:.1f} cm-1 ended at a bound of its {name}; "
                    "check the starting positions and widths"
                )
    fits = []
    for c, s in enumerate(spectra):
        bands = []
        for j in range(n_b):
            w = p[i_w[j, c]]
            eta = p[i_eta[j]] if shape == "pseudo_voigt" else np.nan
            eta_err = err[i_eta[j]] if shape == "pseudo_voigt" else np.nan
            area = p[i_area[j, c]]
            factor = height_factor(shape, 0.5 if np.isnan(eta) else eta)
            bands.append(
                Band(
                    float(p[i_pos[j]]),
                    float(err[i_pos[j]]),
                    float(w),
                    float(err[i_w[j, c]]),
                    float(area),
                    float(err[i_area[j, c]]),
                    float(eta),
                    float(eta_err),
                    float(area * factor / w),
                )
            )
        fits.append(
            BandFit(
                s.label,
                shape,
                tuple(bands),
                tuple(windows),
                int(xs.size),
                chi2,
                noise[c],
                bool(res.success),
                str(res.message),
            )
        )
    area_cov = np.array(
        [
            [[cov[i_area[j, a], i_area[j, b]] for b in range(n_c)] for a in range(n_c)]
            for j in range(n_b)
        ]
    )
    area_cov.setflags(write=False)
    return JointResult(tuple(fits), area_cov), problems


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
