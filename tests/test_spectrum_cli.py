"""End to end: water HF/STO-3G computed with PySCF → `vibrapol spectrum` and `vibrapol sweep`."""

import csv
import io
import json

import numpy as np
import pytest

from spectrum_helpers import WATER_HF_STO3G, pyscf_modeset
from vibrapol.cli import main
from vibrapol.ramantable import raman_table
from vibrapol.sources.modes_json import write_modes_json


@pytest.fixture(scope="module")
def water(tmp_path_factory):
    pytest.importorskip("pyscf")
    modes = pyscf_modeset(WATER_HF_STO3G, "sto-3g", opt=False)
    path = tmp_path_factory.mktemp("water") / "water.modes.json"
    write_modes_json(modes, path)
    return modes, path


def read_csv(path):
    # the conditions are "#" lines above the header (pandas: read_csv(path, comment="#"))
    lines = [x for x in path.read_text().splitlines(keepends=True) if not x.startswith("#")]
    return list(csv.DictReader(io.StringIO("".join(lines))))


def test_water_frequencies_agree_with_pyscf_thermo(water):
    # Reference library: pyscf.hessian.thermo.harmonic_analysis on the same Hessian and masses.
    from pyscf import gto, scf
    from pyscf.hessian import thermo

    modes, _ = water
    mol = gto.M(atom=WATER_HF_STO3G, basis="sto-3g", verbose=0)
    mf = scf.RHF(mol).run(conv_tol=1e-11)
    ref = thermo.harmonic_analysis(mol, mf.Hessian().kernel(), mass=modes.masses_da)
    np.testing.assert_allclose(
        np.sort(modes.freqs_cm1), np.sort(ref["freq_wavenumber"].real), atol=0.05
    )


def test_spectrum_command_writes_csv_sticks_and_figure(water, tmp_path):
    modes, src = water
    out, sticks, fig = tmp_path / "w.csv", tmp_path / "w-sticks.csv", tmp_path / "w.svg"
    code = main(
        [
            "spectrum",
            str(src),
            "--range-cm1",
            "1500:4800",
            "--step-cm1",
            "0.5",
            "--fwhm-cm1",
            "12",
            "--channels",
            "nv,nh",
            "-o",
            str(out),
            "--sticks",
            str(sticks),
            "--figure",
            str(fig),
        ]
    )
    assert code == 0
    rows = read_csv(out)
    assert list(rows[0]) == ["shift_cm1", "vv", "vh", "nv", "nh"]
    assert len(rows) == 6601  # 1500..4800 step 0.5
    table = raman_table(modes)
    # B2 antisymmetric stretch (highest mode) of a C2v molecule is depolarized, ρ = 3/4 (fact of
    # the trade); at its peak the grid ratio VH/VV is 3/4 up to the overlap with the 4140 band.
    shift = np.array([float(r["shift_cm1"]) for r in rows])
    vv = np.array([float(r["vv"]) for r in rows])
    vh = np.array([float(r["vh"]) for r in rows])
    k = int(np.argmin(np.abs(shift - modes.freqs_cm1[2])))
    assert table.rho_linear[2] == pytest.approx(0.75, abs=1e-6)
    assert vh[k] / vv[k] == pytest.approx(0.75, abs=0.01)
    # The symmetric stretch is polarized; its stick ρ equals the table's.
    st = read_csv(sticks)
    assert float(st[1]["rho_linear"]) == pytest.approx(table.rho_linear[1], abs=1e-6)
    assert float(st[1]["rho_linear"]) < 0.74
    svg = fig.read_text()
    assert f"{modes.freqs_cm1[1]:.0f}" in svg and "VV (parallel)" in svg


