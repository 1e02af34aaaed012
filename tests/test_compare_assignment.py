"""Assignment of CHCl3 computed with vibrapol's engine to invented spectra from published bands.

The computed side is the engine's HF/6-31G* result (tests/fixtures/compare/, made by
make_compare_fixtures.py in that folder).  The measured side is INVENTED DATA: VV/VH pairs
drawn from the published gas-phase fundamentals of CHCl3 (T. Shimanouchi, Tables of
Molecular Vibrational Frequencies, Consolidated Volume I, NSRDS-NBS 39 (1972); positions
from memory) with invented areas and A1 ratios, E bands at ρ = 3/4 by symmetry (common
practice), plus an invented overtone near 2ν5 that no fundamental may take.
"""

from __future__ import annotations

import numpy as np
import pytest

from compare_helpers import (
    CHCL3,
    CHCL3_OVERTONE,
    band_list,
    chcl3_modes,
    chcl3_pair,
    clean_measured,
    expected_modes,
    random_problem,
    random_realization,
    realization_correct,
)
from vibrapol.compare import assign, candidate_from_modes
from vibrapol.errors import VibrapolError
from vibrapol.spectrum.scaling import lookup_factor


@pytest.fixture(scope="module")
def chcl3():
    return candidate_from_modes(chcl3_modes(), label="CHCl3 HF/6-31G*")


@pytest.fixture(scope="module")
def measured():
    return clean_measured(chcl3_pair())


@pytest.fixture(scope="module")
def result(chcl3, measured):
    pair, bands = measured
    return assign(chcl3, bands, pair=pair)


def test_species_from_symmetry(chcl3):
    # C3v: 3 A1 + 3 E fundamentals (Shimanouchi 1972 lists the same species).
    assert chcl3.point_groups == ("C3v",)
    assert sorted(chcl3.sticks.irreps) == ["A1", "A1", "A1", "E", "E", "E"]
    assert all(
        len(s) == 2
        for s, ir in zip(chcl3.sticks.mode_sets, chcl3.sticks.irreps, strict=True)
        if ir == "E"
    )


def test_every_fundamental_gets_the_mode_of_its_species(result):
    want = expected_modes(result)
    for f in CHCL3:
        band = result.nearest(f.position_cm1)
        assert abs(band.band_cm1 - f.position_cm1) < 1.0  # the fit found it
        assert band.irrep == f.species, f.name
        assert band.mode == want[f.name], f.name
        assert band.confidence > 0.9, f.name


def test_overtone_stays_unassigned(result):
    band = result.nearest(CHCL3_OVERTONE.position_cm1)
    assert abs(band.band_cm1 - CHCL3_OVERTONE.position_cm1) < 1.0
    assert not band.assigned and band.mode == ""
    assert band.confidence > 0.99  # no computed band is anywhere near 1540 cm-1
    assert result.scores.n_assigned == 6 and result.scores.n_bands == 7


def test_scale_factor_and_scores(result):
    # Fitted factor near the published HF/6-31G(d) one (MMR07 and SR96: 0.8953,
    # ../shared/reference/scale-factors.md, Table 1); the six pairs fix it to better than 1 %.
    published = lookup_factor("HF/6-31G*").factor
    assert result.scale.fitted
    assert result.scale.factor == pytest.approx(published, abs=0.01)
    assert 0 < result.scale.factor_err < 0.01
    s = result.scores
    # after scaling HF/6-31G* is within ~30 cm-1 of these fundamentals (largest: ν2 680)
    assert s.rms_cm1 < 25.0 and s.max_abs_cm1 < 35.0
    assert s.polarization_agreement == 1.0
    # the overtone (area 5 of 302) is the only unexplained area
    assert s.explained_fraction == pytest.approx(1 - 5.0 / 302.0, abs=0.01)
    assert s.predicted_found_fraction == 1.0
    assert 0.0 < s.similarity < 1.0 and 0.5 < s.overall < 1.0


def test_fixed_scale_is_kept(chcl3, measured):
    pair, bands = measured
    fixed = assign(chcl3, bands, pair=pair, scale=0.90, confidence=False)
    assert fixed.scale.factor == 0.90 and not fixed.scale.fitted and fixed.scale.factor_err == 0
    assert [b.mode for b in fixed.bands] == [b.mode for b in assign(chcl3, bands, pair=pair).bands]


def test_without_vh_positions_and_intensities_still_assign(chcl3, measured):
    # VV only: no ρ, the polarization term is off (its cost is zero for every pair).
    pair, bands = measured
    from vibrapol.measured import measure_bands

    vv_only = measure_bands(pair.vv)
    res = assign(chcl3, vv_only, pair=None)
    want = expected_modes(res)
    assert all(res.nearest(f.position_cm1).mode == want[f.name] for f in CHCL3)
    assert np.isnan(res.scores.polarization_agreement)
    assert all(b.cost_polarization == 0 for b in res.bands if b.assigned)


def test_scale_recovered_from_exact_positions(chcl3):
    # Invented bands exactly at 0.93 × the computed wavenumbers, start unknown: the search
    # over 0.80–1.10 and the refit must land on 0.93.
    sticks = chcl3.sticks
    nu = sticks.harmonic_cm1
    bands = band_list(
        0.93 * nu,
        sticks.channel("vv"),
        np.where(sticks.polarized, 0.1, 0.75),
        np.full(nu.size, 0.01),
    )
    res = assign(sticks, bands)
    assert res.scale.start_note == "no published factor for the method"
    assert res.scale.factor == pytest.approx(0.93, abs=1e-9)
    assert res.scores.rms_cm1 == pytest.approx(0.0, abs=1e-6)


def test_robustness_over_100_realizations(chcl3):
    # The robustness check (same realizations as bench/assignment.py, seed 2024):
    # noise, sloping baseline, spikes, one band missing and one extra band, through the whole
    # measured chain; at least 95 of 100 must be assigned exactly right (97 measured).
    rng = np.random.default_rng(2024)
    correct = 0
    for _ in range(100):
        real = random_realization(rng)
        pair, bands = clean_measured(real.pair)
        correct += realization_correct(assign(chcl3, bands, pair=pair, similarity=False), real)
    assert correct >= 95


def test_large_invented_problem_recovers_most_pairs():
    # 200 computed bands against 100 measured ones (invented; positions 1 % scatter): the
    # scale factor is found and most true pairs recovered.
    sticks, bands, truth = random_problem(200, 100, np.random.default_rng(5))
    res = assign(sticks, bands, confidence=False)
    got = np.array([b.stick for b in res.bands])
    assert res.scale.factor == pytest.approx(0.95, abs=0.005)
    assert np.mean(got[truth >= 0] == truth[truth >= 0]) > 0.7


def test_bad_inputs(chcl3, measured):
    pair, bands = measured
    with pytest.raises(VibrapolError, match="between 0.5 and 1.5"):
        assign(chcl3, bands, scale=2.0)
    with pytest.raises(VibrapolError, match="empty or reversed"):
        assign(chcl3, bands, search=(1.0, 0.9))
    with pytest.raises(VibrapolError, match="no measured bands"):
        assign(chcl3, _empty(bands))


def _empty(bands):
    import dataclasses

    return dataclasses.replace(bands, bands=())
