"""The engine's optimisers: geomeTRIC (internal coordinates, default) and ASE's Cartesian BFGS.

Outside references: ASE's BFGS (a reference library) for the minimum, and PySCF's own SCF
gradient, recomputed here independently, for the final force.  Contract tests say which
contract they check.
"""

from __future__ import annotations

import tempfile

import numpy as np
import pytest

from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.optimize import (
    FMAX_HARTREE_BOHR,
    normalize_optimizer,
    optimize_geometry,
    optimizer_key,
)
from vibrapol.engine.scf import (
    EngineConvergenceError,
    EngineInputError,
    MethodSpec,
    build_molecule,
    run_scf,
)

HF_STO = MethodSpec("hf", "sto-3g")
# Water far from its minimum: bonds 1.01 and 0.89 Å, off-plane, no symmetry.
WATER = (
    np.array([8, 1, 1]),
    np.array([[0.02, -0.01, 0.10], [0.05, 0.82, -0.50], [-0.03, -0.72, -0.45]]),
)


def _methanol_noisy() -> tuple[np.ndarray, np.ndarray]:
    """Methanol (ASE's G2 geometry) with every atom moved 0.05 Å in a seeded random direction."""
    from ase.collections import g2

    atoms = g2["CH3OH"]
    v = np.random.default_rng(16).normal(size=(len(atoms), 3))
    v *= 0.05 / np.linalg.norm(v, axis=1)[:, None]
    return atoms.numbers.copy(), atoms.positions + v


def _aligned_max_deviation(a: np.ndarray, b: np.ndarray) -> float:
    """Largest atomic distance (Å) between a and b after removing translation and rotation."""
    a0, b0 = a - a.mean(axis=0), b - b.mean(axis=0)
    u, _, vt = np.linalg.svd(b0.T @ a0)
    r = u @ np.diag([1.0, 1.0, np.sign(np.linalg.det(u @ vt))]) @ vt
    return float(np.max(np.linalg.norm(b0 @ r - a0, axis=1)))


def _tight_max_force(z: np.ndarray, xyz: np.ndarray, spec: MethodSpec) -> float:
    """Largest atomic force of a fresh tight SCF (PySCF's analytic gradient)."""
    mf = run_scf(build_molecule(z, xyz, spec), spec)
    g = mf.nuc_grad_method()
    g.verbose = 0
    return float(np.max(np.linalg.norm(g.kernel(), axis=1)))


@pytest.fixture(scope="module")
def water_minima():
    z, x = WATER
    return {
        name: optimize_geometry(z, x, HF_STO, optimizer=name)
        for name in ("internal", "cartesian-bfgs")
    }


def test_internal_optimiser_reaches_the_bfgs_minimum_of_water(water_minima):
    # Reference: ASE's BFGS on the same PySCF surface.  Both stop at a largest force ≤ 1e-5
    # hartree/bohr; with HF/STO-3G water's stiffest force constants (~0.5 hartree/bohr²) the
    # two stopping points differ by ≲ 1e-4 bohr and in energy by ≲ 1e-10 Eh, so 1e-8 Eh and
    # 1e-3 Å are bounds with a wide margin that still catch a wrong minimum or unit.
    internal, bfgs = water_minima["internal"], water_minima["cartesian-bfgs"]
    assert abs(internal.energy_hartree - bfgs.energy_hartree) < 1e-8
    assert _aligned_max_deviation(bfgs.coordinates_ang, internal.coordinates_ang) < 1e-3
    assert (internal.optimizer, bfgs.optimizer) == ("internal", "cartesian-bfgs")
    # The early steps ran with loose SCF, the final gradient with tight SCF.
    assert internal.n_loose > 0 and bfgs.n_loose == 0


def test_final_force_is_below_the_threshold_on_an_independent_tight_gradient(water_minima):
    # Contract: no geometry leaves the optimiser unconverged; the force is recomputed here with a
    # fresh tight SCF and PySCF's gradient, not taken from the optimiser.
    z = WATER[0]
    for result in water_minima.values():
        force = _tight_max_force(z, result.coordinates_ang, HF_STO)
        assert force <= FMAX_HARTREE_BOHR
        assert force == pytest.approx(result.max_force_hartree_bohr, abs=1e-7)


def test_internal_optimiser_needs_fewer_gradients_from_a_noisy_start():
    # The reason for the internal optimiser (issue 16: trans-butane 73 → 14 gradients at
    # HF/3-21G).  Methanol HF/STO-3G from 0.05 Å noise: measured 11 against 23 gradients.
    z, x = _methanol_noisy()
    internal = optimize_geometry(z, x, HF_STO, optimizer="internal")
    bfgs = optimize_geometry(z, x, HF_STO, optimizer="cartesian-bfgs")
    assert internal.n_gradients < bfgs.n_gradients
    assert abs(internal.energy_hartree - bfgs.energy_hartree) < 1e-8


