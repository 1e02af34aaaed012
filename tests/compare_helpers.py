"""Shared scenario of the assignment tests and ``bench/assignment.py``.

Measured spectra here are INVENTED DATA: VV/VH pairs made with
:func:`vibrapol.measured.synthetic.synthetic_pair` from published band positions, with
invented areas, widths and (for the polarized bands) ratios.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol.measured import clean_pair, measure_bands
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair
from vibrapol.measured.synthetic import TrueBand, synthetic_pair
from vibrapol.sources import read_modes

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "compare"


@dataclass(frozen=True)
class Fundamental:
    """A published fundamental with the invented numbers used to draw it."""

    name: str
    species: str
    position_cm1: float
    area: float  # invented relative VV area
    rho: float  # 3/4 for E by symmetry; invented for A1


# CHCl3 (C3v) fundamentals, gas phase: T. Shimanouchi, Tables of Molecular Vibrational
# Frequencies, Consolidated Volume I, NSRDS-NBS 39 (1972), chloroform entry.  Positions from
# memory (confirm against the table before reuse).  Species from the same table.  The E
# bands have ρ = 3/4 exactly (non-totally-symmetric, common practice); the A1 ratios and
# all areas are invented, loosely following the look of a chloroform spectrum.
CHCL3 = (
    Fundamental("nu6", "E", 261.0, 45.0, 0.75),
    Fundamental("nu3", "A1", 363.0, 70.0, 0.10),
    Fundamental("nu2", "A1", 680.0, 100.0, 0.05),
    Fundamental("nu5", "E", 774.0, 30.0, 0.75),
    Fundamental("nu4", "E", 1220.0, 12.0, 0.75),
    Fundamental("nu1", "A1", 3034.0, 40.0, 0.25),
)
#: Invented overtone 2ν5 (E × E contains A1, so it may be polarized), slightly below 2 × 774
#: as anharmonicity makes overtones.
CHCL3_OVERTONE = TrueBand(1540.0, 10.0, 5.0, 0.30)
#: The engine's CHCl3 fixture (HF/6-31G*, tests/fixtures/compare/make_compare_fixtures.py).
CHCL3_MODES = FIXTURES / "chcl3_hf_631gd.modes.json"
#: Axis of the invented spectra: 150–3200 cm⁻¹ every 1 cm⁻¹.
AXIS_CM1 = np.arange(150.0, 3200.0, 1.0)
FWHM_CM1 = 8.0


def chcl3_modes():
    """The engine's CHCl3 ModeSet."""
    return read_modes(CHCL3_MODES)


def clean_measured(pair: PolarizedPair):
    """The standard measured chain: clean (spikes, baseline) and fit the bands."""
    cleaned, _, _ = clean_pair(pair)
    return cleaned, measure_bands(cleaned)


def chcl3_pair(extra: tuple[TrueBand, ...] = (CHCL3_OVERTONE,), noise: float = 0.05):
    """Invented VV/VH pair of the CHCl3 fundamentals plus ``extra`` bands, mild noise."""
    bands = [TrueBand(f.position_cm1, FWHM_CM1, f.area, f.rho) for f in CHCL3] + list(extra)
    return synthetic_pair(AXIS_CM1, bands, noise_sigma=noise, rng=np.random.default_rng(7))


@dataclass(frozen=True)
class Realization:
    """One random invented measurement of the robustness study."""

    pair: PolarizedPair
    present: tuple[Fundamental, ...]
    missing: Fundamental
    extra_cm1: float


