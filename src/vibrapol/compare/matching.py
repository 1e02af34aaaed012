"""Optimal one-to-one matching with either side allowed to stay unmatched, and its sensitivity.

The problem: measured bands i and computed bands j, a pair cost c_ij, a cost b_i for leaving
band i unmatched and m_j for leaving computed band j unmatched; minimise the total over
one-to-one matchings.  Subtracting the constant Σ_j m_j turns it into a rectangular
assignment: row i takes either a computed band j at c_ij − m_j or its own dummy column at
b_i (every other dummy is forbidden), solved exactly by
:func:`scipy.optimize.linear_sum_assignment`.  A pair is *feasible* only when
c_ij < b_i + m_j (otherwise leaving both unmatched is at least as good), so the problem
splits into the connected components of the feasible pairs and each is solved on its own.

References
----------
Rectangular assignment with dummy rows and columns: R. Burkard, M. Dell'Amico and
S. Martello, *Assignment Problems*, SIAM (2009), §4.1 and §5 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy.optimize import linear_sum_assignment
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

#: Components with more measured bands than this are re-solved in a window around a band
#: (not whole) when its confidence is computed; see :func:`alternative_cost`.
EXACT_COMPONENT_BANDS = 40


@dataclass(frozen=True, eq=False)
class Problem:
    """Costs of one matching problem.

    Attributes
    ----------
    cost : ndarray (n_bands, n_modes)
        Pair costs c_ij.
    band_unmatched : ndarray (n_bands,)
        b_i.
    mode_unmatched : ndarray (n_modes,)
        m_j.
    """

    cost: np.ndarray
    band_unmatched: np.ndarray
    mode_unmatched: np.ndarray

    @cached_property
    def feasible(self) -> np.ndarray:
        """Pairs cheaper than leaving both members unmatched (computed once)."""
        return self.cost < self.band_unmatched[:, None] + self.mode_unmatched[None, :]

    def components(self) -> list[tuple[np.ndarray, np.ndarray]]:
        """(band indices, mode indices) of each connected component that has a feasible pair."""
        n_b, n_m = self.cost.shape
        rows, cols = np.nonzero(self.feasible)
        if rows.size == 0:
            return []
        graph = coo_matrix((np.ones(rows.size), (rows, n_b + cols)), shape=(n_b + n_m, n_b + n_m))
        _, labels = connected_components(graph, directed=False)
        used = np.unique(labels[rows])
        out = []
        for lab in used:
            members = np.flatnonzero(labels == lab)
            out.append((members[members < n_b], members[members >= n_b] - n_b))
        return out


def solve_block(
    problem: Problem,
    bands: np.ndarray,
    modes: np.ndarray,
    *,
    forbid_pair: tuple[int, int] | None = None,
    force_band: int | None = None,
) -> tuple[np.ndarray, float]:
    """Optimal matching of a subset of bands and modes (the rest ignored).

    Parameters
    ----------
    problem : Problem
    bands, modes : ndarray of int
        Global indices of the rows and columns taking part.
    forbid_pair : (band, mode), optional
        A pair that may not be used (global indices).
    force_band : int, optional
        A band that must be matched to some mode (any mode of the subset, feasible or not).

    Returns
    -------
    partner : ndarray (len(bands),)
        Global mode index matched to each band, −1 when unmatched.
    cost : float
        Total cost of the subset: pairs + unmatched bands + unmatched modes of the subset;
        ``inf`` when the constraints cannot be met.
    """
    k_b, k_m = len(bands), len(modes)
    if k_b == 0:
        return np.zeros(0, dtype=int), float(problem.mode_unmatched[modes].sum())
    cost = problem.cost[np.ix_(bands, modes)]
    m = problem.mode_unmatched[modes]
    b = problem.band_unmatched[bands]
    block = np.full((k_b, k_m + k_b), np.inf)
    feasible = cost < b[:, None] + m[None, :]
    block[:, :k_m] = np.where(feasible, cost - m[None, :], np.inf)
    block[np.arange(k_b), k_m + np.arange(k_b)] = b
    if forbid_pair is not None:
        (ib,) = np.flatnonzero(bands == forbid_pair[0])
        jm = np.flatnonzero(modes == forbid_pair[1])
        if jm.size:
            block[ib, jm[0]] = np.inf
    if force_band is not None:  # its row may take any mode, even one dearer than unmatched
        (ib,) = np.flatnonzero(bands == force_band)
        block[ib, :k_m] = cost[ib] - m
        block[ib, k_m + ib] = np.inf
        if k_m == 0:
            return np.full(k_b, -1), float("inf")
    try:
        rows, cols = linear_sum_assignment(block)
    except ValueError:  # no complete assignment under the constraints
        return np.full(k_b, -1), float("inf")
    total = float(block[rows, cols].sum() + m.sum())
    partner = np.full(k_b, -1)
    real = cols < k_m
    partner[rows[real]] = modes[cols[real]]
    return partner, total


def solve(problem: Problem) -> tuple[np.ndarray, float]:
    """Optimal matching of the whole problem, component by component.

    Returns
    -------
    partner : ndarray (n_bands,)
        Mode matched to each band (−1: unmatched).
    cost : float
        Total cost (pairs + every unmatched band and mode).
    """
    n_b = problem.cost.shape[0]
    partner = np.full(n_b, -1)
    total = float(problem.band_unmatched.sum() + problem.mode_unmatched.sum())
    for bands, modes in problem.components():
        sub, cost = solve_block(problem, bands, modes)
        partner[bands] = sub
        total += cost - problem.band_unmatched[bands].sum() - problem.mode_unmatched[modes].sum()
    return partner, total


def restricted_cost(
    problem: Problem, partner: np.ndarray, bands: np.ndarray, modes: np.ndarray
) -> float:
    """Cost of a matching restricted to a subset (its pairs, unmatched bands and modes).

    For the optimum restricted to a component, or to a window whose outside partners are
    held fixed, this is the optimum of that subproblem, so no re-solve is needed.
    """
    own = partner[bands]
    paired = own >= 0
    total = float(problem.cost[bands[paired], own[paired]].sum())
    total += float(problem.band_unmatched[bands[~paired]].sum())
    free = np.setdiff1d(modes, own[paired])
    return total + float(problem.mode_unmatched[free].sum())


def _window(
    problem: Problem,
    partner: np.ndarray,
    band: int,
    bands: np.ndarray,
    modes: np.ndarray,
    positions_cm1: np.ndarray,
    radius_cm1: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Bands of a subproblem within ``radius_cm1`` of ``band`` and the modes free to them.

    Bands outside keep their partners (those modes are left out); bands inside keep theirs
    available even when the mode lies outside the window.
    """
    close = np.abs(positions_cm1[bands] - positions_cm1[band]) <= radius_cm1
    near, far = bands[close], bands[~close]
    n_m = problem.cost.shape[1]
    keep = np.zeros(n_m, dtype=bool)
    keep[modes] = problem.feasible[near][:, modes].any(axis=0)
    keep[modes[np.isin(modes, modes_of_band(problem, band))]] = True
    taken = partner[far]
    keep[taken[taken >= 0]] = False
    own = partner[near]
    keep[own[own >= 0]] = True
    return near, np.flatnonzero(keep)


