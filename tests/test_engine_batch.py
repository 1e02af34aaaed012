"""Many structures in one engine run: same numbers as separate runs, failures kept apart."""

from __future__ import annotations

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.cli import main
from vibrapol.engine.compute import BatchItem, engine_settings, run_batch, run_engine
from vibrapol.engine.evaluate import PolarizabilityJob
from vibrapol.engine.executors import open_backend
from vibrapol.engine.runner import run_tasks
from vibrapol.engine.scf import MethodSpec
from vibrapol.sources.modes_json import read_modes_json

WATER_XYZ = "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
# Three hydrogens: 3 electrons, cannot be closed-shell, so the engine refuses it.
H3_XYZ = "3\nodd electron count (own test input)\nH 0 0 0\nH 0 0 0.8\nH 0 0.8 0\n"


def test_two_structures_in_one_run_equal_two_separate_runs():
    # The tasks of both molecules go through one backend; each result must be what a run of
    # that molecule alone gives (same tasks, same inputs: equal to rounding).
    settings = engine_settings("hf", "sto-3g", optimize=False, route="cartesian")
    water, methane = molecule("H2O"), molecule("CH4")
    outcomes = run_batch([BatchItem(water, "water"), BatchItem(methane, "methane")], settings)
    for outcome, atoms in zip(outcomes, (water, methane), strict=True):
        alone = run_engine(atoms, "hf", "sto-3g", optimize=False, route="cartesian").modes
        together = outcome.run.modes
        assert outcome.error is None
        np.testing.assert_allclose(together.freqs_cm1, alone.freqs_cm1, atol=1e-8)
        ref = alone.dalpha_dx
        assert np.abs(together.dalpha_dx - ref).max() <= 1e-10 * np.abs(ref).max()
    assert [o.run.tasks.n_tasks for o in outcomes] == [9, 3]  # C2v and Td reductions


def test_bad_structure_is_reported_and_the_other_finishes(tmp_path, capsys):
    good, bad = tmp_path / "water.xyz", tmp_path / "h3.xyz"
    good.write_text(WATER_XYZ)
    bad.write_text(H3_XYZ)
    unreadable = tmp_path / "broken.xyz"
    unreadable.write_text("not a structure\n")
    out = tmp_path / "out"
    out.mkdir()
    args = ["compute", str(good), str(bad), str(unreadable), "--basis", "sto-3g"]
    status = main([*args, "--no-optimize", "--workers", "1", "--output-dir", str(out)])
    err = capsys.readouterr().err
    assert status == 2
    assert sorted(p.name for p in out.iterdir() if p.suffix == ".json") == ["water.modes.json"]
    assert read_modes_json(out / "water.modes.json").n_modes == 3
    errors = [line for line in err.splitlines() if "error:" in line]
    assert len(errors) == 2
    assert any("h3.xyz" in e and "cannot be closed-shell" in e for e in errors)
    assert any("broken.xyz" in e and "cannot read a structure" in e for e in errors)
    assert "1 of 3 structures done, 2 failed" in err


def test_directory_of_structures(tmp_path, capsys):
    (tmp_path / "a.xyz").write_text(WATER_XYZ)
    (tmp_path / "notes.txt").write_text("ignored: not a structure file ending")
    status = main(["compute", str(tmp_path), "--basis", "sto-3g", "--no-optimize"])
    assert status == 0, capsys.readouterr().err
    modes = read_modes_json(tmp_path / "a.modes.json")
    # Water: the highest mode (B2 antisymmetric stretch) has ρ = 3/4 (common practice).
    from vibrapol.ramantable import raman_table

    assert raman_table(modes).rho_linear[-1] == pytest.approx(0.75, abs=1e-4)


def test_failing_task_is_reported_without_stopping_the_others():
    water = molecule("H2O")
    good = MethodSpec("hf", "sto-3g")
    jobs = [
        PolarizabilityJob(water.numbers, water.positions, good),
        PolarizabilityJob(water.numbers, water.positions, MethodSpec("hf", "nosuchbasis")),
        PolarizabilityJob(water.numbers, water.positions + 0.01, good),
    ]
    seen = {}
    with open_backend(1) as backend:
        results, stats = run_tasks(
            jobs, ["a", "b", "c"], ["a", "b", "c"], backend, on_error=seen.__setitem__
        )
    assert list(seen) == [1] and "unknown basis" in str(seen[1])
    assert results[1] is None and results[0].shape == (3, 3)
    # α is invariant under translation: tasks 0 and 2 agree (SCF convergence ≈ 1e-8 Å³).
    np.testing.assert_allclose(results[2], results[0], atol=1e-6)
    assert stats.n_tasks == 3
