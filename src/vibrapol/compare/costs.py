"""The cost of assigning a computed band to a measured band, and of leaving either unassigned.

Each term is a squared standardized difference z², so the cost of a pair reads as a χ²
(−2 ln of a Gaussian likelihood, up to a constant) and the costs of leaving a band or a mode
unassigned are thresholds on that scale.  For measured band i and computed band j (a
degenerate set, harmonic wavenumber ν̃_j) at scale factor f:

position
    z_ν = (x_i − f ν̃_j) / σ_ν(x_i),  σ_ν(x) = ``sigma_cm1`` + ``sigma_rel`` · x.
    Harmonic wavenumbers scaled by one factor still scatter about the fundamentals by a few
    per cent, more in absolute terms at high wavenumber (A. P. Scott and L. Radom, J. Phys.
    Chem. 100, 16502 (1996), from memory: residual rms ≈ 30–50 cm⁻¹ after scaling).
relative intensity
    z_I = (ln A_i − ln I_j − c) / ``sigma_ln_intensity``, with A_i the measured VV area, I_j the
    computed VV intensity and c a common offset (the unknown ratio of the two intensity
    scales, fitted with the assignment).  Computed Raman intensities are rarely better than a
    factor of two to three (common practice), hence σ = ln 3 by default.
polarization
    z_ρ = (ρ_i − ρ_j) / √(σ_ρ,i² + σ_j²), with the measured ratio's own standard error σ_ρ,i
    and σ_j = ``sigma_rho_depolarized`` for a computed band with ρ = 3/4 (exact for every
    non-totally-symmetric species, D. A. Long, *The Raman Effect*, Wiley (2002), ch. 5; the
    term then asks that the measured band be depolarized, up to what an imperfect polarizer
    leaves) or σ_j = ``sigma_rho_polarized`` for a computed polarized band (whose ρ the methods
    predict only roughly).  This one term carries both the class (polarized or depolarized) and
    the value of ρ.  It is zero without a VH measurement or for a computed band without ρ.

The intensity and polarization z² are capped at ``cap`` so that a single bad number cannot
make a pair infinitely expensive; the position term is not capped (far pairs are infeasible).

cost(i, j) = w_ν z_ν² + w_I min(z_I², cap) + w_ρ min(z_ρ², cap)

Leaving measured band i unassigned (overtone, combination band, Fermi partner, impurity)
costs ``unassigned_band``; leaving computed band j unassigned costs ``unassigned_mode`` × r_j
with r_j its computed intensity relative to the strongest computed band in the measured
range (a strong predicted band that is not seen counts against the assignment, a weak one
hardly), and nothing when its scaled position lies outside the measured range.  A pair is
taken only when its cost is below the sum of the two costs it replaces.

The defaults are justified by ``bench/assignment.py`` (table in ``docs/assignment.md``): on
CHCl₃ at HF/6-31G* 97 of 100 noisy realizations are assigned exactly right; on crowded invented
spectra switching off the intensity or polarization term drops the share of true pairs found
from 0.87 to 0.72 or 0.75, position alone to 0.51.  Low levels of theory (HF/3-21G) need a
looser position tolerance (``sigma_rel`` 0.03).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import VibrapolError
from vibrapol.polarization import POLARIZED_MARGIN, measurably_polarized

#: A measured band counts as polarized when ρ + 2σ_ρ lies below 3/4 − this margin: the one
#: rule of :mod:`vibrapol.polarization`, which tables and figures use too.
MEASURED_POLARIZED_MARGIN = POLARIZED_MARGIN


@dataclass(frozen=True)
class CostModel:
    """Weights and widths of the assignment cost (see the module notes for each term).

    Attributes
    ----------
    sigma_cm1, sigma_rel : float
        Position tolerance σ_ν(x) = sigma_cm1 + sigma_rel · x (cm⁻¹, dimensionless).
    sigma_ln_intensity : float
        Tolerance of the log intensity ratio (ln 3: a factor of three is one σ).
    sigma_rho_polarized, sigma_rho_depolarized : float
        Model uncertainty of a computed polarized ratio, and of the exact 3/4.
    weight_position, weight_intensity, weight_polarization : float
        Weights w_ν, w_I, w_ρ of the three terms (0 switches a term off).
    cap : float
        Largest z² counted for the intensity and polarization terms.
    unassigned_band : float
        Cost of leaving one measured band unassigned.
    unassigned_mode : float
        Cost of leaving the strongest computed band in range unassigned (others: in proportion
        to their computed intensity).
    weight_isotopologue, sigma_isotope_rel : float
        Weight of the isotopologue term and the relative part of its tolerance
        (:mod:`vibrapol.compare.isotopologue`; the term is zero without an isotopologue
        measurement).
    """

    sigma_cm1: float = 5.0
    sigma_rel: float = 0.02
    sigma_ln_intensity: float = math.log(3.0)
    sigma_rho_polarized: float = 0.2
    sigma_rho_depolarized: float = 0.05
    weight_position: float = 1.0
    weight_intensity: float = 1.0
    weight_polarization: float = 1.0
    cap: float = 25.0
    unassigned_band: float = 9.0
    unassigned_mode: float = 9.0
    weight_isotopologue: float = 1.0
    sigma_isotope_rel: float = 0.01

    def __post_init__(self) -> None:
        for name in (
            "sigma_ln_intensity",
            "sigma_rho_polarized",
            "sigma_rho_depolarized",
            "cap",
            "unassigned_band",
        ):
            value = getattr(self, name)
            if not (math.isfinite(value) and value > 0):
                raise VibrapolError(f"cost model: {name} must be a positive number, got {value}")
        if not (
            self.sigma_cm1 >= 0 and self.sigma_rel >= 0 and self.sigma_cm1 + self.sigma_rel > 0
        ):
            raise VibrapolError(
                "cost model: sigma_cm1 and sigma_rel must be ≥ 0 and not both zero, got "
                f"{self.sigma_cm1}, {self.sigma_rel}"
            )
        for name in (
            "weight_intensity",
            "weight_polarization",
            "unassigned_mode",
            "weight_isotopologue",
            "sigma_isotope_rel",
        ):
            value = getattr(self, name)
            if not (math.isfinite(value) and value >= 0):
                raise VibrapolError(f"cost model: {name} must be ≥ 0, got {value}")
        if not (math.isfinite(self.weight_position) and self.weight_position > 0):
            raise VibrapolError(
                f"cost model: weight_position must be positive, got {self.weight_position}"
            )

    def sigma_position(self, band_cm1: np.ndarray) -> np.ndarray:
        """σ_ν at the measured positions, cm⁻¹."""
        return self.sigma_cm1 + self.sigma_rel * np.abs(np.asarray(band_cm1, dtype=float))


@dataclass(frozen=True, eq=False)
class BandData:
    """The numbers of the measured bands that enter the cost (arrays of length n_bands)."""

    position_cm1: np.ndarray
    ln_area: np.ndarray
    rho: np.ndarray
    rho_err: np.ndarray


@dataclass(frozen=True, eq=False)
class ModeData:
    """The numbers of the computed bands that enter the cost (arrays of length n_modes)."""

    harmonic_cm1: np.ndarray
    ln_intensity: np.ndarray
    rho: np.ndarray
    polarized: np.ndarray


def safe_log(values: np.ndarray) -> np.ndarray:
    """Natural log of intensities; values ≤ 0 are raised to 10⁻⁶ of the largest (ln 0 = −∞)."""
    v = np.asarray(values, dtype=float)
    top = float(np.max(v)) if v.size and np.max(v) > 0 else 1.0
    return np.log(np.clip(v, 1e-6 * top, None))


def position_z2(model: CostModel, bands: BandData, modes: ModeData, factor: float) -> np.ndarray:
    """z_ν² for every pair, shape (n_bands, n_modes)."""
    sigma = model.sigma_position(bands.position_cm1)[:, None]
    delta = bands.position_cm1[:, None] - factor * modes.harmonic_cm1[None, :]
    return (delta / sigma) ** 2


def intensity_z2(model: CostModel, bands: BandData, modes: ModeData, offset: float) -> np.ndarray:
    """min(z_I², cap) for every pair."""
    z = (bands.ln_area[:, None] - modes.ln_intensity[None, :] - offset) / model.sigma_ln_intensity
    return np.minimum(z * z, model.cap)


#: A computed ρ within this of 3/4 is taken as the exact 3/4 of a non-totally-symmetric mode
#: (programs print 3–4 decimals) and gets ``sigma_rho_depolarized``; any lower computed ρ is a
#: model prediction and gets ``sigma_rho_polarized``.  This chooses an uncertainty, not the
#: polarized/depolarized class, which follows :mod:`vibrapol.polarization`.
EXACT_THREE_QUARTERS_TOL = 0.01


def polarization_z2(model: CostModel, bands: BandData, modes: ModeData) -> np.ndarray:
    """min(z_ρ², cap) for every pair; 0 where either ratio is unknown."""
    predicted = np.nan_to_num(modes.rho, nan=1.0) < 0.75 - EXACT_THREE_QUARTERS_TOL
    sigma_mode = np.where(predicted, model.sigma_rho_polarized, model.sigma_rho_depolarized)
    var = bands.rho_err[:, None] ** 2 + sigma_mode[None, :] ** 2
    d = bands.rho[:, None] - modes.rho[None, :]
    z2 = np.where(np.isfinite(d), d * d / var, 0.0)
    return np.minimum(np.nan_to_num(z2, nan=0.0), model.cap)


def pair_costs(
    model: CostModel, bands: BandData, modes: ModeData, factor: float, offset: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The three weighted terms (position, intensity, polarization), each (n_bands, n_modes)."""
    pos = model.weight_position * position_z2(model, bands, modes, factor)
    inten = (
        model.weight_intensity * intensity_z2(model, bands, modes, offset)
        if model.weight_intensity
        else np.zeros_like(pos)
    )
    pol = (
        model.weight_polarization * polarization_z2(model, bands, modes)
        if model.weight_polarization
        else np.zeros_like(pos)
    )
    return pos, inten, pol