#: Cost increase above which a band's alternative is not looked for (confidence 1 − e⁻²⁵).
DELTA_CAP = 50.0


def modes_of_band(problem: Problem, band: int) -> np.ndarray:
    """Modes an unmatched ``band`` could take for less than :data:`DELTA_CAP` extra."""
    extra = problem.cost[band] - problem.band_unmatched[band] - problem.mode_unmatched
    return np.flatnonzero(extra < DELTA_CAP)


def _subproblem(
    band: int,
    partner: np.ndarray,
    components: list[tuple[np.ndarray, np.ndarray]],
    problem: Problem,
) -> tuple[np.ndarray, np.ndarray]:
    """Bands and modes whose matching may change when ``band`` changes partner.

    For a matched band: its component.  For an unmatched band: itself, the modes it could
    take and the components those modes belong to.
    """
    if partner[band] >= 0:
        return next((b, m) for b, m in components if np.any(b == band))
    reach = modes_of_band(problem, band)
    bands, modes = [np.array([band])], [reach]
    for b, m in components:
        if np.any(b == band) or np.intersect1d(m, reach).size:
            bands.append(b)
            modes.append(m)
    return np.unique(np.concatenate(bands)), np.unique(np.concatenate(modes)).astype(int)


def alternative_cost(
    problem: Problem,
    partner: np.ndarray,
    band: int,
    components: list[tuple[np.ndarray, np.ndarray]],
    positions_cm1: np.ndarray,
    radius_cm1: float,
) -> tuple[float, int]:
    """How much more the best matching costs when ``band`` may not keep its partner.

    For a matched band its pair is forbidden; an unmatched band must take some mode (any
    mode within :data:`DELTA_CAP` of leaving it unmatched).  The re-solve runs over the
    band's component (for an unmatched band: the components of the modes it could take), or,
    when that holds more than :data:`EXACT_COMPONENT_BANDS` bands, over the bands within
    ``radius_cm1`` of it with every other band's partner held fixed: the difference is then
    an upper bound of the exact one (the best alternative might change bands further away).

    Returns
    -------
    delta : float
        Cost increase ≥ 0 (``inf`` when there is no alternative).
    alternative : int
        Partner of ``band`` in the best alternative (−1: unmatched; −2: none exists).
    """
    j = int(partner[band])
    if j < 0 and modes_of_band(problem, band).size == 0:
        return float("inf"), -2
    bands, modes = _subproblem(band, partner, components, problem)
    if len(bands) > EXACT_COMPONENT_BANDS:
        bands, modes = _window(problem, partner, band, bands, modes, positions_cm1, radius_cm1)
    best = restricted_cost(problem, partner, bands, modes)
    if j >= 0:
        alt, cost = solve_block(problem, bands, modes, forbid_pair=(band, j))
    else:
        alt, cost = solve_block(problem, bands, modes, force_band=band)
    if not np.isfinite(cost):
        return float("inf"), -2
    other = int(alt[int(np.flatnonzero(bands == band)[0])])
    return max(cost - best, 0.0), other
