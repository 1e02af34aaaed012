"""The measured-spectrum steps do not depend on the unit of the intensities.

Counts, arbitrary units and cross sections of 1e-30 cm²/sr must give the same bands: cleaning,
band finding and the joint VV/VH fit scale exactly with the intensities, and ρ is a ratio.  The
reference of each check is the same invented spectrum in its own units (the CHCl3 pair of
compare_helpers); agreement is to rounding (1e-9 relative), since multiplying by a constant
changes nothing else.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from compare_helpers import chcl3_pair
from vibrapol.measured import PolarizedPair, clean_pair, measure_bands


def _bands(factor: float):
    pair = chcl3_pair()
    scaled = PolarizedPair(
        pair.vv.with_intensity(pair.vv.intensity * factor, f"x {factor:g}"),
        pair.vh.with_intensity(pair.vh.intensity * factor, f"x {factor:g}"),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        cleaned, _, _ = clean_pair(scaled)
        return measure_bands(cleaned)


@pytest.fixture(scope="module")
def reference():
    return _bands(1.0)


@pytest.mark.parametrize("factor", [1e-30, 1e-12, 1e12, 1e40])
def test_bands_do_not_depend_on_the_intensity_unit(reference, factor):
    got = _bands(factor)
    assert len(got.bands) == len(reference.bands) == 7  # six fundamentals and the overtone
    for a, b in zip(got.bands, reference.bands, strict=True):
        assert a.position_cm1 == pytest.approx(b.position_cm1, rel=1e-9)
        assert a.rho == pytest.approx(b.rho, rel=1e-9, abs=1e-12)
    areas = np.array([b.area for b in got.vv_fit.bands])
    want = np.array([b.area for b in reference.vv_fit.bands]) * factor
    np.testing.assert_allclose(areas, want, rtol=1e-9)