def random_realization(rng: np.random.Generator) -> Realization:
    """CHCl3 with noise, a sloping baseline, spikes, one band missing and one extra band.

    Noise σ is 1 % of the tallest VV peak; the baseline rises linearly by 20–60 % of that
    peak over the axis with a gentle curvature; three spikes of 1–3 peak heights fall on
    each channel; one fundamental, chosen at random, is left out; one extra band (area 5–20 %
    of the strongest, random ρ in [0, 0.75], FWHM 6–12 cm⁻¹) is placed at random at least
    60 cm⁻¹ from every fundamental.
    """
    x = AXIS_CM1
    k_missing = int(rng.integers(len(CHCL3)))
    present = tuple(f for k, f in enumerate(CHCL3) if k != k_missing)
    all_pos = np.array([f.position_cm1 for f in CHCL3])
    while True:
        extra_cm1 = float(rng.uniform(x[0] + 50, x[-1] - 50))
        if np.min(np.abs(all_pos - extra_cm1)) >= 60.0:
            break
    top = max(f.area for f in CHCL3)
    bands = [TrueBand(f.position_cm1, FWHM_CM1, f.area, f.rho) for f in present]
    bands.append(
        TrueBand(
            extra_cm1,
            float(rng.uniform(6.0, 12.0)),
            float(rng.uniform(0.05, 0.20)) * top,
            float(rng.uniform(0.0, 0.75)),
        )
    )
    peak = top * 2.0 / (np.pi * FWHM_CM1)  # Lorentzian peak height of the strongest band
    t = (x - x[0]) / (x[-1] - x[0])
    baseline = peak * float(rng.uniform(0.2, 0.6)) * (t + 0.3 * t * t)
    spikes_vv = [
        (int(i), float(h))
        for i, h in zip(rng.integers(0, x.size, 3), rng.uniform(1, 3, 3) * peak, strict=True)
    ]
    pair = synthetic_pair(
        x, bands, noise_sigma=0.01 * peak, baseline=baseline, spikes=spikes_vv, rng=rng
    )
    vh = pair.vh.intensity.copy()
    for i, h in zip(rng.integers(0, x.size, 3), rng.uniform(1, 3, 3) * peak, strict=True):
        vh[int(i)] += h
    pair = PolarizedPair(pair.vv, MeasuredSpectrum(x, vh, label="VH", notes=pair.vh.notes))
    return Realization(pair, present, CHCL3[k_missing], extra_cm1)


def expected_modes(assignment) -> dict[str, str]:
    """Which computed band each CHCl3 fundamental must get: the same species, same order.

    Within a species the computed bands are taken in ascending wavenumber and paired with
    the published fundamentals of that species in ascending wavenumber (HF/6-31G* keeps the
    order of the CHCl3 fundamentals within each species).
    """
    sticks = assignment.sticks
    out = {}
    for species in ("A1", "E"):
        comp = sorted(
            (j for j in range(sticks.n_bands) if sticks.irreps[j] == species),
            key=lambda j: sticks.harmonic_cm1[j],
        )
        pub = sorted((f for f in CHCL3 if f.species == species), key=lambda f: f.position_cm1)
        assert len(comp) == len(pub), (species, len(comp), len(pub))
        for j, f in zip(comp, pub, strict=True):
            out[f.name] = " ".join(str(k + 1) for k in sticks.mode_sets[j])
    return out


def realization_correct(assignment, real: Realization, tol_cm1: float = 5.0) -> bool:
    """Every present fundamental has its own mode; every other measured band stays unassigned."""
    want = expected_modes(assignment)
    claimed = set()
    for f in real.present:
        near = [b for b in assignment.bands if abs(b.band_cm1 - f.position_cm1) <= tol_cm1]
        if len(near) != 1 or near[0].mode != want[f.name]:
            return False
        claimed.add(near[0].band)
    return all(not b.assigned for b in assignment.bands if b.band not in claimed)


def band_list(positions_cm1, areas, rho, rho_err, fwhm_cm1: float = FWHM_CM1, window_cm1=None):
    """A :class:`~vibrapol.measured.MeasuredBands` straight from band numbers (no spectra).

    The VV and VH channels of the fit are the bands themselves (VH area = ρ × VV area), so
    the fitted model can stand in for the spectra.
    """
    from vibrapol.measured.depolarization import MeasuredBand, MeasuredBands
    from vibrapol.measured.fitting import Band, BandFit

    pos = np.asarray(positions_cm1, dtype=float)
    order = np.argsort(pos)
    rows = [(pos[i], float(areas[i]), float(rho[i]), float(rho_err[i])) for i in order]
    nan = float("nan")
    lo, hi = window_cm1 or (float(pos.min()) - 50.0, float(pos.max()) + 50.0)

    def fit(label, channel_area):
        bands = tuple(
            Band(p, 0.0, fwhm_cm1, 0.0, channel_area(a, r), 0.0, nan, nan, 0.0)
            for p, a, r, _ in rows
        )
        return BandFit(label, "lorentzian", bands, ((lo, hi),), 0, 1.0, 1.0, True, "")

    measured = tuple(
        MeasuredBand(p, 0.0, fwhm_cm1, 0.0, fwhm_cm1, nan, a, 0.0, r * a, 0.0, r, e)
        for p, a, r, e in rows
    )
    return MeasuredBands(measured, fit("VV", lambda a, r: a), fit("VH", lambda a, r: r * a))


