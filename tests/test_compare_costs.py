"""Cost terms of the assignment: each checked against its formula worked by hand."""

from __future__ import annotations

import math

import numpy as np
import pytest

from vibrapol.compare.costs import (
    BandData,
    CostModel,
    ModeData,
    intensity_z2,
    measured_polarized,
    pair_costs,
    polarization_z2,
    position_z2,
    unassigned_mode_costs,
)
from vibrapol.errors import VibrapolError


def bands(x, area=(1.0,), rho=(np.nan,), err=(0.0,)):
    return BandData(
        np.array(x, float),
        np.log(np.array(area, float)),
        np.array(rho, float),
        np.array(err, float),
    )


def modes(nu, inten=(1.0,), rho=(np.nan,), pol=(False,)):
    return ModeData(
        np.array(nu, float),
        np.log(np.array(inten, float)),
        np.array(rho, float),
        np.array(pol, bool),
    )


def test_position_term_by_hand():
    # x = 1000, ν = 1100, f = 0.9: δ = 10 cm-1; σ = 5 + 0.02·1000 = 25 → z² = 0.16.
    z2 = position_z2(CostModel(), bands([1000.0]), modes([1100.0]), 0.9)
    assert z2[0, 0] == pytest.approx(0.16, rel=1e-12)


def test_intensity_term_by_hand_and_cap():
    # ln(6/2) − c with c = ln 3 → 0; a factor 3 off is one σ (σ = ln 3) → z² = 1.
    m = CostModel()
    assert intensity_z2(m, bands([500.0], area=[6.0]), modes([500.0], [2.0]), math.log(3))[
        0, 0
    ] == (pytest.approx(0.0, abs=1e-12))
    assert intensity_z2(m, bands([500.0], area=[6.0]), modes([500.0], [2.0]), 0.0)[0, 0] == (
        pytest.approx(1.0, rel=1e-12)
    )
    # a factor 1e6 is capped at 25
    assert intensity_z2(m, bands([500.0], area=[1e6]), modes([500.0], [1.0]), 0.0)[0, 0] == 25.0


def test_polarization_term_depolarized_and_polarized():
    m = CostModel()
    # computed 3/4 (σ 0.05) vs measured 0.70 ± 0.03: z² = 0.05²/(0.03² + 0.05²) = 0.735294…
    z2 = polarization_z2(m, bands([1.0], rho=[0.70], err=[0.03]), modes([1.0], rho=[0.75]))
    assert z2[0, 0] == pytest.approx(0.0025 / 0.0034, rel=1e-12)
    # computed polarized 0.30 (σ 0.2) vs measured 0.10 ± 0: z² = 0.2²/0.2² = 1
    z2 = polarization_z2(
        m, bands([1.0], rho=[0.10], err=[0.0]), modes([1.0], rho=[0.30], pol=[True])
    )
    assert z2[0, 0] == pytest.approx(1.0, rel=1e-12)
    # a polarized measured band against a depolarized computed one hits the cap
    z2 = polarization_z2(m, bands([1.0], rho=[0.05], err=[0.01]), modes([1.0], rho=[0.75]))
    assert z2[0, 0] == 25.0
    # no VH: no polarization information, no cost
    assert polarization_z2(m, bands([1.0]), modes([1.0], rho=[0.75]))[0, 0] == 0.0


def test_weights_scale_the_terms():
    m = CostModel(weight_position=2.0, weight_intensity=0.0, weight_polarization=3.0)
    b = bands([1000.0], area=[3.0], rho=[0.70], err=[0.03])
    md = modes([1100.0], inten=[1.0], rho=[0.75])
    pos, inten, pol = pair_costs(m, b, md, 0.9, 0.0)
    assert pos[0, 0] == pytest.approx(2 * ((1000 - 990) / 25) ** 2)
    assert inten[0, 0] == 0.0
    assert pol[0, 0] == pytest.approx(3 * 0.0025 / 0.0034)


def test_unassigned_mode_cost_follows_intensity_and_range():
    # strongest in range costs 9, one a quarter as strong 2.25, one outside the range 0
    md = modes([500.0, 1000.0, 5000.0], inten=[4.0, 1.0, 100.0])
    c = unassigned_mode_costs(CostModel(), md, 1.0, (100.0, 3000.0))
    assert c.tolist() == pytest.approx([9.0, 2.25, 0.0])


def test_measured_polarized_threshold():
    # ρ + 2σ < 3/4 − 0.05 = 0.70
    got = measured_polarized(np.array([0.6, 0.6, 0.75, np.nan]), np.array([0.04, 0.06, 0.0, 0.0]))
    assert got.tolist() == [True, False, False, False]


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        ("sigma_ln_intensity", 0.0, "sigma_ln_intensity must be a positive"),
        ("unassigned_band", -1.0, "unassigned_band must be a positive"),
        ("weight_intensity", -1.0, "weight_intensity must be ≥ 0"),
        ("weight_position", 0.0, "weight_position must be positive"),
    ],
)
def test_cost_model_rejects_bad_values(field, value, message):
    with pytest.raises(VibrapolError, match=message):
        CostModel(**{field: value})
    with pytest.raises(VibrapolError, match="not both zero"):
        CostModel(sigma_cm1=0.0, sigma_rel=0.0)
