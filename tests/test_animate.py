"""`vibrapol animate` and vibrapol.animation: frames of one mode for a molecular viewer.

References: ASE reads the files back (``ase.io.read``) and gives the mode's own direction
(``VibrationsData.get_modes`` of :meth:`ModeSet.to_ase_vibrations`); the multi-frame XYZ
layout (atom count, comment, one line per atom, repeated) is common practice.
Input: examples/water.modes.json (PySCF RHF/6-31G*).
"""

from __future__ import annotations

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.animation import frames_xyz, mode_frames
from vibrapol.cli import main
from vibrapol.errors import OptionError
from vibrapol.sources import read_modes

WATER = str(PROJECT_ROOT / "examples" / "water.modes.json")


def test_xyz_frames_read_back_by_ase_follow_the_mode(tmp_path):
    import ase.io

    modes = read_modes(WATER)
    out = tmp_path / "mode3.xyz"
    assert main(["animate", WATER, "--mode", "3", "-o", str(out), "--frames", "8"]) == 0
    frames = ase.io.read(out, ":")
    assert len(frames) == 8
    assert frames[0].get_chemical_symbols() == ["O", "H", "H"]
    np.testing.assert_allclose(frames[0].positions, modes.coordinates_ang, atol=1e-8)
    # quarter period: the turning point; the atom that moves most moved by the amplitude
    shift = frames[2].positions - modes.coordinates_ang
    assert np.linalg.norm(shift, axis=1).max() == pytest.approx(0.25, abs=1e-7)
    # ... along ASE's own Cartesian displacement of the same mode (up to sign and length)
    ase_mode = modes.to_ase_vibrations().get_modes()[-1].real
    cos = abs(np.vdot(shift, ase_mode)) / (np.linalg.norm(shift) * np.linalg.norm(ase_mode))
    assert cos == pytest.approx(1.0, abs=1e-6)
    np.testing.assert_allclose(frames[6].positions - modes.coordinates_ang, -shift, atol=1e-7)


def test_trajectory_has_the_same_frames_and_the_masses(tmp_path):
    import ase.io

    modes = read_modes(WATER)
    out = tmp_path / "mode1.traj"
    assert main(["animate", WATER, "--mode", "1", "-o", str(out), "--amplitude-ang", "0.1"]) == 0
    frames = ase.io.read(out, ":")
    expected = mode_frames(modes, 0, 0.1, 20)
    assert len(frames) == 20
    for atoms, xyz in zip(frames, expected, strict=True):
        np.testing.assert_allclose(atoms.positions, xyz, atol=1e-10)
    np.testing.assert_allclose(frames[0].get_masses(), modes.masses_da)


def test_arrows_figure_and_isotopologue(tmp_path):
    out, png = tmp_path / "m.xyz", tmp_path / "m.png"
    argv = ["animate", WATER, "--mode", "2", "-o", str(out), "--arrows", str(png),
            "--isotopes", "H=2.01410178"]  # fmt: skip
    assert main(argv) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    comment = out.read_text().splitlines()[1]
    assert "mode 2 29" in comment  # the D2O wavenumber, 2924.7 cm-1
    assert "masses given: H2 1.00783 -> 2.0141" in comment  # which isotopes, in ASCII


def test_comment_line_says_the_frames_are_for_display():
    text = frames_xyz(read_modes(WATER), 0, frames=4)
    lines = text.splitlines()
    assert len(lines) == 4 * 5
    assert lines[1].startswith("mode 1 1826.5 cm-1 frame 1/4") and "not a geometry" in lines[1]


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--mode", "4"], "mode 4 does not exist"),
        (["--mode", "0"], "mode 0 does not exist"),
        (["--mode", "1", "--amplitude-ang", "0"], "amplitude"),
        (["--mode", "1", "--amplitude-ang", "nan"], "amplitude"),
        (["--mode", "1", "--frames", "1"], "frames per period"),
        (["--mode", "1", "--arrows", "a.gif"], "must end in .png"),
    ],
)
def test_refusals_are_one_line_and_write_nothing(tmp_path, capsys, monkeypatch, extra, message):
    monkeypatch.chdir(tmp_path)
    argv = ["animate", WATER, *extra, "-o", "m.xyz"]
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]
    assert list(tmp_path.iterdir()) == []


def test_frames_file_suffix_is_checked(tmp_path, capsys):
    assert main(["animate", WATER, "--mode", "1", "-o", str(tmp_path / "m.pdb")]) == 2
    assert "must end in .xyz or .traj" in capsys.readouterr().err


def test_library_refuses_a_bad_mode():
    with pytest.raises(OptionError, match="modes 1 to 3"):
        mode_frames(read_modes(WATER), 3)