def test_cross_section_json_and_anti_stokes(water, tmp_path):
    _, src = water
    out = tmp_path / "w.json"
    assert (
        main(
            [
                "spectrum",
                str(src),
                "--quantity",
                "cross-section",
                "--anti-stokes",
                "--format",
                "json",
                "-o",
                str(out),
                "--step-cm1",
                "2",
            ]
        )
        == 0
    )
    doc = json.loads(out.read_text())
    shifts = doc["sticks"]["shift_cm1"]
    assert doc["header"]["unit"] == "cm^2/sr"
    assert min(shifts) < 0 < max(shifts)  # anti-Stokes bands at negative shifts
    # Molecular Raman cross sections at visible wavelengths are ~1e-31–1e-29 cm² sr⁻¹ (common
    # practice, order of magnitude); water HF/STO-3G must fall in that window.
    vv = np.array(doc["sticks"]["heights"]["vv"])
    assert 1e-33 < vv[np.array(shifts) > 0].max() < 1e-28


def test_sweep_command(water, tmp_path):
    _, src = water
    out = tmp_path / "sweep.csv"
    assert (
        main(
            [
                "sweep",
                str(src),
                "--orientation",
                "isotropic",
                "--angles-deg",
                "0:90:45",
                "--top",
                "1",
                "--quantity",
                "activity",
                "-o",
                str(out),
            ]
        )
        == 0
    )
    rows = read_csv(out)
    assert [r["angle_deg"] for r in rows] == ["0", "45", "90"]
    # Isotropic sample: flat sweep (Long 2002), parallel/crossed = (45a² + 4γ²)/3γ² at every angle.
    par = [float(r["parallel"]) for r in rows]
    assert max(par) == pytest.approx(min(par), rel=1e-10)


def test_bad_input_exits_2_and_writes_nothing(water, tmp_path, capsys):
    _, src = water
    out, fig = tmp_path / "x.csv", tmp_path / "x.png"
    assert (
        main(["spectrum", str(src), "--laser-nm", "20000", "-o", str(out), "--figure", str(fig)])
        == 2
    )
    err = capsys.readouterr().err
    assert "cannot excite" in err and len(err.strip().splitlines()) == 1
    assert not out.exists() and not fig.exists()
    assert main(["spectrum", str(src), "--range-cm1", "3600:100", "-o", str(out)]) == 2
    assert main(["spectrum", str(tmp_path / "missing.json")]) == 2
    assert main(["spectrum", str(src), "--scale-for", "XYZ/none", "-o", str(out)]) == 2
    assert not out.exists()


def test_existing_output_is_not_overwritten(water, tmp_path, capsys):
    _, src = water
    out = tmp_path / "keep.csv"
    out.write_text("precious\n")
    assert main(["spectrum", str(src), "-o", str(out)]) == 2
    assert out.read_text() == "precious\n"
    assert "--force" in capsys.readouterr().err


def test_two_sources_make_a_boltzmann_mixture(water, tmp_path):
    # Same molecule twice, ΔE = 2 kJ/mol at 298.15 K: weights 1/(1 + e^(−ΔE/RT)) and the rest
    # (Boltzmann distribution; R from scipy.constants), visible in the JSON header.
    from scipy import constants as C

    _, src = water
    out = tmp_path / "mix.json"
    argv = ["spectrum", str(src), str(src), "--energies-kjmol", "0,2", "--format", "json"]
    assert main([*argv, "--step-cm1", "2", "-o", str(out)]) == 0
    weights = [c["weight"] for c in json.loads(out.read_text())["header"]["components"]]
    x = np.exp(-2.0 / (C.R / 1000.0 * 298.15))
    np.testing.assert_allclose(weights, [1 / (1 + x), x / (1 + x)], rtol=1e-12)


def test_sweep_orientation_options():
    # z-y-z Euler angles (H. Goldstein, Classical Mechanics, 1980): the CLI builds the same
    # rotation as vibrapol.spectrum.orientation.euler_zyz; inf spread means no preferred tilt.
    import argparse

    from vibrapol.cli.sweep import add_arguments, orientation_from_args
    from vibrapol.spectrum import orientation as o

    parser = argparse.ArgumentParser()
    add_arguments(parser)
    args = parser.parse_args(["x.json", "--orientation", "fixed", "--euler-deg", "10,20,30"])
    np.testing.assert_allclose(orientation_from_args(args).rotations[0], o.euler_zyz(10, 20, 30))
    args = parser.parse_args(["x.json", "--orientation", "uniaxial", "--tilt-spread-deg", "inf"])
    assert "no preferred tilt" in orientation_from_args(args).description
