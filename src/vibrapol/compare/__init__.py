"""Assignment of computed modes to measured Raman bands, scores, and ranking of candidates.

Typical use (a measured VV/VH pair and one computed source)::

    from vibrapol import measured as m
    from vibrapol.compare import assign, candidate_from_modes
    from vibrapol.sources import read_modes

    pair, _, _ = m.clean_pair(m.read_pair("vv.txt", "vh.txt"))
    bands = m.measure_bands(pair)
    cand = candidate_from_modes(read_modes("molecule.modes.json"), laser_nm=532.0)
    result = assign(cand, bands, pair=pair)
    print(result.scale.describe(), result.scores.overall)
    for b in result.bands:
        print(b.band_cm1, b.mode or "-", b.irrep, f"{b.confidence:.2f}")

How the pieces fit: :mod:`~vibrapol.compare.costs` defines the cost of a pair (position after
scaling, relative intensity, polarization) and of leaving a band or mode unassigned;
:mod:`~vibrapol.compare.matching` solves the one-to-one matching exactly with
:func:`scipy.optimize.linear_sum_assignment`; :mod:`~vibrapol.compare.assignment` searches the
scale factor jointly; :mod:`~vibrapol.compare.scores` scores the result;
:mod:`~vibrapol.compare.ranking` orders several candidates.

Choice of the defaults (``bench/assignment.py``, CHCl₃ at HF/6-31G* against invented spectra
built from published band positions, 100 realizations each with noise, a sloping baseline,
spikes, one band missing and one extra band; and crowded invented problems): see
``docs/assignment.md`` for the table of rates when each weight is halved, doubled or set to
zero.
"""

from vibrapol.compare.assignment import DEFAULT_MODEL, assign
from vibrapol.compare.candidates import (
    Candidate,
    candidate_from_modes,
    mixture_candidate,
    published_scale,
)
from vibrapol.compare.costs import MEASURED_POLARIZED_MARGIN, CostModel, measured_polarized
from vibrapol.compare.ranking import Ranking, rank
from vibrapol.compare.results import AssignedBand, Assignment, AssignmentScores, ScaleFit
from vibrapol.compare.scores import spectral_similarity

__all__ = [
    "DEFAULT_MODEL",
    "MEASURED_POLARIZED_MARGIN",
    "AssignedBand",
    "Assignment",
    "AssignmentScores",
    "Candidate",
    "CostModel",
    "Ranking",
    "ScaleFit",
    "assign",
    "candidate_from_modes",
    "measured_polarized",
    "mixture_candidate",
    "published_scale",
    "rank",
    "spectral_similarity",
]
