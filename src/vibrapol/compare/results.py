"""Typed results of an assignment: per band, the scale factor, the scores."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.compare.costs import CostModel
from vibrapol.errors import VibrapolError
from vibrapol.measured import MeasuredBands
from vibrapol.spectrum import StickSpectrum

if TYPE_CHECKING:
    import pandas as pd


@dataclass(frozen=True)
class AssignedBand:
    """One measured band and the computed band assigned to it (if any).

    Attributes
    ----------
    band : int
        Index of the band in the :class:`~vibrapol.measured.MeasuredBands` (0-based).
    band_cm1, band_rho, band_rho_err, band_area : float
        Measured position, depolarization ratio (NaN without VH) and its error, VV area.
    stick : int
        Index of the assigned computed band in the candidate's sticks, −1 when unassigned.
    mode : str
        Mode numbers (1-based, in the source's order) of the assigned band, a degenerate set
        written "4 5"; '' when unassigned.
    component : str
        Candidate component (conformer) of the assigned band; '' when unassigned.
    irrep : str
        Symmetry species of the assigned band ('' when unknown or unassigned).
    mode_cm1, mode_cm1_scaled : float
        Harmonic and scaled wavenumber of the assigned band (NaN when unassigned).
    mode_rho : float
        Computed depolarization ratio (NaN when unknown or unassigned).
    mode_polarized : bool
        Computed band polarized (False when unassigned).
    delta_cm1 : float
        band_cm1 − mode_cm1_scaled (NaN when unassigned).
    cost : float
        Cost of the pair, or of leaving the band unassigned.
    cost_position, cost_intensity, cost_polarization : float
        The three weighted terms of the pair cost (NaN when unassigned).
    confidence : float
        1 − exp(−Δ/2), Δ the increase of the total cost when this band is given its best
        alternative (another computed band, or none): 0 for a tie, → 1 for a clear choice.
        With costs read as −2 ln L, exp(−Δ/2) is the likelihood ratio of the alternative to
        the chosen assignment.
    alternative : str
        Mode numbers of the best alternative partner; "unassigned"; or '' when there is none.
    """

    band: int
    band_cm1: float
    band_rho: float
    band_rho_err: float
    band_area: float
    stick: int
    mode: str
    component: str
    irrep: str
    mode_cm1: float
    mode_cm1_scaled: float
    mode_rho: float
    mode_polarized: bool
    delta_cm1: float
    cost: float
    cost_position: float
    cost_intensity: float
    cost_polarization: float
    confidence: float
    alternative: str

    @property
    def assigned(self) -> bool:
        """Whether a computed band was assigned."""
        return self.stick >= 0


@dataclass(frozen=True)
class ScaleFit:
    """The frequency scale factor found with the assignment.

    Attributes
    ----------
    factor : float
        Factor applied to the harmonic wavenumbers.
    factor_err : float
        Standard error from the weighted least-squares fit of the assigned pairs
        (x_i ≈ f ν̃_j with weights 1/σ_ν(x_i)²), scaled by the residual scatter; 0 when the
        factor was given; NaN with fewer than two pairs.  It does not include the chance that
        the assignment itself is wrong.
    start : float
        Where the search started.
    start_note : str
        Where the start came from (published factor, given, default).
    fitted : bool
        False when the factor was fixed by the caller.
    search : (float, float)
        Range searched.
    n_pairs : int
        Pairs the fit used.
    intensity_offset : float
        Fitted ln(measured area / computed intensity) common to all pairs.
    """

    factor: float
    factor_err: float
    start: float
    start_note: str
    fitted: bool
    search: tuple[float, float]
    n_pairs: int
    intensity_offset: float

    def describe(self) -> str:
        """One line for summaries."""
        if not self.fitted:
            return f"scale factor {self.factor:.4f} (given)"
        err = f" ± {self.factor_err:.4f}" if math.isfinite(self.factor_err) else ""
        return (
            f"scale factor {self.factor:.4f}{err} (fitted on {self.n_pairs} pairs, "
            f"start {self.start:.4f}: {self.start_note})"
        )


@dataclass(frozen=True)
class AssignmentScores:
    """How good the whole assignment is.

    Attributes
    ----------
    n_bands : int
        Measured bands.
    n_assigned : int
        Measured bands with a computed band assigned.
    n_modes_in_range : int
        Computed bands whose scaled position lies in the measured range.
    rms_cm1, max_abs_cm1 : float
        Root-mean-square and largest |band − scaled mode| over the assigned pairs.
    position_agreement : float
        Mean of exp(−z_ν²/2) over assigned pairs (1: every pair exactly on position).
    explained_fraction : float
        Share of the measured VV area in assigned bands.
    predicted_found_fraction : float
        Share of the computed VV intensity in range that is assigned to a measured band.
    polarization_agreement : float
        Share of assigned pairs whose measured class (polarized when ρ + 2σ < 3/4 − 0.05)
        equals the computed one; NaN without VH or computed ratios.
    similarity : float
        Cosine similarity in [0, 1] of the broadened computed VV+VH spectrum (scaled, widths of
        the measured bands) with the measured one on the measured axis; NaN when not computed.
    overall : float
        Geometric mean of ``explained_fraction``, ``predicted_found_fraction``,
        ``position_agreement``, ``polarization_agreement``, ``similarity`` and
        ``isotopologue_agreement`` over those that are defined; in [0, 1], 1 for a perfect
        and complete match.
    total_cost : float
        The minimised cost (sum of pair and unassigned costs).
    isotopologue_agreement : float
        Mean of exp(−z²/2) of the isotopologue term over the assigned pairs
        (:mod:`vibrapol.compare.isotopologue`); NaN without an isotopologue measurement.
    """

    n_bands: int
    n_assigned: int
    n_modes_in_range: int
    rms_cm1: float
    max_abs_cm1: float
    position_agreement: float
    explained_fraction: float
    predicted_found_fraction: float
    polarization_agreement: float
    similarity: float
    overall: float
    total_cost: float
    isotopologue_agreement: float = float("nan")


@dataclass(frozen=True, eq=False)
class Assignment:
    """Which computed band each measured band is, with the scale factor and the scores.

    Attributes
    ----------
    label : str
        Candidate name.
    bands : tuple of AssignedBand
        One per measured band, in the order of the measured bands (ascending position).
    unassigned_sticks : tuple of int
        Computed bands (indices into ``sticks``) in the measured range left unassigned.
    scale : ScaleFit
    scores : AssignmentScores
    model : CostModel
    range_cm1 : (float, float)
        Measured range.
    sticks : StickSpectrum
        The candidate's computed bands (positions as computed; scale with ``scale.factor``).
    measured : MeasuredBands
    """

    label: str
    bands: tuple[AssignedBand, ...]
    unassigned_sticks: tuple[int, ...]
    scale: ScaleFit
    scores: AssignmentScores
    model: CostModel
    range_cm1: tuple[float, float]
    sticks: StickSpectrum
    measured: MeasuredBands

    def __repr__(self) -> str:
        from vibrapol.display import assignment_lines

        return "\n".join(assignment_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import assignment_html

        return assignment_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The assignment as a pandas DataFrame, one row per measured band.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.assignment_dataframe`.
        """
        from vibrapol.output.frames import assignment_dataframe

        return assignment_dataframe(self)

    def __len__(self) -> int:
        return len(self.bands)

    @property
    def scaled_cm1(self) -> np.ndarray:
        """Scaled wavenumbers of every computed band."""
        return self.scale.factor * self.sticks.harmonic_cm1

    def nearest(self, position_cm1: float) -> AssignedBand:
        """The measured band closest to ``position_cm1``."""
        if not self.bands:
            raise VibrapolError("the assignment has no measured bands")
        pos = np.array([b.band_cm1 for b in self.bands])
        return self.bands[int(np.argmin(np.abs(pos - position_cm1)))]