def unassigned_mode_costs(
    model: CostModel,
    modes: ModeData,
    factor: float,
    range_cm1: tuple[float, float],
) -> np.ndarray:
    """Cost of leaving each computed band unassigned (0 outside the measured range)."""
    scaled = factor * modes.harmonic_cm1
    inside = (scaled >= range_cm1[0]) & (scaled <= range_cm1[1])
    if not np.any(inside):
        return np.zeros(modes.harmonic_cm1.shape)
    rel = np.exp(modes.ln_intensity - np.max(modes.ln_intensity[inside]))
    return np.where(inside, model.unassigned_mode * np.minimum(rel, 1.0), 0.0)


def measured_polarized(rho: np.ndarray, rho_err: np.ndarray) -> np.ndarray:
    """Measured bands measurably polarized: ρ + 2σ < 3/4 − 0.05 (NaN ρ gives False).

    :func:`vibrapol.polarization.measurably_polarized`, the rule every output uses.
    """
    return measurably_polarized(rho, rho_err)


#: Basis sets whose scaled wavenumbers stray further than the default tolerance allows:
#: minimal and unpolarized split-valence sets (names as PySCF and most programs spell them).
SMALL_BASIS_SETS = frozenset({"sto-3g", "sto3g", "3-21g", "321g"})

