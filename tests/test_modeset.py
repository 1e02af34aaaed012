"""ModeSet validation and the *.modes.json round trip."""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest

from vibrapol.errors import InputFormatError, ShapeError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.sources import read_modes, sniff
from vibrapol.sources.modes_json import modeset_to_dict, write_modes_json

EXAMPLE = (
    __import__("pathlib").Path(__file__).resolve().parents[1] / "examples" / "water.modes.json"
)


def small_modeset(**over):
    rng = np.random.default_rng(0)
    q, _ = np.linalg.qr(rng.normal(size=(9, 9)))
    d = rng.normal(size=(9, 3, 3))
    kw = dict(
        atomic_numbers=[8, 1, 1],
        coordinates_ang=[[0, 0, 0.117], [0, 0.757, -0.469], [0, -0.757, -0.469]],
        freqs_cm1=[-50.0, 1600.0, 3800.0],
        modes=q[:3],
        dalpha_dx=0.5 * (d + d.transpose(0, 2, 1)),
        provenance=Provenance(program="test", notes=("made in a test",)),
    )
    kw.update(over)
    return ModeSet(**kw)


def test_default_masses_are_most_abundant_isotopes():
    ms = small_modeset()
    # O-16 15.99491461957 Da and H-1 1.00782503223 Da (AME / ASE atomic_masses_common).
    np.testing.assert_allclose(
        ms.masses_da, [15.99491461957, 1.00782503223, 1.00782503223], rtol=1e-12
    )
    assert "isotope" in ms.provenance.masses


def test_arrays_are_read_only_copies():
    coords = np.zeros((3, 3))
    coords[1, 1] = 0.7
    coords[2, 1] = -0.7
    ms = small_modeset(coordinates_ang=coords)
    coords[0, 0] = 99.0
    assert ms.coordinates_ang[0, 0] == 0.0
    with pytest.raises(ValueError):
        ms.freqs_cm1[0] = 1.0


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        (
            "coordinates_ang",
            np.zeros((2, 3)),
            r"coordinates_ang should be an array of shape \(3, 3\)",
        ),
        ("modes", np.zeros((3, 8)), r"modes should be an array of shape \(3, 9\)"),
        ("dalpha_dx", np.zeros((9, 3)), r"dalpha_dx should be an array of shape \(9, 3, 3\)"),
        ("freqs_cm1", [1.0, np.nan, 2.0], "NaN"),
        ("masses_da", [16.0, -1.0, 1.0], "positive"),
        (
            "ir_intensity_km_mol",
            [1.0, 2.0],
            r"ir_intensity_km_mol should be an array of shape \(3\)",
        ),
        ("modes", np.ones((3, 9)), "orthonormal"),
    ],
)
def test_shape_errors_say_what_was_expected(field, value, message):
    with pytest.raises(ShapeError, match=message):
        small_modeset(**{field: value})


def test_json_round_trip_is_lossless(tmp_path):
    ms = small_modeset(energy_hartree=-76.0123456789012, ir_intensity_km_mol=[0.5, 71.25, 3.0])
    path = write_modes_json(ms, tmp_path / "x.modes.json")
    back = read_modes(path)
    assert back.ir_intensity_km_mol is not None  # contract: the IR column survives the file
    for f in dataclasses.fields(ModeSet):
        a, b = getattr(ms, f.name), getattr(back, f.name)
        if isinstance(a, np.ndarray):
            np.testing.assert_array_equal(a, b)
        elif f.name != "provenance":
            assert a == b
    assert back.provenance.notes == ("made in a test",)
    assert sniff(path) == "modes-json"


def test_read_json_names_the_given_file(tmp_path):
    # Messages about a mode set name its source_file: after reading a *.modes.json that is
    # the path given, not the program output it was once converted from (kept as a note).
    prov = Provenance(source_file="/elsewhere/run.log", program="test")
    path = write_modes_json(small_modeset(provenance=prov), tmp_path / "x.modes.json")
    back = read_modes(path)
    assert back.provenance.source_file == str(path)
    assert "converted from /elsewhere/run.log" in back.provenance.notes


def test_json_refuses_to_overwrite(tmp_path):
    path = write_modes_json(small_modeset(), tmp_path / "x.modes.json")
    before = path.read_bytes()
    with pytest.raises(Exception, match="--force"):
        write_modes_json(small_modeset(freqs_cm1=[1.0, 2.0, 3.0]), path)
    assert path.read_bytes() == before


def test_json_with_wrong_shapes_is_an_input_error(tmp_path):
    doc = modeset_to_dict(small_modeset())
    doc["modes_mass_weighted"] = doc["modes_mass_weighted"][:2]
    path = tmp_path / "bad.modes.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(
        InputFormatError, match=r"bad.modes.json: .*modes should be an array of shape"
    ):
        read_modes(path)


def test_json_with_future_schema_is_refused(tmp_path):
    doc = modeset_to_dict(small_modeset())
    doc["schema_version"] = 99
    path = tmp_path / "future.modes.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(InputFormatError, match="schema version 99"):
        read_modes(path)


def test_example_file_reproduces_reference_water_numbers():
    # examples/water.modes.json (HF/6-31G*, made by examples/make_water_modes.py) against the
    # project's earlier independent trial in ../shared/engine-notes.md (HF/6-31G*, h = 0.005 Å):
    # 1826.3 cm⁻¹ S = 5.613 ρ = 0.526; 4056.0 S = 73.82 ρ = 0.190; 4174.1 S = 38.92 ρ = 0.75.
    # Regression against our own earlier numbers, not an outside reference.
    from vibrapol.ramantable import raman_table

    t = raman_table(read_modes(EXAMPLE))
    np.testing.assert_allclose(t.freqs_cm1, [1826.3, 4056.0, 4174.1], atol=1.0)
    np.testing.assert_allclose(t.activity, [5.613, 73.82, 38.92], rtol=2e-3)
    np.testing.assert_allclose(t.rho_linear, [0.526, 0.190, 0.75], atol=2e-3)
