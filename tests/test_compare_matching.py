"""The matching core: exact optimum with unmatched bands and modes, and its sensitivity.

Reference for every check: brute-force enumeration of all one-to-one partial matchings (the
definition of the optimum), on problems small enough to enumerate.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from vibrapol.compare import matching
from vibrapol.compare.matching import Problem


def brute_force(problem: Problem, forbid=None, force=None) -> float:
    """Cheapest total over every partial one-to-one matching (exhaustive)."""
    n_b, n_m = problem.cost.shape
    best = np.inf
    for choice in itertools.product(range(-1, n_m), repeat=n_b):
        used = [j for j in choice if j >= 0]
        if len(used) != len(set(used)):
            continue
        if forbid is not None and choice[forbid[0]] == forbid[1]:
            continue
        if force is not None and choice[force] < 0:
            continue
        total = sum(
            problem.cost[i, j] if j >= 0 else problem.band_unmatched[i]
            for i, j in enumerate(choice)
        )
        total += sum(problem.mode_unmatched[j] for j in range(n_m) if j not in used)
        best = min(best, total)
    return best


def random_problem(rng: np.random.Generator, n_b: int, n_m: int) -> Problem:
    # Costs drawn so that roughly half the pairs are feasible (below b + m).
    return Problem(
        rng.uniform(0.0, 12.0, (n_b, n_m)), rng.uniform(2.0, 6.0, n_b), rng.uniform(0.0, 5.0, n_m)
    )


@pytest.mark.parametrize("seed", range(12))
def test_solve_is_the_exhaustive_optimum(seed):
    rng = np.random.default_rng(seed)
    problem = random_problem(rng, int(rng.integers(1, 5)), int(rng.integers(1, 6)))
    partner, cost = matching.solve(problem)
    assert cost == pytest.approx(brute_force(problem), abs=1e-9)
    # the reported partners add up to the reported cost
    used = set(partner[partner >= 0].tolist())
    assert len(used) == int(np.sum(partner >= 0))
    recomputed = sum(
        problem.cost[i, j] if j >= 0 else problem.band_unmatched[i] for i, j in enumerate(partner)
    ) + sum(problem.mode_unmatched[j] for j in range(problem.cost.shape[1]) if j not in used)
    assert recomputed == pytest.approx(cost, abs=1e-9)


def test_components_give_the_same_optimum_as_one_block():
    # Splitting into connected components is exact: compare with one dense solve.
    rng = np.random.default_rng(42)
    x = np.sort(rng.uniform(0, 1000, 40))
    nu = np.sort(rng.uniform(0, 1000, 70))
    cost = ((x[:, None] - nu[None, :]) / 8.0) ** 2
    problem = Problem(cost, np.full(40, 9.0), rng.uniform(0, 9, 70))
    assert len(problem.components()) > 3  # the test means something only if it splits
    _, split = matching.solve(problem)
    _, whole = matching.solve_block(problem, np.arange(40), np.arange(70))
    assert split == pytest.approx(whole, abs=1e-9)


def test_pair_dearer_than_leaving_both_unmatched_is_not_taken():
    # One band, one mode: c = 10 > b + m = 4 + 5, so both stay unmatched (total 9).
    problem = Problem(np.array([[10.0]]), np.array([4.0]), np.array([5.0]))
    partner, cost = matching.solve(problem)
    assert partner.tolist() == [-1] and cost == pytest.approx(9.0)
    # c = 8 < 9: the pair is taken.
    problem = Problem(np.array([[8.0]]), np.array([4.0]), np.array([5.0]))
    partner, cost = matching.solve(problem)
    assert partner.tolist() == [0] and cost == pytest.approx(8.0)


@pytest.mark.parametrize("seed", range(8))
def test_alternative_cost_matches_exhaustive_reassignment(seed):
    rng = np.random.default_rng(100 + seed)
    problem = random_problem(rng, 3, 4)
    partner, best = matching.solve(problem)
    comps = problem.components()
    pos = np.arange(3, dtype=float)
    for i in range(3):
        delta, _ = matching.alternative_cost(problem, partner, i, comps, pos, 1e9)
        j = int(partner[i])
        alt = brute_force(problem, forbid=(i, j)) if j >= 0 else brute_force(problem, force=i)
        expected = alt - best if np.isfinite(alt) else np.inf
        assert delta == pytest.approx(expected, abs=1e-9)


def test_window_bound_is_never_below_the_exact_delta():
    # Large component (more than EXACT_COMPONENT_BANDS bands): the windowed re-solve gives an
    # upper bound of the exact cost increase, equal to it when the window covers everything.
    rng = np.random.default_rng(7)
    n = matching.EXACT_COMPONENT_BANDS + 10
    x = np.sort(rng.uniform(0, 500, n))
    nu = np.sort(rng.uniform(0, 500, 2 * n))
    problem = Problem(
        ((x[:, None] - nu[None, :]) / 10.0) ** 2, np.full(n, 9.0), np.full(2 * n, 2.0)
    )
    partner, _ = matching.solve(problem)
    comps = problem.components()
    big = max(comps, key=lambda c: len(c[0]))
    assert len(big[0]) > matching.EXACT_COMPONENT_BANDS
    band = int(big[0][len(big[0]) // 2])
    small, _ = matching.alternative_cost(problem, partner, band, comps, x, 30.0)
    full, _ = matching.alternative_cost(problem, partner, band, comps, x, 1e9)
    j = int(partner[band])
    sub_b, sub_m = big
    forbidden = problem.cost.copy()
    forbidden[band, j] = np.inf
    _, exact = matching.solve_block(
        Problem(forbidden, problem.band_unmatched, problem.mode_unmatched), sub_b, sub_m
    )
    _, best = matching.solve_block(problem, sub_b, sub_m)
    assert full == pytest.approx(exact - best, abs=1e-9)
    assert small >= full - 1e-9
