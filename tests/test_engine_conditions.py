"""The engine's model choices reach every table's and figure's conditions (issue 17).

Contract checked: an open shell (its multiplicity and ⟨S²⟩), density fitting (its auxiliary
basis) and effective core potentials, as the engine writes them into the provenance, appear in
the level of theory that table headers, spectrum files and figure captions print; a source
without them keeps its plain ``method/basis``.  The notes come from the engine's own note
writers, so a change of their wording that the method line no longer finds fails here.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from _paths import PROJECT_ROOT
from vibrapol.engine.ecp import ecp_note
from vibrapol.engine.openshell import spin_note
from vibrapol.engine.scf import MethodSpec, build_molecule, integral_notes
from vibrapol.modeset import Provenance
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
