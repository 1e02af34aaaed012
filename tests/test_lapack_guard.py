"""Contract: numbers read from files reach LAPACK only when finite and of sane magnitude.

LAPACK's SVD driver looped without end on a 3 × 3 matrix with an infinite entry: the fuzz test
of the Gaussian reader (tests/test_fuzz_readers.py, a mutated orientation coordinate of
1.7e308, whose products overflow) hung a CI run in ``frame_rotation``.  Each guarded entry point
now refuses such input with one line; each case below hung or returned NaN before.
"""

from __future__ import annotations

import numpy as np
import pytest

from vibrapol.errors import InputFormatError, ShapeError
from vibrapol.sources.gaussian import frame_rotation
from vibrapol.vibrations import harmonic_analysis, modes_from_displacements

RNG = np.random.default_rng(7)
GEOMETRY = RNG.normal(size=(26, 3))


@pytest.mark.parametrize("value", [1.7e308, np.inf, np.nan, 1e31])
def test_orientation_tables_out_of_range_are_refused(value):
    damaged = GEOMETRY.copy()
    damaged[5, 1] = value
    with pytest.raises(InputFormatError, match="out.log: standard orientation"):
        frame_rotation(GEOMETRY, damaged, "out.log")


def test_hessian_and_displacements_out_of_range_are_refused():
    masses = np.full(3, 12.0)
    coords = GEOMETRY[:3]
    hessian = np.eye(9)
    hessian[0, 4] = hessian[4, 0] = np.inf
    with pytest.raises(ShapeError, match="Hessian contains NaN or infinite values"):
        harmonic_analysis(hessian, masses, coords)
    far = coords.copy()
    far[0, 0] = 1e40
    with pytest.raises(ShapeError, match="coordinates holds 1e\\+40"):
        harmonic_analysis(np.eye(9), masses, far)
    with pytest.raises(ShapeError, match="displacements contains NaN"):
        modes_from_displacements(np.full((3, 9), np.nan), masses)
