"""Assign computed bands to measured bands, with the frequency scale factor fitted jointly.

:func:`assign` minimises the total cost of :mod:`vibrapol.compare.costs` over one-to-one
matchings (either side may stay unassigned, :mod:`vibrapol.compare.matching`) *and* over the
scale factor f:

1. a grid search over f (steps of 0.01, half the default relative position tolerance) in
   the range ``search`` (the published factor ± 6 % when the method is tabulated, else
   0.80–1.10), the matching at each point solved exactly;
2. from the best point, alternating refits: with the assignment fixed, f is the weighted
   least-squares solution of x_i ≈ f ν̃_j (weights w_ν/σ_ν(x_i)², plus the prior below)
   and the intensity offset the median of ln A_i − ln I_j; then the assignment is solved
   again, until it stops changing (each step lowers the total cost or the loop stops).

When the start is a published factor, a Gaussian prior ((f − f₀)/(``scale_prior_rel`` f₀))²
is added to the cost, so that with few bands the factor stays near the tabulated value
unless the data say otherwise.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from vibrapol.compare import matching
from vibrapol.compare.candidates import Candidate
from vibrapol.compare.costs import (
    BandData,
    CostModel,
    ModeData,
    pair_costs,
    safe_log,
    unassigned_mode_costs,
)
from vibrapol.compare.results import AssignedBand, Assignment, ScaleFit
from vibrapol.compare.scores import assignment_scores, spectral_similarity
from vibrapol.errors import VibrapolError
from vibrapol.measured import MeasuredBands, PolarizedPair
from vibrapol.spectrum import StickSpectrum

#: Relative half-width of the search around a published factor.
SEARCH_REL = 0.06
#: Search range when no published factor is known.
SEARCH_UNKNOWN = (0.80, 1.10)
#: Relative standard deviation of the prior on f around a published factor: published factors
#: carry an uncertainty of about ±0.02 for a method over a test set (Scott and Radom 1996, from
#: memory), and a single molecule deviates by as much.
SCALE_PRIOR_REL = 0.02
COARSE_STEP = 0.01
MAX_REFITS = 20

DEFAULT_MODEL = CostModel()


def band_data(bands: MeasuredBands) -> BandData:
    """Positions, log VV areas and ratios of the measured bands."""
    if len(bands) == 0:
        raise VibrapolError("no measured bands to assign; check the band detection settings")
    return BandData(
        bands.positions_cm1, safe_log(bands.vv_area), bands.rho, np.nan_to_num(bands.rho_err)
    )


def mode_data(sticks: StickSpectrum) -> ModeData:
    """Harmonic wavenumbers, log VV intensities and ratios of the computed bands."""
    if sticks.n_bands == 0:
        raise VibrapolError("the candidate has no computed bands")
    if np.any(sticks.positions_cm1 <= 0):
        raise VibrapolError("assign Stokes bands only (the candidate has anti-Stokes bands)")
    return ModeData(
        sticks.harmonic_cm1, safe_log(sticks.channel("vv")), sticks.rho_linear, sticks.polarized
    )


def _range(
    bands: MeasuredBands, pair: PolarizedPair | None, range_cm1: tuple[float, float] | None
) -> tuple[float, float]:
    if range_cm1 is not None:
        lo, hi = float(range_cm1[0]), float(range_cm1[1])
    elif pair is not None:
        lo, hi = float(pair.vv.shift_cm1[0]), float(pair.vv.shift_cm1[-1])
    elif bands.vv_fit.windows_cm1:
        lo = min(w[0] for w in bands.vv_fit.windows_cm1)
        hi = max(w[1] for w in bands.vv_fit.windows_cm1)
    else:
        lo, hi = float(bands.positions_cm1.min()), float(bands.positions_cm1.max())
    if not hi > lo:
        raise VibrapolError(f"measured range ({lo:g}, {hi:g}) cm-1 is empty or reversed")
    return lo, hi


@dataclasses.dataclass(frozen=True, eq=False)
class _Setup:
    model: CostModel
    bands: BandData
    modes: ModeData
    fixed: np.ndarray  # intensity + polarization terms at the current offset
    offset: float
    range_cm1: tuple[float, float]
    prior: tuple[float, float] | None  # (f0, sigma_f)
    isotopologue: np.ndarray | None = None  # weighted isotopologue term of every pair


def _with_offset(setup: _Setup, offset: float) -> _Setup:
    _, inten, pol = pair_costs(setup.model, setup.bands, setup.modes, 1.0, offset)
    fixed = inten + pol if setup.isotopologue is None else inten + pol + setup.isotopologue
    return dataclasses.replace(setup, fixed=fixed, offset=offset)


def _problem(setup: _Setup, factor: float) -> matching.Problem:
    m = setup.model
    sigma = m.sigma_position(setup.bands.position_cm1)[:, None]
    pos = (
        m.weight_position
        * ((setup.bands.position_cm1[:, None] - factor * setup.modes.harmonic_cm1[None, :]) / sigma)
        ** 2
    )
    return matching.Problem(
        pos + setup.fixed,
        np.full(setup.bands.position_cm1.shape, m.unassigned_band),
        unassigned_mode_costs(m, setup.modes, factor, setup.range_cm1),
    )


def _prior_cost(setup: _Setup, factor: float) -> float:
    if setup.prior is None:
        return 0.0
    f0, s = setup.prior
    return ((factor - f0) / s) ** 2


def _evaluate(setup: _Setup, factor: float) -> tuple[float, np.ndarray]:
    partner, cost = matching.solve(_problem(setup, factor))
    return cost + _prior_cost(setup, factor), partner


def _refit(
    setup: _Setup, partner: np.ndarray, search: tuple[float, float], factor: float
) -> tuple[float, float]:
    """Least-squares factor and median intensity offset for a fixed assignment."""
    rows = np.flatnonzero(partner >= 0)
    if rows.size == 0:
        return factor, setup.offset
    cols = partner[rows]
    x, nu = setup.bands.position_cm1[rows], setup.modes.harmonic_cm1[cols]
    w = setup.model.weight_position / setup.model.sigma_position(x) ** 2
    num, den = float(np.sum(w * x * nu)), float(np.sum(w * nu * nu))
    if setup.prior is not None:
        f0, s = setup.prior
        num, den = num + f0 / s**2, den + 1.0 / s**2
    f = float(np.clip(num / den, *search))
    offset = float(np.median(setup.bands.ln_area[rows] - setup.modes.ln_intensity[cols]))
    return f, offset


def _factor_error(setup: _Setup, partner: np.ndarray, factor: float) -> float:
    rows = np.flatnonzero(partner >= 0)
    if rows.size < 2:
        return float("nan")
    x, nu = setup.bands.position_cm1[rows], setup.modes.harmonic_cm1[partner[rows]]
    sigma = setup.model.sigma_position(x)
    chi2 = float(np.sum(((x - factor * nu) / sigma) ** 2)) / (rows.size - 1)
    return math.sqrt(chi2 / float(np.sum((nu / sigma) ** 2)))


def _search(setup: _Setup, search: tuple[float, float]) -> tuple[float, np.ndarray, _Setup]:
    lo, hi = search
    grid = np.unique(np.append(np.arange(lo, hi + 1e-9, COARSE_STEP), hi))
    results = [(_evaluate(setup, float(f)), float(f)) for f in grid]
    (cost, partner), factor = min(results, key=lambda r: r[0][0])
    for _ in range(MAX_REFITS):
        new_f, new_offset = _refit(setup, partner, search, factor)
        trial = _with_offset(setup, new_offset)
        new_cost, new_partner = _evaluate(trial, new_f)
        if new_cost > cost + 1e-9:
            break
        setup, factor, cost = trial, new_f, new_cost
        if np.array_equal(new_partner, partner):
            break
        partner = new_partner
    return factor, partner, setup


def _mode_label(sticks: StickSpectrum, j: int) -> str:
    return " ".join(str(k + 1) for k in sticks.mode_sets[j])


def assign(
    candidate: Candidate | StickSpectrum,
    bands: MeasuredBands,
    *,
    pair: PolarizedPair | None = None,
    model: CostModel = DEFAULT_MODEL,
    scale: float | None = None,
    start: float | None = None,
    search: tuple[float, float] | None = None,
    range_cm1: tuple[float, float] | None = None,
    confidence: bool = True,
    similarity: bool = True,
    label: str = "",
    isotopologue_bands: MeasuredBands | None = None,
) -> Assignment:
    """Assign the candidate's computed bands to the measured bands.

    Parameters
    ----------
    candidate : Candidate or StickSpectrum
        Computed bands (:func:`~vibrapol.compare.candidates.candidate_from_modes`); a bare
        stick spectrum has no published start factor.
    bands : MeasuredBands
        Fitted measured bands (:func:`vibrapol.measured.measure_bands`); with VH their ρ
        enters the cost.
    pair : PolarizedPair, optional
        The cleaned measured spectra, for the measured range and the spectral similarity
        (default: the fitted band model).
    model : CostModel
        Weights and widths of the cost.
    scale : float, optional
        Fixed scale factor (no search).
    start : float, optional
        Start of the search (default: the candidate's published factor, else 1).
    search : (float, float), optional
        Range of factors searched (default: start ± 6 % with a known start, else 0.80–1.10).
    range_cm1 : (float, float), optional
        Measured range (default: the spectrum's axis, else the fit windows).
    confidence : bool
        Compute each band's confidence (one small re-solve per band).
    similarity : bool
        Compute the spectral similarity.
    label : str
        Name of the candidate (default: the candidate's).
    isotopologue_bands : MeasuredBands, optional
        Fitted bands of the measured isotopologue; adds the isotope-shift term of
        :mod:`vibrapol.compare.isotopologue` to every pair cost (the candidate must carry
        ``isotope_ratios``).

    Returns
    -------
    Assignment
    """
    cand = candidate if isinstance(candidate, Candidate) else Candidate(label, candidate)
    sticks = cand.sticks
    bd, md = band_data(bands), mode_data(sticks)
    lo_hi = _range(bands, pair, range_cm1)
    if scale is not None:
        if not (math.isfinite(scale) and 0.5 <= scale <= 1.5):
            raise VibrapolError(f"scale factor must lie between 0.5 and 1.5, got {scale}")
        f0, note, fitted = float(scale), "given", False
    elif start is not None:
        f0, note, fitted = float(start), "given start", True
    elif cand.start_scale is not None:
        f0, note, fitted = cand.start_scale.factor, cand.start_scale.note, True
    else:
        f0, note, fitted = 1.0, "no published factor for the method", True
    known_start = fitted and (start is not None or cand.start_scale is not None)
    if search is None:
        search = (f0 * (1 - SEARCH_REL), f0 * (1 + SEARCH_REL)) if known_start else SEARCH_UNKNOWN
    search = (max(0.5, float(search[0])), min(1.5, float(search[1])))
    if fitted and not search[1] > search[0]:
        raise VibrapolError(f"scale search range {search} is empty or reversed")
    inside = (f0 * md.harmonic_cm1 >= lo_hi[0]) & (f0 * md.harmonic_cm1 <= lo_hi[1])
    calc_total = float(np.sum(np.exp(md.ln_intensity[inside]))) if inside.any() else 1.0
    offset0 = float(np.log(np.sum(np.exp(bd.ln_area))) - np.log(calc_total))
    prior = (f0, SCALE_PRIOR_REL * f0) if known_start else None
    iso_term = None
    if isotopologue_bands is not None:
        if cand.isotope_ratios is None:
            raise VibrapolError(
                "an isotopologue measurement needs the candidate's computed isotope ratios "
                "(vibrapol.compare.isotopologue.with_isotopologue)"
            )
        from vibrapol.compare.isotopologue import isotopologue_z2

        iso_term = model.weight_isotopologue * isotopologue_z2(
            model, bd.position_cm1, isotopologue_bands.positions_cm1, cand.isotope_ratios
        )
    setup = _with_offset(_Setup(model, bd, md, np.zeros(0), 0.0, lo_hi, prior, iso_term), offset0)
    if fitted:
        factor, partner, setup = _search(setup, search)
    else:
        factor = f0
        _, partner = _evaluate(setup, factor)
        _, offset = _refit(setup, partner, (factor, factor), factor)
        setup = _with_offset(setup, offset)
        _, partner = _evaluate(setup, factor)
    problem = _problem(setup, factor)
    partner, total = matching.solve(problem)
    fit = ScaleFit(
        factor=factor,
        factor_err=_factor_error(setup, partner, factor) if fitted else 0.0,
        start=f0,
        start_note=note,
        fitted=fitted,
        search=search if fitted else (factor, factor),
        n_pairs=int(np.sum(partner >= 0)),
        intensity_offset=setup.offset,
    )
    return _build(cand, bands, pair, setup, problem, partner, total, fit, confidence, similarity)


def _build(
    cand: Candidate,
    bands: MeasuredBands,
    pair: PolarizedPair | None,
    setup: _Setup,
    problem: matching.Problem,
    partner: np.ndarray,
    total: float,
    fit: ScaleFit,
    confidence: bool,
    similarity: bool,
) -> Assignment:
    sticks, model, factor = cand.sticks, setup.model, fit.factor
    pos, inten, pol = pair_costs(model, setup.bands, setup.modes, factor, setup.offset)
    components = problem.components() if confidence else []
    feasible_radius = model.sigma_position(setup.bands.position_cm1) * np.sqrt(
        (model.unassigned_band + model.unassigned_mode) / model.weight_position
    )
    out = []
    for i, mb in enumerate(bands.bands):
        j = int(partner[i])
        conf, alt_label = float("nan"), ""
        if confidence:
            delta, alt = matching.alternative_cost(
                problem, partner, i, components, setup.bands.position_cm1, 1.5 * feasible_radius[i]
            )
            conf = 1.0 - math.exp(-0.5 * delta) if math.isfinite(delta) else 1.0
            alt_label = (
                "" if alt == -2 else ("unassigned" if alt == -1 else _mode_label(sticks, alt))
            )
        nan = float("nan")
        if j >= 0:
            scaled = factor * float(sticks.harmonic_cm1[j])
            entry = AssignedBand(
                i, mb.position_cm1, mb.rho, mb.rho_err, mb.vv_area, j, _mode_label(sticks, j),
                sticks.components[sticks.component[j]], sticks.irreps[j],
                float(sticks.harmonic_cm1[j]), scaled, float(sticks.rho_linear[j]),
                bool(sticks.polarized[j]), mb.position_cm1 - scaled, float(problem.cost[i, j]),
                float(pos[i, j]), float(inten[i, j]), float(pol[i, j]), conf, alt_label,
            )  # fmt: skip
        else:
            entry = AssignedBand(
                i, mb.position_cm1, mb.rho, mb.rho_err, mb.vv_area, -1, "", "", "", nan, nan,
                nan, False, nan, float(problem.band_unmatched[i]), nan, nan, nan, conf, alt_label,
            )  # fmt: skip
        out.append(entry)
    scaled_all = factor * sticks.harmonic_cm1
    in_range = (scaled_all >= setup.range_cm1[0]) & (scaled_all <= setup.range_cm1[1])
    used = set(partner[partner >= 0].tolist())
    unassigned = tuple(int(j) for j in np.flatnonzero(in_range) if int(j) not in used)
    sim = spectral_similarity(sticks, factor, bands, pair) if similarity else float("nan")
    iso_z2 = None
    if setup.isotopologue is not None and model.weight_isotopologue > 0:
        iso_z2 = setup.isotopologue / model.weight_isotopologue
    scores = assignment_scores(
        setup.bands, setup.modes, partner, factor, pos / model.weight_position,
        bands.vv_area, sticks.channel("vv"), in_range, total, sim, iso_z2,
    )  # fmt: skip
    return Assignment(
        cand.label, tuple(out), unassigned, fit, scores, model, setup.range_cm1, sticks, bands
    )
