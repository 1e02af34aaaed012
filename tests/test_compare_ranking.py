"""Ranking of candidate structures against one (invented) measurement.

Candidates are computed with vibrapol's engine (HF/3-21G, tests/fixtures/compare/): the three
C3H4 isomers propyne (C3v), allene (D2d) and cyclopropene (C2v), and the trans and gauche
conformers of ethanol.  The measured spectra are INVENTED DATA drawn from one candidate's own
computed bands (scaled by the published HF/3-21G factor 0.9085, SR96 in
../shared/reference/scale-factors.md, Table 1) with 1 % position scatter, intensities off by a
log-normal factor (σ = 0.5) and noise: the candidate the spectrum was drawn from must rank first.
"""

from __future__ import annotations

import numpy as np
import pytest

from compare_helpers import FIXTURES, clean_measured, pair_from_sticks
from vibrapol import units
from vibrapol.compare import candidate_from_modes, mixture_candidate, rank
from vibrapol.errors import VibrapolError
from vibrapol.sources import read_modes

ISOMERS = ("propyne", "allene", "cyclopropene")
FACTOR_321G = 0.9085


def modes(name):
    return read_modes(FIXTURES / f"{name}_hf_321g.modes.json")


@pytest.fixture(scope="module")
def isomers():
    return {n: candidate_from_modes(modes(n), label=n) for n in ISOMERS}


@pytest.fixture(scope="module")
def ethanol():
    trans, gauche = modes("ethanol_trans"), modes("ethanol_gauche")
    # gauche ethanol is C1: the symmetry search labels it so quietly (no warning needed)
    cands = {
        "trans": candidate_from_modes(trans, label="trans"),
        "gauche": candidate_from_modes(gauche, label="gauche"),
        "mixture": mixture_candidate(
            [trans, gauche], degeneracies=[1, 2], labels=["trans", "gauche"], label="mixture"
        ),
    }
    return cands, trans, gauche


def measurement(candidate, seed):
    rng = np.random.default_rng(seed)
    pair = pair_from_sticks(
        candidate.sticks, FACTOR_321G, rng, position_jitter=0.01, intensity_sigma=0.5
    )
    return clean_measured(pair)


def test_isomers_have_their_point_groups(isomers):
    # Point groups of the three C3H4 isomers (common practice).
    assert [isomers[n].point_groups[0] for n in ISOMERS] == ["C3v", "D2d", "C2v"]


@pytest.mark.parametrize("seed", [0, 1, 2])
@pytest.mark.parametrize("truth", ISOMERS)
def test_isomer_the_spectrum_came_from_wins(isomers, truth, seed):
    pair, bands = measurement(isomers[truth], seed)
    ranking = rank(list(isomers.values()), bands, pair=pair)
    assert ranking.labels[0] == truth
    assert ranking.margin() > 0.1  # measured margins 0.15–0.38 over these seeds
    # the winner's scale factor is the one the spectrum was drawn with
    assert ranking.best.scale.factor == pytest.approx(FACTOR_321G, abs=0.01)


def test_mixture_weights_are_boltzmann(ethanol):
    # p_i ∝ g_i exp(−ΔE_i/RT) (McQuarrie 1976, ch. 2) with the engine's energies, g = (1, 2).
    cands, trans, gauche = ethanol
    de = (trans.energy_hartree - gauche.energy_hartree) * units.HARTREE_TO_KJ_MOL
    w_trans = np.exp(-de / (units.GAS_CONSTANT_KJ_MOL_K * 298.15))
    expected = np.array([w_trans, 2.0]) / (w_trans + 2.0)
    assert cands["mixture"].sticks.weights == pytest.approx(tuple(expected), rel=1e-12)


@pytest.mark.parametrize("seed", [0, 2, 3])
@pytest.mark.parametrize("truth", ["mixture", "trans", "gauche"])
def test_conformer_or_mixture_the_spectrum_came_from_wins(ethanol, truth, seed):
    cands, _, _ = ethanol
    pair, bands = measurement(cands[truth], seed)
    ranking = rank(list(cands.values()), bands, pair=pair)
    assert ranking.labels[0] == truth
    # measured margins 0.0055–0.17 over these seeds with photon-counting intensities; the
    # closest call is gauche against the mixture, which is two-thirds gauche
    assert ranking.margin() > 0.004


def test_rank_rejects_duplicate_labels(isomers):
    pair, bands = measurement(isomers["allene"], 0)
    with pytest.raises(VibrapolError, match="repeated: allene"):
        rank([isomers["allene"], isomers["allene"]], bands)
    with pytest.raises(VibrapolError, match="at least one candidate"):
        rank([], bands)
