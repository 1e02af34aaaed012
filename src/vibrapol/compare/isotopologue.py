"""A measured isotopologue beside the parent: isotope shifts as one more term of the cost.

Substituting isotopes moves each band by a ratio the harmonic model predicts well, far
better than it predicts the wavenumber itself: the harmonic ratio ν̃′/ν̃ and the measured
one differ by about 1 % (H₂O/D₂O: 0.730–0.742 measured, 0.721–0.733 harmonic; common
practice, values from memory), and the ratio needs no scale factor.  So when the
isotopologue's bands are measured too, the pair (measured parent band i, computed band j)
predicts an isotopologue band at r_j x_i, r_j the computed ratio of band j; the cost of
the pair gains

    w_iso · min( min_k z_k², cap ),  z_k = (y_k − r_j x_i) / σ_iso(r_j x_i),
    σ_iso(y) = ``sigma_cm1`` + ``sigma_isotope_rel`` · y,

y_k the measured isotopologue bands.  A pair whose predicted isotopologue band is seen gains
little; one whose band is missing gains up to ``cap``.  Measured shifts thus separate
modes that lie close in the parent but move differently on substitution (a C–H stretch from
a C–C stretch when H is replaced by D).  The isotopologue's intensities and ratios are not
used.  The score :attr:`~vibrapol.compare.results.AssignmentScores.isotopologue_agreement`
(mean exp(−z²/2) over the assigned pairs) enters the overall score.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from vibrapol.compare.candidates import Candidate
from vibrapol.compare.costs import CostModel
from vibrapol.errors import VibrapolError
from vibrapol.modeset import ModeSet


def with_isotopologue(candidate: Candidate, parent: ModeSet, heavy: ModeSet) -> Candidate:
    """``candidate`` with the computed ratio ν̃′/ν̃ of each of its bands.

    Parameters
    ----------
    candidate : Candidate
        Built from ``parent`` by :func:`~vibrapol.compare.candidates.candidate_from_modes`
        (one component: a mixture of conformers is refused).
    parent, heavy : ModeSet
        The parent and its isotopologue (:func:`vibrapol.isotopes.isotopologue`); modes are
        paired by :func:`vibrapol.isotopes.isotope_shifts`, and a degenerate band takes the
        mean ratio of its modes.
    """
    from vibrapol.isotopes import isotope_shifts

    sticks = candidate.sticks
    if len(sticks.components) != 1:
        raise VibrapolError(
            "an isotopologue measurement applies to a single structure, not a mixture"
        )
    ratio = isotope_shifts(parent, heavy).ratio
    per_band = np.array([float(np.mean(ratio[list(s)])) for s in sticks.mode_sets])
    note = f"isotopologue: {heavy.provenance.masses}"
    return dataclasses.replace(candidate, isotope_ratios=per_band, notes=(*candidate.notes, note))


def isotopologue_z2(
    model: CostModel,
    band_cm1: np.ndarray,
    isotopologue_cm1: np.ndarray,
    ratios: np.ndarray,
) -> np.ndarray:
    """min(min_k z_k², cap) for every (measured band, computed band) pair, see the module notes.

    Parameters
    ----------
    model : CostModel
    band_cm1 : ndarray (n_bands,)
        Measured parent bands x_i.
    isotopologue_cm1 : ndarray (n_iso,)
        Measured isotopologue bands y_k.
    ratios : ndarray (n_modes,)
        Computed ν̃′/ν̃ of each computed band.
    """
    predicted = np.asarray(band_cm1, float)[:, None] * np.asarray(ratios, float)[None, :]
    y = np.asarray(isotopologue_cm1, dtype=float)
    if y.size == 0:
        return np.full(predicted.shape, model.cap)
    sigma = model.sigma_cm1 + model.sigma_isotope_rel * np.abs(predicted)
    z2 = np.min(((y[None, None, :] - predicted[:, :, None]) / sigma[:, :, None]) ** 2, axis=2)
    return np.minimum(np.nan_to_num(z2, nan=model.cap), model.cap)
