"""Scores of a whole assignment, and the spectral similarity of computed and measured spectra."""

from __future__ import annotations

import dataclasses
import math
import warnings

import numpy as np

from vibrapol.compare.costs import BandData, ModeData, measured_polarized
from vibrapol.compare.results import AssignmentScores
from vibrapol.measured import MeasuredBands, PolarizedPair
from vibrapol.spectrum import StickSpectrum, broaden
from vibrapol.spectrum.lineshapes import LineShape

#: Width used for the computed bands when the measured widths are unknown or absurd, cm⁻¹.
DEFAULT_FWHM_CM1 = 8.0


def measured_curves(
    bands: MeasuredBands, pair: PolarizedPair | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Axis, VV and VH of the measurement: the cleaned spectra, else the fitted band model.

    Without the spectra, the sum of the fitted bands is sampled every 0.5 cm⁻¹ over the fit
    windows.
    """
    if pair is not None:
        vh = None if pair.vh is None else pair.vh.intensity
        return pair.vv.shift_cm1, pair.vv.intensity, vh
    windows = bands.vv_fit.windows_cm1
    lo = min(w[0] for w in windows) if windows else float(np.min(bands.positions_cm1)) - 50
    hi = max(w[1] for w in windows) if windows else float(np.max(bands.positions_cm1)) + 50
    x = np.arange(lo, hi + 0.25, 0.5)
    vh = None if bands.vh_fit is None else bands.vh_fit.evaluate(x)
    return x, bands.vv_fit.evaluate(x), vh


def spectral_similarity(
    sticks: StickSpectrum,
    factor: float,
    bands: MeasuredBands,
    pair: PolarizedPair | None = None,
) -> float:
    """Cosine similarity of the broadened computed VV (+VH) spectrum with the measured one.

    The computed bands are put at f ν̃ (harmonic × ``factor``), broadened with a Lorentzian of
    the median measured FWHM and sampled on the measured axis; VV and VH of each side are
    concatenated (so the VH/VV ratio counts) and S = ⟨c, m⟩ / (‖c‖ ‖m‖), clipped to [0, 1]
    (the normalized dot product, common practice for comparing spectra; invariant to the
    overall intensity scale of either side).

    Returns NaN when either side is zero everywhere.
    """
    x, vv, vh = measured_curves(bands, pair)
    widths = np.array([b.fwhm_cm1 for b in bands.bands], dtype=float)
    widths = widths[np.isfinite(widths) & (widths > 0)]
    fwhm = float(np.median(widths)) if widths.size else DEFAULT_FWHM_CM1
    scaled = dataclasses.replace(sticks, positions_cm1=factor * sticks.harmonic_cm1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # coarse measured axes are fine for a similarity
        grid = broaden(scaled, LineShape("lorentzian", fwhm), grid_cm1=x)
    calc = [grid.channel("vv")]
    meas = [np.asarray(vv, dtype=float)]
    if vh is not None:
        calc.append(grid.channel("vh"))
        meas.append(np.asarray(vh, dtype=float))
    c, m = np.concatenate(calc), np.concatenate(meas)
    norm = float(np.linalg.norm(c) * np.linalg.norm(m))
    if norm == 0 or not math.isfinite(norm):
        return float("nan")
    return float(np.clip(np.dot(c, m) / norm, 0.0, 1.0))


def geometric_mean(values: list[float]) -> float:
    """Geometric mean of the finite values (NaN when none); any zero gives zero."""
    v = np.array([x for x in values if math.isfinite(x)], dtype=float)
    if v.size == 0:
        return float("nan")
    if np.any(v <= 0):
        return 0.0
    return float(np.exp(np.mean(np.log(v))))


def assignment_scores(
    bands: BandData,
    modes: ModeData,
    partner: np.ndarray,
    factor: float,
    position_z2: np.ndarray,
    areas: np.ndarray,
    intensities: np.ndarray,
    in_range: np.ndarray,
    total_cost: float,
    similarity: float,
    isotopologue_z2: np.ndarray | None = None,
) -> AssignmentScores:
    """The scores of :class:`~vibrapol.compare.results.AssignmentScores` for one matching.

    Parameters
    ----------
    bands, modes : BandData, ModeData
    partner : ndarray (n_bands,)
        Assigned computed band of each measured band (−1: none).
    factor : float
    position_z2 : ndarray (n_bands, n_modes)
        Unweighted z_ν² of every pair.
    areas : ndarray (n_bands,)
        Measured VV areas.
    intensities : ndarray (n_modes,)
        Computed VV intensities.
    in_range : ndarray of bool (n_modes,)
        Computed bands inside the measured range.
    total_cost, similarity : float
    isotopologue_z2 : ndarray (n_bands, n_modes), optional
        Uncapped-or-capped z² of the isotopologue term (None: no isotopologue measured).
    """
    rows = np.flatnonzero(partner >= 0)
    cols = partner[rows]
    delta = bands.position_cm1[rows] - factor * modes.harmonic_cm1[cols]
    nan = float("nan")
    rms = float(np.sqrt(np.mean(delta**2))) if rows.size else nan
    max_abs = float(np.max(np.abs(delta))) if rows.size else nan
    agreement = float(np.mean(np.exp(-0.5 * position_z2[rows, cols]))) if rows.size else 0.0
    a = np.clip(np.asarray(areas, dtype=float), 0.0, None)
    explained = float(a[rows].sum() / a.sum()) if a.sum() > 0 else nan
    inten = np.clip(np.asarray(intensities, dtype=float), 0.0, None)
    found_total = float(inten[in_range].sum())
    found = float(inten[cols].sum() / found_total) if found_total > 0 else nan
    pol = nan
    known = np.isfinite(bands.rho[rows]) & np.isfinite(modes.rho[cols])
    if np.any(known):
        meas = measured_polarized(bands.rho[rows], bands.rho_err[rows])
        pol = float(np.mean((meas == modes.polarized[cols])[known]))
    iso = nan
    if isotopologue_z2 is not None and rows.size:
        iso = float(np.mean(np.exp(-0.5 * isotopologue_z2[rows, cols])))
    overall = geometric_mean([explained, found, agreement, pol, similarity, iso])
    return AssignmentScores(
        n_bands=int(partner.size),
        n_assigned=int(rows.size),
        n_modes_in_range=int(np.sum(in_range)),
        rms_cm1=rms,
        max_abs_cm1=max_abs,
        position_agreement=agreement,
        explained_fraction=explained,
        predicted_found_fraction=found,
        polarization_agreement=pol,
        similarity=similarity,
        overall=overall if math.isfinite(overall) else 0.0,
        total_cost=float(total_cost),
        isotopologue_agreement=iso,
    )