@pytest.mark.parametrize("optimizer", ["internal", "cartesian-bfgs"])
def test_an_optimisation_out_of_steps_is_a_clear_error(optimizer):
    # Contract: an unconverged optimisation raises with one line naming the step limit.
    z, x = WATER
    with pytest.raises(EngineConvergenceError, match=r"not converged after 2 steps") as info:
        optimize_geometry(z, x, HF_STO, optimizer=optimizer, max_steps=2)
    assert "\n" not in str(info.value) and "--no-optimize" in str(info.value)


def test_unknown_optimizer_is_refused():
    assert normalize_optimizer(" Internal ") == "internal"
    with pytest.raises(EngineInputError, match="unknown optimizer 'lbfgs'"):
        normalize_optimizer("lbfgs")


def test_optimiser_writes_and_prints_nothing(tmp_path, monkeypatch, capfd):
    # Contract: geomeTRIC's log, trajectory and scratch directory stay out of the user's
    # directory and the temporary directory is removed; nothing reaches stdout or stderr.
    work, scratch = tmp_path / "work", tmp_path / "tmp"
    work.mkdir()
    scratch.mkdir()
    monkeypatch.chdir(work)
    # A temporary directory of this test's own, so that optimisations of tests running in
    # parallel (pytest -n) do not show in it.
    monkeypatch.setattr(tempfile, "tempdir", str(scratch))
    before = {p.name for p in scratch.glob("vibrapol-opt-*")}
    z, x = WATER
    optimize_geometry(z, x, HF_STO, optimizer="internal")
    with pytest.raises(EngineConvergenceError):
        optimize_geometry(z, x, HF_STO, optimizer="internal", max_steps=1)
    assert list(work.iterdir()) == []
    assert {p.name for p in scratch.glob("vibrapol-opt-*")} == before
    out, err = capfd.readouterr()
    assert out == "" and err == ""


def test_checkpoint_key_and_stored_optimisation_differ_by_optimiser(tmp_path):
    # Contract: results of different optimisers never mix in a checkpoint; the BFGS key is the
    # one of the runs made before the optimiser could be chosen (their checkpoints stay valid).
    from vibrapol.engine import stages

    z, x = WATER
    keys = {
        name: task_key("optimize", z, x, HF_STO, **optimizer_key(name))
        for name in ("internal", "cartesian-bfgs")
    }
    assert keys["internal"] != keys["cartesian-bfgs"]
    assert keys["cartesian-bfgs"] == task_key("optimize", z, x, HF_STO)
    jobs = {name: stages.OptimizeJob(z, x, HF_STO, optimizer=name) for name in keys}
    assert {name: job.key() for name, job in jobs.items()} == keys
    store = CheckpointStore(tmp_path / "run.sqlite")
    try:
        for job in jobs.values():
            store.put(job.key(), job.kind, job.label, job.pack(job.run()), 0.0)
        other = jobs["internal"].unpack(store.get(keys["internal"]))
        bfgs = jobs["cartesian-bfgs"].unpack(store.get(keys["cartesian-bfgs"]))
        assert other is not None and bfgs is not None
        assert other.optimizer == "internal" and bfgs.optimizer == "cartesian-bfgs"
        again = jobs["internal"].run()
        assert again.n_loose == other.n_loose
        np.testing.assert_array_equal(again.coordinates_ang, other.coordinates_ang)
    finally:
        store.close()
    assert "geomeTRIC" in again.describe() and f"{again.n_gradients} gradients" in again.describe()


@pytest.mark.parametrize(
    ("optimizer", "named"), [("cartesian-bfgs", "ASE BFGS"), (None, "geomeTRIC")]
)
def test_command_line_optimizer_reaches_the_provenance(tmp_path, capsys, optimizer, named):
    # Contract: --optimizer selects the optimiser (default internal), and the written file's
    # provenance and the command's report name it with its steps, gradients and final force.
    from vibrapol.cli import main
    from vibrapol.sources.modes_json import read_modes_json

    xyz = tmp_path / "water.xyz"
    xyz.write_text("3\nwater (own test input)\nO 0 0 0.10\nH 0 0.80 -0.50\nH 0 -0.74 -0.46\n")
    extra = [] if optimizer is None else ["--optimizer", optimizer]
    args = ["compute", str(xyz), "--basis", "sto-3g", "--route", "field", "--workers", "1"]
    assert main([*args, *extra]) == 0
    note = read_modes_json(tmp_path / "water.modes.json").provenance.notes[0]
    assert note.startswith(f"geometry optimised with {named}")
    assert "gradients" in note and "final max force" in note
    err = capsys.readouterr().err
    assert f"geometry optimised ({optimizer or 'internal'}) in" in err
