"""The engine's model choices reach every table's and figure's conditions (issue 17).

Contract checked: an open shell (its multiplicity and ⟨S²⟩), density fitting (its auxiliary
basis) and effective core potentials, as the engine writes them into the provenance, appear in
the level of theory that table headers, spectrum files and figure captions print; a source
without them keeps its plain ``method/basis``.  The notes come from the engine's own note
writers, so a change of their wording that the method line no longer finds fails here.
"""

from __future__ import annotations

import dataclasses
import re

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.engine.ecp import ecp_note
from vibrapol.engine.openshell import spin_note
from vibrapol.engine.scf import MethodSpec, build_molecule, integral_notes
from vibrapol.errors import AccuracyWarning, ChangedValuesWarning
from vibrapol.isotopes import isotope_shifts
from vibrapol.modeset import Provenance
from vibrapol.output.isotopes import shift_header
from vibrapol.output.tables import header_lines
from vibrapol.plotting.conditions import caption_text
from vibrapol.ramantable import raman_table
from vibrapol.sources.modes_json import read_modes_json
from vibrapol.spectrum.sticks import stick_spectrum

WATER_Z = np.array([8, 1, 1])
WATER_ANG = np.array([[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]])


def _engine_notes() -> tuple[str, ...]:
    spec = MethodSpec("hf", "sto-3g", 0, 1, density_fit=True, auxbasis="def2-universal-jkfit")
    fit = integral_notes(build_molecule(WATER_Z, WATER_ANG, spec), spec)
    spin = spin_note(0.7652, MethodSpec("hf", "sto-3g", 0, 2))
    ecp = ecp_note("def2-svp", np.array([1, 53]))
    assert ecp is not None
    return (spin, *fit, ecp)


def test_level_of_theory_names_open_shell_fit_and_ecp():
    p = Provenance(method="UHF", basis="def2-svp", notes=_engine_notes())
    assert p.level_of_theory() == (
        "UHF/def2-svp, multiplicity 2 (<S^2> 0.7652), density fitting (def2-universal-jkfit), "
        "ECP on I"
    )
    assert Provenance(method="HF", basis="def2-svp").level_of_theory() == "HF/def2-svp"


def test_default_auxiliary_basis_is_named_by_its_own_name():
    spec = MethodSpec("hf", "sto-3g", 0, 1, density_fit=True)
    notes = tuple(integral_notes(build_molecule(WATER_Z, WATER_ANG, spec), spec))
    assert "PySCF's default" in notes[0]  # the provenance says the fit basis was not chosen
    level = Provenance(method="HF", basis="sto-3g", notes=notes).level_of_theory()
    assert level == "HF/sto-3g, density fitting (def2-svp-jkfit)"


def test_table_header_spectrum_and_caption_carry_the_model():
    modes = read_modes_json(PROJECT_ROOT / "examples" / "water.modes.json")
    prov = dataclasses.replace(modes.provenance, notes=(*modes.provenance.notes, *_engine_notes()))
    modes = dataclasses.replace(modes, provenance=prov)
    want = "multiplicity 2 (<S^2> 0.7652), density fitting (def2-universal-jkfit), ECP on I"
    method_line = next(line for line in header_lines(raman_table(modes)) if "method:" in line)
    assert want in method_line
    conditions = stick_spectrum(modes, laser_nm=532.0).conditions
    assert conditions.method.endswith(want)
    assert want in caption_text(conditions)
    with pytest.warns(ChangedValuesWarning, match="masses changed"):
        heavy = modes.with_masses(np.array([15.995, 2.014, 2.014]))
    assert shift_header(isotope_shifts(modes, heavy))["method"].endswith(want)


def test_spectrum_warnings_reach_every_file_and_caption(tmp_path):
    # Contract: what `vibrapol spectrum` warns of on stderr (here: an imaginary mode of a
    # structure that is not a minimum, left out of the spectrum) is repeated in the header of
    # the spectrum CSV, the stick CSV, the JSON and in the figure's caption.
    import json

    from vibrapol.cli import main
    from vibrapol.sources.modes_json import write_modes_json

    modes = read_modes_json(PROJECT_ROOT / "examples" / "water.modes.json")
    freqs = np.array(modes.freqs_cm1)
    freqs[0] = -freqs[0]
    src = tmp_path / "saddle.modes.json"
    write_modes_json(dataclasses.replace(modes, freqs_cm1=freqs), src)
    files = {k: tmp_path / f"s.{k}" for k in ("csv", "sticks.csv", "json", "svg")}
    base = ["spectrum", str(src), "--sticks", str(files["sticks.csv"])]
    said = "1 imaginary mode(s) left out of the spectrum"
    with pytest.warns(AccuracyWarning, match=re.escape(said)):
        assert main([*base, "-o", str(files["csv"]), "--figure", str(files["svg"])]) == 0
    with pytest.warns(AccuracyWarning, match=re.escape(said)):
        assert main([*base, "-o", str(files["json"]), "--format", "json", "--force"]) == 0
    for key in ("csv", "sticks.csv"):
        assert any(
            line.startswith("# warning: ") and said in line
            for line in files[key].read_text().splitlines()
        ), key
    assert any(said in w for w in json.loads(files["json"].read_text())["header"]["warnings"])
    # The caption wraps its lines (where depends on the length of the file's path): join the
    # SVG's text elements before looking for the sentence.
    texts = re.findall(r"<text[^>]*>(.*?)</text>", files["svg"].read_text(), flags=re.S)
    assert said in " ".join(" ".join(texts).split())


