"""No stale derived state in ModeSet and RamanTable (contract tests).

Contract checked throughout: changing an input of a ModeSet with ``dataclasses.replace`` gives
the same numbers as building the ModeSet from scratch with that input; what cannot be derived
again is refused with a message naming the way that works.  The isotope substitution is
checked against ASE's ``VibrationsData.with_new_masses`` (reference library).
"""

from __future__ import annotations

import dataclasses
import json
import warnings

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.errors import ChangedValuesWarning, InputFormatError, ShapeError, VibrapolError
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance, default_masses
from vibrapol.ramantable import raman_table
from vibrapol.sources import read_modes
from vibrapol.sources.modes_json import modeset_from_dict, modeset_to_dict
from vibrapol.vibrations import hessian_from_modes, project_dalpha

EXAMPLE = PROJECT_ROOT / "examples" / "water.modes.json"
RNG = np.random.default_rng(7)
Q, _ = np.linalg.qr(RNG.normal(size=(9, 9)))
_D = RNG.normal(size=(9, 3, 3))
DX = 0.5 * (_D + _D.transpose(0, 2, 1))


def inputs(kind: str) -> dict:
    """Constructor arguments of a small water-like ModeSet of each kind of source."""
    kw: dict = dict(
        atomic_numbers=[8, 1, 1],
        coordinates_ang=[[0, 0, 0.117], [0, 0.757, -0.469], [0, -0.757, -0.469]],
        freqs_cm1=[1600.0, 3700.0, 3800.0],
        modes=Q[:3],
        masses_da=[15.9949, 1.00783, 1.00783],
        polarizability_ang3=np.diag([1.4, 1.5, 1.3]),
        energy_hartree=-76.0,
        provenance=Provenance(program="test", masses="given in the test"),
        ir_intensity_km_mol=[80.0, 20.0, 60.0],
        program_irreps=("A1", "A1", "B2"),
    )
    if kind == "dx":
        kw["dalpha_dx"] = DX
    elif kind == "dq":  # the engine's normal-mode route, some readers
        kw["dalpha_dq"] = project_dalpha(DX, Q[:3], np.array(kw["masses_da"]))
    elif kind == "invariants":
        kw["a2"], kw["gamma2"] = [0.1, 0.2, 0.0], [0.3, 0.4, 0.5]
    else:
        kw["activity"] = [5.0, 70.0, 40.0]
    return kw


NEW_VALUES = {
    "atomic_numbers": [16, 1, 1],
    "coordinates_ang": [[0, 0, 0.1], [0, 0.8, -0.5], [0, -0.8, -0.5]],
    "freqs_cm1": [1500.0, 3600.0, 3900.0],
    "modes": Q[3:6],
    "masses_da": [15.9949, 2.0141, 1.00783],
    "dalpha_dx": 2.0 * DX,
    "polarizability_ang3": np.diag([1.0, 2.0, 3.0]),
    "energy_hartree": -75.5,
    "provenance": Provenance(program="other", masses="given in the test"),
    "ir_intensity_km_mol": [1.0, 2.0, 3.0],
    "program_irreps": ("B1", "A2", "A1"),
    "dalpha_dq": project_dalpha(2.0 * DX, Q[:3], np.array([16.0, 1.0, 1.0])),
    "a2": [0.5, 0.6, 0.7],
    "gamma2": [0.1, 0.1, 0.1],
    "activity": [1.0, 2.0, 3.0],
}

CASES = [("dx", name) for name in list(NEW_VALUES)[:9] + ["ir_intensity_km_mol", "program_irreps"]]
CASES += [("dq", name) for name in ("masses_da", "modes", "dalpha_dq", "freqs_cm1")]
CASES += [("invariants", "a2"), ("invariants", "gamma2"), ("activity", "activity")]


def assert_same_modeset(got: ModeSet, want: ModeSet) -> None:
    for f in dataclasses.fields(ModeSet):
        a, b = getattr(got, f.name), getattr(want, f.name)
        if isinstance(b, np.ndarray):
            np.testing.assert_array_equal(a, b, err_msg=f.name)
        else:
            assert a == b, f.name


