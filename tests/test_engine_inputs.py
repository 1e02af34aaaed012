"""Checks ``vibrapol compute`` makes before any SCF: the cost estimate and --yes, metals.

Contracts checked: a run estimated above a day is refused without --yes (the bad-input corpus
has that case) and starts with it, its estimate printed first; a transition-metal molecule run
as a closed-shell singlet gets a warning; the estimate agrees within a factor of 2 with the
measured costs it was calibrated on (our own measurements, PySCF 2.14, 2 cores, kept in the
shared engine notes) — it is an order of magnitude, not a prediction.
"""

from __future__ import annotations

import numpy as np
import pytest

from bad_input_cases import water_cluster
from vibrapol.cli import main
from vibrapol.engine.estimate import CONFIRM_ABOVE_S, estimate_cost
from vibrapol.engine.scf import MethodSpec, build_molecule, transition_metal_note
from vibrapol.errors import AccuracyWarning, VibrapolError

STOPPED = "stopped here by the test"


@pytest.fixture
def stop_at_the_engine(monkeypatch):
    """The first job sent to the backend raises instead: these tests end before any SCF."""

    def stop(*args, **kwargs):
        raise VibrapolError(STOPPED)

    monkeypatch.setattr("vibrapol.engine.runner.TaskRunner.submit", stop)


def test_yes_lets_a_large_run_start_after_its_estimate(tmp_path, capsys, stop_at_the_engine):
    structure = tmp_path / "cluster.xyz"
    structure.write_text(water_cluster(167))  # 501 atoms
    argv = ["compute", str(structure), "--basis", "sto-3g", "-o", str(tmp_path / "c.json")]
    assert main(argv) == 2
    assert "pass --yes to run it anyway" in capsys.readouterr().err
    assert main([*argv, "--yes"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert "estimated cost ≈" in err[0] and "501 atoms, 1169 basis functions" in err[0]
    assert STOPPED in err[-1]


@pytest.mark.parametrize(
    ("atoms", "basis", "method", "measured_s"),
    [
        # CCl4 and benzene at HF/6-31G*, B3LYP benzene: total of the normal-mode route.
        ("C 0 0 0; Cl 1.02 1.02 1.02; Cl -1.02 -1.02 1.02; Cl -1.02 1.02 -1.02; "
         "Cl 1.02 -1.02 -1.02", "6-31g*", "hf", 164.0),
        ("C 1.39 0 0; C 0.695 1.204 0; C -0.695 1.204 0; C -1.39 0 0; C -0.695 -1.204 0; "
         "C 0.695 -1.204 0; H 2.47 0 0; H 1.235 2.139 0; H -1.235 2.139 0; H -2.47 0 0; "
         "H -1.235 -2.139 0; H 1.235 -2.139 0", "6-31g*", "hf", 305.0),
        ("C 1.39 0 0; C 0.695 1.204 0; C -0.695 1.204 0; C -1.39 0 0; C -0.695 -1.204 0; "
         "C 0.695 -1.204 0; H 2.47 0 0; H 1.235 2.139 0; H -1.235 2.139 0; H -2.47 0 0; "
         "H -1.235 -2.139 0; H 1.235 -2.139 0", "6-31g*", "b3lyp", 1771.0),
    ],
)  # fmt: skip
def test_the_estimate_is_within_a_factor_2_of_measured_runs(atoms, basis, method, measured_s):
    pyscf = pytest.importorskip("pyscf")
    mol = pyscf.gto.M(atom=atoms, basis=basis, verbose=0)
    cost = estimate_cost(mol.natm, mol.nao, MethodSpec(method, basis))
    assert measured_s / 2 <= cost.seconds <= measured_s * 2
    assert cost.seconds < CONFIRM_ABOVE_S


def test_a_transition_metal_singlet_is_warned_about(tmp_path, capsys, stop_at_the_engine):
    structure = tmp_path / "feh2.xyz"
    structure.write_text("3\nFeH2 (invented test structure)\nFe 0 0 0\nH 0 0 1.6\nH 0 0 -1.6\n")
    argv = ["compute", str(structure), "--basis", "sto-3g", "-o", str(tmp_path / "f.json")]
    with pytest.warns(AccuracyWarning, match=r"transition metal \(Fe\).*closed-shell singlet"):
        assert main(argv) == 2
    assert STOPPED in capsys.readouterr().err


def test_which_elements_count_as_transition_metals():
    spec = MethodSpec("hf", "sto-3g")
    assert transition_metal_note(np.array([30, 1, 1]), spec) is None  # Zn: full d shell
    assert transition_metal_note(np.array([6, 1, 1, 1, 1]), spec) is None
    assert "Ti, Fe" in transition_metal_note(np.array([26, 22, 17, 17]), spec)


def test_the_basis_is_checked_quietly_element_by_element(capfd):
    z = np.array([92, 92])
    with pytest.raises(VibrapolError, match=r"not defined for these elements\): none for U"):
        build_molecule(z, np.array([[0, 0, 0], [0, 0, 2.5]]), MethodSpec("hf", "6-31g*"))
    captured = capfd.readouterr()
    assert captured.out == "" and captured.err == ""  # PySCF's own messages are not shown


def test_engine_settings_hold_the_defaults_and_checks_of_compute_modes():
    # Contract: the settings object is the one source of the engine's keyword defaults and
    # checks; compute_modes documents the same defaults.
    import inspect

    from vibrapol.engine.compute import DEFAULT_STEP_ANG, EngineSettings, compute_modes
    from vibrapol.errors import ShapeError

    s = EngineSettings()
    assert (s.method, s.basis, s.route, s.step_ang) == (
        "hf",
        "6-31g*",
        "cartesian",
        DEFAULT_STEP_ANG,
    )
    assert s.spec.label() == "HF/6-31g*"
    assert EngineSettings("B3LYP", "STO-3G", route="normal").route == "normal-mode"
    assert EngineSettings("B3LYP", "STO-3G").spec.method == "b3lyp"
    doc = inspect.getdoc(compute_modes) or ""
    for name in ("charge", "optimize", "step_ang", "route", "field_au", "symmetry", "cartesian_d"):
        assert name in doc
    with pytest.raises(ShapeError, match="field strength"):
        EngineSettings(field_au=0.1)
    with pytest.raises(ShapeError, match="displacement step"):
        EngineSettings(step_ang=0.0)
