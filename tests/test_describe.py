"""What each mode does (vibrapol.describe): internal coordinates and potential energy shares.

The molecules are checked against the textbook descriptions of their fundamentals (from memory):
G. Herzberg, *Infrared and Raman Spectra of Polyatomic Molecules* (1945) for water and benzene
(Wilson's numbering of benzene's modes), and T. Shimanouchi, *Tables of Molecular Vibrational
Frequencies, Consolidated Volume I* (NSRDS-NBS 39, 1972) for CH2Cl2.  The modes are vibrapol
engine runs at HF/STO-3G (tests/fixtures/describe/make_describe_fixtures.py): the description
follows the shape of the modes, which this level already gets right; the species come from
vibrapol's own symmetry analysis, so each check names a mode by species and rank, not by the
(unscaled, level-dependent) wavenumber.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from vibrapol.cli import main
from vibrapol.describe import describe_modes, energy_distribution, internal_coordinates
from vibrapol.errors import ChangedValuesWarning, VibrapolError
from vibrapol.output.tables import TABLE_COLUMNS
from vibrapol.ramantable import symmetry_table
from vibrapol.sources.modes_json import read_modes_json

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "describe"
QC = Path(__file__).resolve().parents[1].parent / "shared" / "qc-outputs"


def _described(name):
    """(species, description) of every mode of a fixture, ascending wavenumber."""
    modes = read_modes_json(FIXTURES / f"{name}.modes.json")
    _, table = symmetry_table(modes)
    return list(zip(table.irreps, describe_modes(modes), strict=True))


def _of(described, species):
    """Descriptions of the modes of one species, ascending wavenumber."""
    return [d for s, d in described if s == species]


def _top(description):
    """Words of the group with the largest share."""
    return description.terms[0][0]


def test_water_bend_and_the_two_stretches():
    # Herzberg (1945), from memory: ν2 (a1) bend, ν1 (a1) symmetric stretch,
    # ν3 (b2) antisymmetric stretch
    described = _described("water_hf_sto3g")
    bend, sym = _of(described, "A1")
    (anti,) = _of(described, "B2")
    assert _top(bend) == "H–O–H bend" and bend.terms[0][1] > 90
    assert _top(sym) == "O–H stretch, in phase" and sym.terms[0][1] > 90
    assert _top(anti) == "O–H stretch, out of phase" and anti.terms[0][1] > 90
    assert anti.text == "O–H stretch, out of phase (100%)"


def test_dichloromethane_fundamentals():
    # Shimanouchi (1972), from memory: a1: ν1 CH2 s-stretch, ν2 CH2 scissors, ν3 CCl2 s-stretch,
    # ν4 CCl2 scissors; a2: ν5 CH2 twist; ν6 CH2 a-stretch; ν7 CH2 wag (1268) above ν8 CH2 rock
    # (899); ν9 CCl2 a-stretch.  The b1/b2 names depend on the axes, so the wag and the rock
    # are told by their order and the stretches by their rank in vibrapol's species.
    described = _described("ch2cl2_hf_sto3g")
    ccl2_scissors, ccl_sym, ch2_scissors, ch_sym = _of(described, "A1")
    assert _top(ch_sym) == "C–H stretch, in phase"
    assert _top(ch2_scissors) == "CH2 scissors"
    assert _top(_of(described, "A2")[0]) == "CH2 twist"
    rock_wag = [_top(d) for _, d in described if _top(d) in ("CH2 rock", "CH2 wag")]
    assert rock_wag == ["CH2 rock", "CH2 wag"]
    assert _top(ccl_sym) == "C–Cl stretch, in phase"
    assert _top(ccl2_scissors) == "Cl–C–Cl bend"
    assert _top(_of(described, "B1")[-1]) == "C–H stretch, out of phase"
    assert _top(_of(described, "B2")[0]) == "C–Cl stretch, out of phase"


def test_benzene_fundamentals():
    # Herzberg (1945), Wilson's numbering, from memory: a1g ν2 ring breathing (C–C stretch in
    # phase) and ν1 C–H stretch; a2g ν3 C–H in-plane bend; a2u ν11 C–H out-of-plane;
    # b2u ν14 (Kekulé) C–C stretch; e2g ν6 ring (C–C–C) in-plane bend, ν7 C–H stretch;
    # e2u ν16 ring out-of-plane (torsion), ν17 C–H out-of-plane; b1u ν13 C–H stretch
    described = _described("benzene_hf_sto3g")
    breathing, ch_a1g = _of(described, "A1g")
    assert _top(breathing) == "ring breathing" and breathing.terms[0][1] > 90
    assert _top(ch_a1g) == "C–H stretch, in phase"
    assert _top(_of(described, "A2g")[0]) == "H–C–C bend, out of phase"
    assert _top(_of(described, "A2u")[0]) == "C–H out-of-plane"
    assert _top(_of(described, "B2u")[0]) == "C–C stretch, out of phase"
    e2g = _of(described, "E2g")
    assert _top(e2g[0]) == "C–C–C bend, out of phase"
    assert _top(e2g[-1]) == "C–H stretch, out of phase"
    e2u = _of(described, "E2u")
    assert _top(e2u[0]) == "C–C torsion"
    assert _top(e2u[-1]) == "C–H out-of-plane"
    assert _top(_of(described, "B1u")[-1]) == "C–H stretch, out of phase"


def test_real_output_ch_stretches_on_top():
    # divinylbenzene from ORCA 6.0.1 (a real output): the ten highest modes are C–H
    # stretches (common practice: C–H stretches lie near 3000 cm⁻¹, above every other mode)
    path = QC / "ORCA6.0.1_dvb_raman.out"
    if not path.exists():
        pytest.skip(f"{path} not available")
    from vibrapol.sources import read_modes

    found = describe_modes(read_modes(path))
    assert all(_top(d).startswith("C–H stretch") for d in found[-10:])
    assert not any(_top(d).startswith("C–H stretch") for d in found[:-10])


def test_shares_sum_to_100_and_cover_every_mode():
    # contract: the shares of each mode are a distribution over the coordinates
    modes = read_modes_json(FIXTURES / "benzene_hf_sto3g.modes.json")
    ped = energy_distribution(modes)
    assert np.allclose(ped.percent.sum(axis=1), 100.0)
    assert np.all(ped.percent >= 0.0)
    assert np.all(ped.coverage > 0.99)


def test_description_does_not_depend_on_the_frame():
    # contract: a rotated and shifted molecule (with its modes rotated alike) reads the same
    import dataclasses

    modes = read_modes_json(FIXTURES / "ch2cl2_hf_sto3g.modes.json")
    angle = 0.7
    rot = np.array(
        [[np.cos(angle), -np.sin(angle), 0], [np.sin(angle), np.cos(angle), 0], [0, 0, 1]]
    ) @ np.array([[1, 0, 0], [0, np.cos(0.3), -np.sin(0.3)], [0, np.sin(0.3), np.cos(0.3)]])
    n = modes.n_atoms
    turned = dataclasses.replace(
        modes,
        coordinates_ang=modes.coordinates_ang @ rot.T + [1.0, -2.0, 0.5],
        modes=(modes.modes.reshape(-1, n, 3) @ rot.T).reshape(modes.n_modes, 3 * n),
        dalpha_dx=None,
        dalpha_dq=None,
    )
    before = energy_distribution(modes).percent
    after = energy_distribution(turned).percent
    assert np.allclose(before, after, atol=1e-4)


def test_water_has_two_stretches_and_one_bend():
    # common practice: water's three internal coordinates, the valence set
    modes = read_modes_json(FIXTURES / "water_hf_sto3g.modes.json")
    coords, _ = internal_coordinates(modes.atomic_numbers, modes.coordinates_ang)
    assert sorted(c.kind for c in coords) == ["bend", "stretch", "stretch"]


def test_incomplete_mode_set_is_refused_in_one_line():
    # contract: the force constants need every mode; refused with a line naming the count
    modes = read_modes_json(FIXTURES / "water_hf_sto3g.modes.json").subset([0, 1])
    with pytest.raises(VibrapolError, match="2 modes of 3"):
        describe_modes(modes)


def test_table_column_and_no_describe(capsys, tmp_path):
    # contract: the CSV and JSON carry a last column 'description'; --no-describe empties it
    src = str(FIXTURES / "water_hf_sto3g.modes.json")
    assert main(["table", src, "--format", "csv"]) == 0
    text = capsys.readouterr().out
    rows = list(csv.reader(line for line in text.splitlines() if not line.startswith("#")))
    assert tuple(rows[0]) == TABLE_COLUMNS and rows[0][-1] == "description"
    assert rows[3][-1] == "O–H stretch, out of phase (100%)"
    assert "# note: description: share of each mode's potential energy" in text
    out = tmp_path / "t.json"
    assert main(["table", src, "--format", "json", "-o", str(out)]) == 0
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert doc["modes"][0]["description"].startswith("H–O–H bend")
    assert main(["table", src, "--format", "csv", "--no-describe"]) == 0
    rows = list(csv.reader(_body(capsys.readouterr().out)))
    assert [r[-1] for r in rows[1:]] == ["", "", ""]


def _body(text):
    return [line for line in text.splitlines() if not line.startswith("#")]


def test_figure_labels_carry_the_words(tmp_path):
    # contract: with mode_words each placed band label ends with the words of its mode (the
    # mode at the label's wavenumber); the strongest CH2Cl2 band in Raman activity at HF/STO-3G
    # is ν1, the CH2 symmetric stretch (Shimanouchi 1972, from memory)
    from matplotlib.text import Annotation

    from vibrapol import plotting
    from vibrapol.spectrum import broaden, stick_spectrum
    from vibrapol.spectrum.lineshapes import LineShape

    modes = read_modes_json(FIXTURES / "ch2cl2_hf_sto3g.modes.json")
    words = [d.short for d in describe_modes(modes)]
    grid = broaden(stick_spectrum(modes), LineShape("lorentzian", 8.0), range_cm1=(200, 3900))
    fig = plotting.spectrum_figure(grid, mode_words=words)
    labels = [t.get_text() for t in fig.axes[0].texts if isinstance(t, Annotation)]
    assert labels and labels[0].startswith("3603") and labels[0].endswith("\nC–H stretch, in phase")
    for text in labels:
        k = int(np.argmin(np.abs(modes.freqs_cm1 - float(text.split()[0]))))
        assert text.endswith("\n" + words[k])
    plain = plotting.spectrum_figure(grid)
    assert not any("stretch" in t.get_text() for t in plain.axes[0].texts)


def test_spectrum_cli_label_descriptions_needs_one_source(tmp_path, capsys):
    # contract: refused in one line for a mixture (the words belong to one source's modes)
    src = str(FIXTURES / "water_hf_sto3g.modes.json")
    code = main(["spectrum", src, src, "--figure", str(tmp_path / "f.png"),
                 "--label-descriptions"])  # fmt: skip
    assert code == 2
    assert "--label-descriptions needs one source" in capsys.readouterr().err
    assert not (tmp_path / "f.png").exists()


def test_deuterium_is_named_and_not_equivalent_to_hydrogen():
    # HOD has two local stretches, O–D below O–H, not in- and out-of-phase pairs (common
    # practice: the isotopic mass difference uncouples them); D2O keeps the pair, named O–D
    water = read_modes_json(FIXTURES / "water_hf_sto3g.modes.json")
    o, h, d = 15.99491462, 1.00782503, 2.01410178  # isotope masses (ase.data)
    with pytest.warns(ChangedValuesWarning):  # new modes from the rebuilt Hessian, announced
        hod_modes, d2o_modes = water.with_masses([o, h, d]), water.with_masses([o, d, d])
    hod = [x.text for x in describe_modes(hod_modes)]
    assert [t.split(" (")[0] for t in hod] == ["H–O–D bend", "O–D stretch", "O–H stretch"]
    d2o = [_top(x) for x in describe_modes(d2o_modes)]
    assert d2o == ["D–O–D bend", "O–D stretch, in phase", "O–D stretch, out of phase"]


def test_motion_the_bonds_miss_is_not_described_and_said_so():
    # contract: two H atoms 5 Å apart (invented, no bond by the covalent radii) have no
    # coordinate for their one mode: the text is empty, a warning and a note say which mode
    from vibrapol.errors import VibrapolWarning
    from vibrapol.modeset import ModeSet
    from vibrapol.ramantable import raman_table

    apart = ModeSet(
        atomic_numbers=[1, 1],
        coordinates_ang=[[0, 0, 0], [0, 0, 5.0]],
        freqs_cm1=[100.0],
        modes=[[0, 0, -(0.5**0.5), 0, 0, 0.5**0.5]],
    )
    with pytest.warns(VibrapolWarning, match="mode 1 not described"):
        table = raman_table(apart, describe=True)
    assert table.descriptions == ("",)
    assert any(n.startswith("mode 1 not described: the bonds found") for n in table.notes)


def test_degenerate_partners_read_the_same_in_any_basis():
    # contract: a rotation within each degenerate pair of benzene's E modes (any basis of the
    # pair is as good) changes no description: shares summed over symmetry-equivalent
    # coordinates do not depend on the basis
    import dataclasses

    modes = read_modes_json(FIXTURES / "benzene_hf_sto3g.modes.json")
    turned = modes.modes.copy()
    f = modes.freqs_cm1
    pairs = [a for a in range(modes.n_modes - 1) if abs(f[a + 1] - f[a]) < 0.5]
    assert len(pairs) == 10  # benzene's ten E species fundamentals (Herzberg 1945, from memory)
    c, s = np.cos(0.5), np.sin(0.5)
    for a in pairs:
        turned[a], turned[a + 1] = (
            c * modes.modes[a] + s * modes.modes[a + 1],
            -s * modes.modes[a] + c * modes.modes[a + 1],
        )
    other = dataclasses.replace(modes, modes=turned, dalpha_dx=None, dalpha_dq=None)
    before = [d.text for d in describe_modes(modes)]
    assert [d.text for d in describe_modes(other)] == before