@pytest.mark.parametrize(("kind", "name"), CASES)
def test_replacing_an_input_equals_building_from_scratch(kind, name):
    kw = inputs(kind)
    base = ModeSet(**kw)
    replaced = dataclasses.replace(base, **{name: NEW_VALUES[name]})
    assert_same_modeset(replaced, ModeSet(**{**kw, name: NEW_VALUES[name]}))


def test_doubling_dalpha_dx_doubles_dalpha_dq_and_quadruples_activities():
    # ∂α/∂Q is linear in ∂α/∂x, activities are quadratic (S = 45a² + 7γ²).
    modes = read_modes(EXAMPLE)
    doubled = dataclasses.replace(modes, dalpha_dx=2 * modes.dalpha_dx)
    np.testing.assert_allclose(doubled.dalpha_dq, 2 * modes.dalpha_dq, rtol=1e-12)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s0, s1 = raman_table(modes).activity, raman_table(doubled).activity
    np.testing.assert_allclose(s1, 4 * s0, rtol=1e-12)


def test_subset_of_a_dx_source_equals_building_it_from_scratch():
    kw = inputs("dx")
    part = ModeSet(**kw).subset([2, 0])
    scratch = ModeSet(
        **{
            **kw,
            "freqs_cm1": [3800.0, 1600.0],
            "modes": Q[[2, 0]],
            "ir_intensity_km_mol": [60.0, 80.0],
            "program_irreps": ("B2", "A1"),
        }
    )
    assert_same_modeset(part, scratch)


@pytest.mark.parametrize("how", ["pickle", "deepcopy"])
def test_copies_derive_again_too(how):
    # Contract: engine workers hand ModeSets back pickled; a copy behaves as the original.
    import copy
    import pickle

    base = ModeSet(**inputs("dx"))
    twin = pickle.loads(pickle.dumps(base)) if how == "pickle" else copy.deepcopy(base)
    replaced = dataclasses.replace(twin, dalpha_dx=NEW_VALUES["dalpha_dx"])
    assert_same_modeset(replaced, ModeSet(**{**inputs("dx"), "dalpha_dx": NEW_VALUES["dalpha_dx"]}))


def test_dalpha_dq_disagreeing_with_dalpha_dx_is_refused():
    base = ModeSet(**inputs("dx"))
    with pytest.raises(ShapeError, match="does not follow from dalpha_dx.*dalpha_dq=None"):
        dataclasses.replace(base, dalpha_dq=2 * base.dalpha_dq)


def test_dropping_dalpha_dx_keeps_tensors_only_for_the_same_modes_and_masses():
    base = ModeSet(**inputs("dx"))
    kept = dataclasses.replace(base, dalpha_dx=None)
    np.testing.assert_array_equal(kept.dalpha_dq, base.dalpha_dq)
    with pytest.raises(ShapeError, match="no longer given: pass dalpha_dq=None"):
        dataclasses.replace(base, dalpha_dx=None, masses_da=NEW_VALUES["masses_da"])


def test_defaulted_masses_cannot_be_replaced_under_the_default_note():
    kw = {**inputs("dx"), "masses_da": None, "provenance": Provenance()}
    base = ModeSet(**kw)
    assert base.provenance.masses == DEFAULT_MASSES_NOTE
    same = dataclasses.replace(base, dalpha_dx=DX)  # the default masses passed back: fine
    np.testing.assert_array_equal(same.masses_da, default_masses(np.array([8, 1, 1])))
    with pytest.raises(ShapeError, match="ModeSet.with_masses"):
        dataclasses.replace(base, masses_da=NEW_VALUES["masses_da"])


def test_files_written_before_read_the_same():
    # Contract of docs/modes-json.md: the ∂α/∂Q stored in a file is the one read back.
    stored = json.loads(EXAMPLE.read_text())
    modes = read_modes(EXAMPLE)
    np.testing.assert_allclose(
        modes.dalpha_dq, stored["dalpha_dq_ang2_per_sqrt_da"], rtol=1e-12, atol=1e-15
    )
    data = modeset_to_dict(modes)
    data["dalpha_dq_ang2_per_sqrt_da"][0][0][0] += 0.5
    with pytest.raises(InputFormatError, match="does not follow from dalpha_dx"):
        modeset_from_dict(data)