def random_problem(n_modes: int, n_bands: int, rng: np.random.Generator, factor: float = 0.95):
    """Invented large problem: n_modes computed bands, n_bands measured ones (5 % extra).

    Computed bands: harmonic wavenumbers uniform in 100–3800 cm⁻¹ / ``factor``, VV intensity
    log-normal (σ = 1.5), 30 % polarized with ρ uniform in [0, 0.7], the rest ρ = 3/4.
    Measured: 95 % of ``n_bands`` are the strongest computed bands at f ν̃ (1 + N(0, 1 %)),
    area = intensity × log-normal (σ = 0.5), ρ + N(0, 0.02); the other 5 % are extra bands at
    random positions.  Returns the sticks, the bands and, per measured band (in ascending
    position), the computed band it came from (−1 for extra bands).
    """
    from vibrapol.spectrum import StickSpectrum

    nu = np.sort(rng.uniform(100.0, 3800.0, n_modes)) / factor
    inten = np.exp(rng.normal(0.0, 1.5, n_modes))
    pol = rng.random(n_modes) < 0.3
    rho = np.where(pol, rng.uniform(0.0, 0.7, n_modes), 0.75)
    sticks = StickSpectrum(
        positions_cm1=nu,
        heights=np.column_stack([inten, inten * rho]),
        channels=("vv", "vh"),
        harmonic_cm1=nu,
        mode_sets=tuple((k,) for k in range(n_modes)),
        irreps=("",) * n_modes,
        rho_linear=rho,
        rho_natural=2 * rho / (1 + rho),
        polarized=pol,
        component=np.zeros(n_modes, dtype=int),
        components=("invented",),
    )
    n_true = int(round(0.95 * n_bands))
    src = np.sort(np.argsort(-inten)[:n_true])
    pos = factor * nu[src] * (1 + rng.normal(0.0, 0.01, n_true))
    area = inten[src] * np.exp(rng.normal(0.0, 0.5, n_true))
    r = np.clip(rho[src] + rng.normal(0.0, 0.02, n_true), 0.0, None)
    n_extra = n_bands - n_true
    pos = np.append(pos, rng.uniform(100.0, 3800.0, n_extra))
    area = np.append(area, np.exp(rng.normal(0.0, 1.5, n_extra)))
    r = np.append(r, rng.uniform(0.0, 0.75, n_extra))
    truth = np.append(src, np.full(n_extra, -1))
    order = np.argsort(pos)
    bands = band_list(pos, area, r, np.full(n_bands, 0.02), window_cm1=(50.0, 3850.0))
    return sticks, bands, truth[order]


def pair_from_sticks(
    sticks,
    factor: float,
    rng: np.random.Generator,
    *,
    position_jitter: float = 0.005,
    intensity_sigma: float = 0.3,
    rho_sigma: float = 0.02,
    min_relative: float = 0.01,
):
    """Invented VV/VH pair drawn from a computed stick spectrum (for ranking tests).

    Each computed band with VV intensity ≥ ``min_relative`` of the strongest becomes a
    Lorentzian (FWHM 8 cm⁻¹) at factor × ν̃ × (1 + N(0, position_jitter)), with VV area
    ∝ intensity × exp(N(0, intensity_sigma)) and ρ = computed ρ + N(0, rho_sigma) clipped to
    [0, 0.75]; axis 150–3800 cm⁻¹ every 1 cm⁻¹, noise 0.5 % of the tallest peak.
    """
    vv = sticks.channel("vv")
    keep = np.flatnonzero(vv >= min_relative * vv.max())
    bands = []
    for j in keep:
        rho = sticks.rho_linear[j]
        rho = 0.75 if not np.isfinite(rho) else rho
        bands.append(
            TrueBand(
                float(factor * sticks.harmonic_cm1[j] * (1 + rng.normal(0.0, position_jitter))),
                FWHM_CM1,
                float(100.0 * vv[j] / vv.max() * np.exp(rng.normal(0.0, intensity_sigma))),
                float(np.clip(rho + rng.normal(0.0, rho_sigma), 0.0, 0.75)),
            )
        )
    x = np.arange(150.0, 3800.0, 1.0)
    peak = 100.0 * 2.0 / (np.pi * FWHM_CM1)
    return synthetic_pair(x, bands, noise_sigma=0.005 * peak, rng=rng)
