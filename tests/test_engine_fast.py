"""Field route, symmetry-reduced displacements and route choice against independent checks.

Outside references: central finite differences of the PySCF energy (the field gradient), the
full 6N Cartesian route (symmetry reduction and the field route), and the fact of the trade
that a non-totally-symmetric mode has ρ = 3/4 (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.engine.compute import run_engine
from vibrapol.engine.fieldgrad import field_energy, field_gradient, field_scf
from vibrapol.engine.fieldplan import field_plan
from vibrapol.engine.scf import MethodSpec, build_molecule
from vibrapol.ramantable import raman_table
from vibrapol.symmetry import find_point_group, symmetrize_coordinates

HF_STO = MethodSpec("hf", "sto-3g")
# Water off its symmetric geometry (Cs only) so that no gradient component vanishes.
WATER_CS = (
    np.array([8, 1, 1]),
    np.array([[0.02, -0.01, 0.12], [0.05, 0.77, -0.45], [-0.03, -0.74, -0.49]]),
)
# Ammonia with unequal bonds and angles: no symmetry at all (C1).
AMMONIA_C1 = (
    np.array([7, 1, 1, 1]),
    np.array([[0.0, 0.0, 0.12], [0.95, 0.05, -0.3], [-0.4, 0.9, -0.25], [-0.5, -0.8, -0.4]]),
)


def _compare(ref, other):
    """Max relative activity error and max |Δρ| over the modes with visible activity."""
    t_ref, t = raman_table(ref), raman_table(other)
    np.testing.assert_allclose(t.freqs_cm1, t_ref.freqs_cm1, atol=1e-6)
    seen = t_ref.activity > 1e-3 * t_ref.activity.max()
    act = np.abs(t.activity[seen] / t_ref.activity[seen] - 1.0).max()
    rho = np.abs(t.rho_linear[seen] - t_ref.rho_linear[seen]).max()
    return act, rho


@pytest.mark.parametrize(
    "spec",
    [HF_STO, pytest.param(MethodSpec("b3lyp", "sto-3g"), marks=pytest.mark.slow)],
    ids=["hf", "b3lyp"],
)
def test_field_gradient_equals_finite_difference_of_the_field_energy(spec):
    # dE(F)/dR_Aκ by central differences of E(F), h = 1e-4 bohr (error O(h²) ≈ 1e-9), at a
    # strong field so that the field terms are a large part of the gradient (0.01–0.02 au vs
    # gradients of 0.03–0.06 hartree/bohr).
    z, x = WATER_CS
    field = np.array([0.01, -0.02, 0.015])
    mol = build_molecule(z, x, spec)
    mf = field_scf(mol, spec, field)
    analytic = field_gradient(mf, field)
    h_bohr = 1e-4
    numeric = np.zeros_like(analytic)
    bohr = mol.atom_coords()
    for atom in range(3):
        for k in range(3):
            energies = []
            for sign in (1.0, -1.0):
                moved = bohr.copy()
                moved[atom, k] += sign * h_bohr
                m = mol.set_geom_(moved, unit="Bohr", inplace=False)
                energies.append(field_energy(m, spec, field, dm0=mf.make_rdm1()))
            numeric[atom, k] = (energies[0] - energies[1]) / (2 * h_bohr)
    # Without the two field terms the analytic gradient would be off by ≈ Z·F ≈ 0.02; measured
    # agreement 1.5e-9 (HF and, with the grid response, B3LYP).
    assert np.abs(analytic - numeric).max() < 2e-8
    assert np.abs(analytic).max() > 0.02


@pytest.fixture(scope="module")
def water_runs():
    water = molecule("H2O")
    full = run_engine(water, "hf", "3-21g", route="cartesian", symmetry=False, step_ang=0.002)
    geometry = (full.modes.atomic_numbers, full.modes.coordinates_ang)
    common = {"optimize": False, "step_ang": 0.002}
    return {
        "full": full,
        "reduced": run_engine(geometry, "hf", "3-21g", route="cartesian", **common),
        "field": run_engine(geometry, "hf", "3-21g", route="field", **common),
        "field_c1": run_engine(geometry, "hf", "3-21g", route="field", symmetry=False, **common),
        "auto": run_engine(geometry, "hf", "3-21g", route="auto", **common),
    }


def test_field_route_matches_cartesian_route_on_water(water_runs):
    # Issue target: activities within 1%, ρ within 0.01 of the Cartesian route.  Measured here
    # 4e-5 and 1e-5 (bench/field_strength.py), so these bounds leave room but still catch a
    # wrong sign or factor in any field term or in the stencil.
    for name in ("field", "field_c1"):
        act, rho = _compare(water_runs["full"].modes, water_runs[name].modes)
        assert act < 0.01 and rho < 0.01, name
    # Field gradients besides the reference's zero-field one: C2v 4 of the 12.
    assert water_runs["field"].tasks.n_tasks == 4
    assert water_runs["field_c1"].tasks.n_tasks == 12
    # The antisymmetric stretch (B2, highest mode) is depolarized: ρ = 3/4 (common practice).
    assert raman_table(water_runs["field"].modes).rho_linear[-1] == pytest.approx(0.75, abs=1e-6)


def test_symmetry_reduced_cartesian_route_rebuilds_the_full_tensor(water_runs):
    full = water_runs["full"].modes.dalpha_dx
    reduced = water_runs["reduced"]
    assert reduced.point_group == "C2v" and reduced.tasks.n_tasks == 9
    assert np.abs(reduced.modes.dalpha_dx - full).max() < 1e-6 * np.abs(full).max()


def test_auto_route_records_its_choice(water_runs):
    run = water_runs["auto"]
    assert run.route in ("cartesian", "normal-mode", "field", "analytic", "displacement")
    note = [n for n in run.modes.provenance.notes if n.startswith(f"route {run.route}")]
    assert note and "auto: least estimated serial time" in note[0]
    # Whatever route auto took, the Raman data agree with the full Cartesian route.
    act, rho = _compare(water_runs["full"].modes, run.modes)
    assert act < 0.01 and rho < 0.01


def test_tetrahedral_molecule_field_and_reduced_routes():
    # CH4 (Td), HF/STO-3G: the symmetry-reduced route needs 3 of 30 displaced geometries and
    # must rebuild the full tensor to 1e-6; the field route needs 1 gradient besides the zero
    # field (one face diagonal, whose orbit holds all 12) and must agree within 1% / 0.01.
    full = run_engine(molecule("CH4"), "hf", "sto-3g", symmetry=False, step_ang=0.002)
    geometry = (full.modes.atomic_numbers, full.modes.coordinates_ang)
    reduced = run_engine(geometry, "hf", "sto-3g", optimize=False, step_ang=0.002)
    field = run_engine(geometry, "hf", "sto-3g", optimize=False, route="field")
    assert reduced.tasks.n_tasks == 3 and field.tasks.n_tasks == 1
    ref = full.modes.dalpha_dx
    assert np.abs(reduced.modes.dalpha_dx - ref).max() < 1e-6 * np.abs(ref).max()
    act, rho = _compare(full.modes, field.modes)
    assert act < 0.01 and rho < 0.01
    # IR intensities: the reduced plan's rebuilt ∂μ/∂x gives the full plan's; the field route
    # agrees within its O(F²) error; Td: only the T2 modes absorb (common practice).
    ir = full.modes.ir_intensity_km_mol
    seen = ir > 1e-3 * ir.max()
    np.testing.assert_allclose(reduced.modes.ir_intensity_km_mol[seen], ir[seen], rtol=1e-5)
    np.testing.assert_allclose(field.modes.ir_intensity_km_mol[seen], ir[seen], rtol=1e-3)
    assert seen.sum() == 6 and np.all(ir[~seen] < 1e-6 * ir.max())
    # Td: the totally symmetric stretch has ρ = 0 exactly (common practice).
    t = raman_table(field.modes)
    assert t.rho_linear[t.activity.argmax()] == pytest.approx(0.0, abs=1e-6)


def test_symmetry_reduced_route_on_a_c3v_molecule():
    # NH3 (C3v), HF/STO-3G: a hydrogen's site group is one mirror, the case an earlier
    # condition test got wrong.  7 of 24 displaced geometries; the rebuilt tensor must equal
    # the full Cartesian route's (PySCF, all 24 geometries, same symmetrized geometry).  The
    # reduced plan displaces along directions off the axes, so the two central differences
    # are different estimates: measured 1.2e-6 (h = 0.002 Å) and 1.6e-6 (h = 0.001 Å) of the
    # largest element, SCF/CPHF noise rather than step error; 5e-6 leaves room for that.
    z, x = molecule("NH3").numbers, molecule("NH3").positions
    x = symmetrize_coordinates(x, find_point_group(z, x))
    full = run_engine((z, x), "hf", "sto-3g", optimize=False, symmetry=False, step_ang=0.002)
    reduced = run_engine((z, x), "hf", "sto-3g", optimize=False, step_ang=0.002)
    assert full.tasks.n_tasks == 24
    assert reduced.point_group == "C3v" and reduced.tasks.n_tasks == 7
    ref = full.modes.dalpha_dx
    assert np.abs(reduced.modes.dalpha_dx - ref).max() < 5e-6 * np.abs(ref).max()
    act, rho = _compare(full.modes, reduced.modes)
    assert act < 1e-4 and rho < 1e-5


def test_c1_molecule_falls_back_to_the_full_sets():
    z, x = AMMONIA_C1
    group = find_point_group(z, x)
    assert group.symbol == "C1"
    run = run_engine((z, x), "hf", "sto-3g", optimize=False, route="cartesian")
    assert run.point_group == "C1" and run.tasks.n_tasks == 24
    plan = field_plan(0.003, group.operations, group.permutations, group.axes)
    assert plan.n_tasks == 12


def test_field_count_does_not_grow_with_size():
    # Number of field gradients for molecules of 3 to 12 atoms (from the plans alone).
    counts = {}
    for name in ("H2O", "CH4", "C2H6", "C6H6"):
        atoms = molecule(name)
        g = find_point_group(atoms.numbers, atoms.positions)
        counts[name] = field_plan(0.003, g.operations, g.permutations, g.axes).n_tasks
    assert max(counts.values()) <= 12
    assert counts["C6H6"] == 2 and counts["CH4"] == 1


def test_dft_field_route_keeps_only_grid_preserving_operations():
    # Lebedev grids are invariant under the 48 operations of the cube (signed permutations of
    # the axes; V. I. Lebedev, USSR Comput. Math. Math. Phys. 16, 10 (1976)).  Benzene in ASE's
    # frame (plane xy, an atom on an axis) keeps the D2h subgroup, 8 of 24 operations; CCl4
    # with its S4 axes along x, y, z keeps all of Td.
    from vibrapol.engine.routes import grid_operations

    for name, kept in (("C6H6", 8), ("CCl4", 24)):
        atoms = molecule(name)
        g = find_point_group(atoms.numbers, atoms.positions)
        ops, perms = grid_operations(g.operations, g.permutations)
        assert len(ops) == kept and perms.shape == (kept, len(atoms))
        assert all(np.allclose(np.abs(m).sum(axis=1), 1.0) for m in ops)