def test_with_masses_matches_ase_with_new_masses():
    from ase import Atoms
    from ase.units import Bohr, Hartree
    from ase.vibrations import VibrationsData

    modes = read_modes(EXAMPLE)
    d2o = [15.99491461957, 2.01410177812, 2.01410177812]  # D: 2.01410177812 Da (AME2016)
    hessian = hessian_from_modes(modes.freqs_cm1, modes.modes, modes.masses_da)
    atoms = Atoms(numbers=modes.atomic_numbers, positions=modes.coordinates_ang)
    atoms.set_masses(modes.masses_da)
    ase_vib = VibrationsData(atoms, hessian.reshape(3, 3, 3, 3) * Hartree / Bohr**2)
    ase_d2o = np.sort(ase_vib.with_new_masses(d2o).get_frequencies().real)[-3:]
    with pytest.warns(ChangedValuesWarning, match="frequencies and modes from the Hessian"):
        heavy = modes.with_masses(d2o)
    np.testing.assert_allclose(heavy.freqs_cm1, ase_d2o, rtol=1e-6)
    np.testing.assert_allclose(
        heavy.dalpha_dq, project_dalpha(modes.dalpha_dx, heavy.modes, np.array(d2o)), rtol=1e-12
    )
    assert "H2 1.00783 → 2.0141" in heavy.provenance.masses
    assert "O1" not in heavy.provenance.masses
    assert "with_masses" in heavy.provenance.notes[-1]


def test_with_the_same_masses_gives_the_same_numbers_back():
    modes = read_modes(EXAMPLE)
    with pytest.warns(ChangedValuesWarning):
        again = modes.with_masses(modes.masses_da)
    np.testing.assert_allclose(again.freqs_cm1, modes.freqs_cm1, rtol=1e-10)
    for a, b in zip(again.raman_invariants(), modes.raman_invariants(), strict=True):
        np.testing.assert_allclose(a, b, rtol=1e-8, atol=1e-12)


@pytest.mark.parametrize("kind", ["dq", "invariants", "activity"])
def test_with_masses_refuses_numbers_of_the_old_modes_only(kind):
    with pytest.raises(VibrapolError, match="need the Cartesian derivatives"):
        ModeSet(**inputs(kind)).with_masses([16.0, 2.0, 2.0])


def test_with_masses_drops_what_belongs_to_the_old_modes_and_says_so():
    base = ModeSet(**inputs("dx"))
    from vibrapol.vibrations import harmonic_analysis

    # A complete set of real modes for this geometry: a made-up positive-definite Hessian.
    h = RNG.normal(size=(9, 9))
    harmonic = harmonic_analysis(h @ h.T * 0.1, base.masses_da, base.coordinates_ang)
    full = dataclasses.replace(base, freqs_cm1=harmonic.freqs_cm1, modes=harmonic.modes)
    with pytest.warns(ChangedValuesWarning, match="IR intensities and the program's species"):
        heavy = full.with_masses([15.9949, 2.0141, 2.0141])
    assert heavy.ir_intensity_km_mol is None and heavy.program_irreps is None


def test_with_masses_needs_every_vibration():
    part = read_modes(EXAMPLE).subset([0, 1])
    with pytest.raises(VibrapolError, match="need all 3 vibrations"):
        part.with_masses([16.0, 2.0, 2.0])


# -- RamanTable --------------------------------------------------------------------------------
def water_table():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return raman_table(read_modes(EXAMPLE))


def test_table_refuses_a_column_of_the_wrong_length():
    table = water_table()
    with pytest.raises(ShapeError, match=r"RamanTable.activity should have shape \(3,\)"):
        dataclasses.replace(table, activity=np.array([1.0]))
    with pytest.raises(ShapeError, match="RamanTable.irreps should hold 3 labels"):
        dataclasses.replace(table, irreps=("A1",))
    with pytest.raises(ShapeError, match="RamanTable.polarized should hold booleans"):
        dataclasses.replace(table, polarized=np.array([0.5, 0.5, 0.5]))


def test_table_arrays_are_read_only_private_copies():
    table = water_table()
    with pytest.raises(ValueError, match="read-only"):
        table.activity[0] = 0.0
    mine = np.array([1.0, 2.0, 3.0])
    other = dataclasses.replace(table, a2=mine)
    mine[0] = 99.0
    assert other.a2[0] == 1.0