#: Relative position tolerance for them.  Measured with bench/assignment.py (CHCl3 against 100
#: invented VV/VH pairs, docs/assignment.md): HF/3-21G recovers the right assignment in 0.98 of
#: the realizations with 0.03 against 0.08 with the default 0.02, while HF/6-31G* drops from
#: 0.97 to 0.94 with 0.03, so the default stays 0.02 for everything else.
SMALL_BASIS_SIGMA_REL = 0.03


def model_for_basis(basis: str, model: CostModel | None = None) -> tuple[CostModel, str]:
    """The cost model for a candidate computed with ``basis``, and a note ('' if unchanged).

    Only the relative position tolerance changes: :data:`SMALL_BASIS_SIGMA_REL` for a basis in
    :data:`SMALL_BASIS_SETS`, the given (default) model otherwise.
    """
    base = CostModel() if model is None else model
    name = basis.strip().lower().replace(" ", "")
    if name not in SMALL_BASIS_SETS or base.sigma_rel >= SMALL_BASIS_SIGMA_REL:
        return base, ""
    note = (
        f"position tolerance {SMALL_BASIS_SIGMA_REL:g} of the wavenumber (not "
        f"{base.sigma_rel:g}): the {basis} basis set is small, its scaled wavenumbers stray "
        "further; --position-tolerance sets it"
    )
    return dataclasses.replace(base, sigma_rel=SMALL_BASIS_SIGMA_REL), note
