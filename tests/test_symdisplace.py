"""Symmetry-reduced Cartesian displacements rebuild the full ∂α/∂x, checked on a model.

The check is the tensor transformation law itself: for any function α(x) of the nuclear
positions that is covariant (α(R x) = R α(x) Rᵀ for every rotation or reflection R and does not
depend on the order of the atoms) the derivative along R d at the image atom is R (∂α/∂d) Rᵀ
(J. F. Nye, *Physical Properties of Crystals*, Oxford 1985, ch. 1; common practice).  A
bond-polarizability model (a sum over atom pairs of w(r) u uᵀ + v(r) I, u the unit bond vector)
is covariant exactly, costs microseconds, and gives the reference by the full 6N central
differences.  The quantum-chemistry check of the same code is in tests/test_engine_fast.py.

The C3v molecules are the regression: a site with one mirror and a direction neither in nor
perpendicular to the mirror has only two independent images, which the earlier condition test
(an SVD of the 2 × 3 image matrix) accepted as if they spanned space.
"""

from __future__ import annotations

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine.dipole import dmu_from_displacements, rebuild_dmu_dx
from vibrapol.engine.displacements import cartesian_plan, central_differences
from vibrapol.engine.routes import grid_operations
from vibrapol.engine.symdisplace import rebuild_dalpha_dx, symmetric_cartesian_plan
from vibrapol.symmetry import find_point_group, symmetrize_coordinates

STEP_ANG = 1e-4


def _model_alpha(z: np.ndarray, x: np.ndarray) -> np.ndarray:
    """A covariant model polarizability (invented; only its covariance matters)."""
    alpha = np.zeros((3, 3))
    for i in range(len(x)):
        for j in range(i + 1, len(x)):
            r = x[j] - x[i]
            d = np.linalg.norm(r)
            u = r / d
            w = np.exp(-d) * (z[i] + 0.7 * z[j] + 0.1 * z[i] * z[j])
            alpha += w * np.outer(u, u) + 0.3 * w * d**2 * np.eye(3)
    return alpha


def _model_dipole(z: np.ndarray, x: np.ndarray) -> np.ndarray:
    """A covariant model dipole (invented): μ(R x) = R μ(x), a polar vector; pair terms."""
    mu = np.zeros(3)
    for i in range(len(x)):
        for j in range(i + 1, len(x)):
            r = x[j] - x[i]
            d = np.linalg.norm(r)
            mu += (z[i] - z[j]) * np.exp(-d) * (1.0 + 0.2 * d * d) * r / d
    return mu


def _rebuild_error(name: str, grid_subgroup: bool = False) -> tuple[str, int, float]:
    atoms = molecule(name)
    z = atoms.numbers
    group = find_point_group(z, atoms.positions, atoms.get_masses())
    x = symmetrize_coordinates(atoms.positions, group)
    full = cartesian_plan(x, STEP_ANG)
    ref = central_differences(full, np.array([_model_alpha(z, c) for c in full.coordinates_ang]))
    ops, perms = group.operations, group.permutations
    if grid_subgroup:
        ops, perms = grid_operations(ops, perms)
    plan = symmetric_cartesian_plan(x, STEP_ANG, ops, perms, group.centre_ang, group.axes)
    alphas = np.array([_model_alpha(z, c) for c in plan.coordinates_ang])
    rebuilt = rebuild_dalpha_dx(plan, alphas)
    error = float(np.abs(rebuilt - ref).max() / np.abs(ref).max())
    # ∂μ/∂x, a vector per coordinate, rebuilt from the same tasks (engine.dipole).
    mu_ref = dmu_from_displacements(
        full, np.array([_model_dipole(z, c) for c in full.coordinates_ang])
    )
    mu = rebuild_dmu_dx(plan, np.array([_model_dipole(z, c) for c in plan.coordinates_ang]))
    error = max(error, float(np.abs(mu - mu_ref).max() / np.abs(mu_ref).max()))
    return group.symbol, plan.n_tasks, error


# (ASE g2 name, point group, displaced geometries of the reduced plan)
CASES = [
    ("H2O", "C2v", 9),
    ("NH3", "C3v", 7),
    ("C3H4_C3v", "C3v", 16),
    ("CH3Cl", "C3v", 10),
    ("CH4", "Td", 3),
    ("C2H6", "D3d", 7),
    ("C2H4", "D2h", 9),
    ("BF3", "D3h", 6),
    ("C6H6", "D6h", 8),
    ("CH3OH", "Cs", 26),
]


@pytest.mark.parametrize(("name", "symbol", "n_tasks"), CASES, ids=[c[0] for c in CASES])
def test_rebuilt_derivative_equals_the_full_plan(name, symbol, n_tasks):
    found, count, error = _rebuild_error(name)
    assert found == symbol
    assert count == n_tasks and count < 6 * len(molecule(name))
    # Central differences of both plans differ at O(h²) ≈ 1e-8 relative.
    assert error < 1e-6


@pytest.mark.parametrize("name", ["NH3", "CH4", "C6H6", "CH3OH"])
def test_ion_dipole_rebuild_is_taken_about_the_centre_of_the_operations(name):
    # Contract: an ion's dipole about the frame origin is μ_c + q c; far from the origin the
    # images of a task differ from R μ by q (1 − R) c, and the rebuild must remove q c first.
    # Regression: without it the reduced plan was off by q (R₊ − R₋) c / 2h.
    atoms = molecule(name)
    z = atoms.numbers
    group = find_point_group(z, atoms.positions + [3.0, -2.0, 5.0], atoms.get_masses())
    x = symmetrize_coordinates(atoms.positions + [3.0, -2.0, 5.0], group)
    weights = z / z.sum()  # equal on equivalent atoms: a charge centre the group maps to itself

    def ion_dipole(c: np.ndarray) -> np.ndarray:
        return _model_dipole(z, c) + 1.0 * weights @ c

    full = cartesian_plan(x, STEP_ANG)
    ref = dmu_from_displacements(full, np.array([ion_dipole(c) for c in full.coordinates_ang]))
    plan = symmetric_cartesian_plan(
        x, STEP_ANG, group.operations, group.permutations, group.centre_ang, group.axes
    )
    rebuilt = rebuild_dmu_dx(plan, np.array([ion_dipole(c) for c in plan.coordinates_ang]), 1)
    assert np.abs(rebuilt - ref).max() < 1e-6 * np.abs(ref).max()


@pytest.mark.parametrize("name", ["C3H4_C3v", "NH3", "C6H6"])
def test_grid_preserving_subgroup_also_rebuilds_exactly(name):
    # DFT runs use only the signed axis permutations (engine.routes.grid_operations).
    _, _, error = _rebuild_error(name, grid_subgroup=True)
    assert error < 1e-6


def test_identity_only_gives_the_full_plan():
    atoms = molecule("H2O")
    x = atoms.positions
    plan = symmetric_cartesian_plan(x, STEP_ANG, np.eye(3)[None], np.arange(3)[None], np.zeros(3))
    assert plan.n_tasks == 18