def _with_notes(modes, *notes: str, source: str):
    prov = dataclasses.replace(modes.provenance, notes=(*modes.provenance.notes, *notes))
    return dataclasses.replace(modes, provenance=dataclasses.replace(prov, source_file=source))


def test_conformer_mixture_needs_one_engine_model():
    # Contract: a Boltzmann mixture weights conformers by their energies, which only compare
    # within one model: a solvated and a gas-phase run, or a fitted and an exact one, of the
    # same method/basis are refused; open shells differing only in <S^2> are accepted.
    from vibrapol.engine.solvent import solvent_model, solvent_note
    from vibrapol.errors import VibrapolError
    from vibrapol.spectrum.conformers import check_conformers

    modes = read_modes_json(PROJECT_ROOT / "examples" / "water.modes.json")
    gas = _with_notes(modes, source="gas")
    solvated = _with_notes(modes, solvent_note(solvent_model("water")), source="solvated")
    spin, fit, _ = _engine_notes()
    fitted = _with_notes(modes, fit, source="fitted")
    for other in (solvated, fitted):
        with pytest.raises(VibrapolError, match="different levels of theory"):
            check_conformers([gas, other])
    doublet = MethodSpec("hf", "sto-3g", 0, 2)
    a = _with_notes(modes, spin_note(0.7652, doublet), source="a")
    b = _with_notes(modes, spin_note(0.7701, doublet), source="b")
    check_conformers([a, b])
    with pytest.raises(VibrapolError, match="different levels of theory"):
        check_conformers([a, gas])


def test_symmetrized_geometry_without_optimisation_is_announced(tmp_path, capsys):
    # Contract ("never change a user's number silently"): with --no-optimize the user's
    # geometry is used as given, unless the symmetrization moved atoms; then stderr says so in
    # one warning line and the file's first note no longer claims "used as given".
    from vibrapol.cli import main

    xyz, out = tmp_path / "w.xyz", tmp_path / "w.modes.json"
    xyz.write_text(
        "3\nwater, 3 mÅ off C2v\nO 0 0 0.1173\nH 0 0.7602 -0.4692\nH 0 -0.7572 -0.4672\n"
    )
    args = ["compute", str(xyz), "--basis", "sto-3g", "--no-optimize", "--workers", "1"]
    assert main([*args, "--route", "field", "-o", str(out)]) == 0
    warned = [line for line in capsys.readouterr().err.splitlines() if "warning:" in line]
    assert len(warned) == 1
    assert "symmetrized to C2v: atoms moved by up to 2.9e-03 Å" in warned[0]
    notes = read_modes_json(out).provenance.notes
    assert notes[0] == "geometry symmetrized, not optimised"


def test_assignment_header_repeats_the_spectrum_warnings(tmp_path):
    # Contract: `vibrapol match` on a structure that is not a minimum warns that its imaginary
    # mode is left out, and the assignment file's header says so too.
    from bad_input_cases import good_pair
    from compare_helpers import CHCL3_MODES
    from vibrapol.cli import main
    from vibrapol.sources.modes_json import write_modes_json

    modes = read_modes_json(CHCL3_MODES)
    freqs = np.array(modes.freqs_cm1)
    freqs[2] = -freqs[2]  # a non-degenerate mode (403 cm⁻¹), not one of an E pair
    src = tmp_path / "saddle.modes.json"
    write_modes_json(dataclasses.replace(modes, freqs_cm1=freqs), src)
    (tmp_path / "in").mkdir()
    out = tmp_path / "assigned.csv"
    said = "1 imaginary mode(s) left out of the spectrum"
    with pytest.warns(AccuracyWarning, match=re.escape(said)):
        assert main(["match", str(src), *good_pair(tmp_path), "-o", str(out)]) == 0
    assert any(
        line.startswith("# warning: ") and said in line for line in out.read_text().splitlines()
    )
