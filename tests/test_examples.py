"""The scripts in examples/: each runs as a user would run it (a subprocess) on small inputs.

Also: the demo's shipped data files are what their committed generator makes.
"""

from __future__ import annotations

import os
import re
import runpy
import subprocess
import sys

import ase.io
import numpy as np
import pytest

from _paths import PROJECT_ROOT, qc_output
from vibrapol.demo import SAMPLE_SPECTRUM, data_path
from vibrapol.symmetry import find_point_group

EXAMPLES = PROJECT_ROOT / "examples"
CH2CL2_XYZ = EXAMPLES / "solvent-check" / "dichloromethane.xyz"
CH2CL2_B3LYP = PROJECT_ROOT / "docs" / "figures" / "ch2cl2_b3lyp_631gd.modes.json"
WATER_XYZ = "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"

# Liquid CH2Cl2 fundamentals by species (T. Shimanouchi, NSRDS-NBS 39, 1972, from memory),
# species in vibrapol's C2v convention (yz = the CCl2 plane; see tests/test_demo.py).
CH2CL2_LIQUID = {"A1": [283, 702, 1422, 2985], "A2": [1155], "B1": [898, 3047], "B2": [737, 1265]}


def run_example(script, *args, cwd):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(PROJECT_ROOT / "src") + os.pathsep + env.get("PYTHONPATH", "")
    env.setdefault("OMP_NUM_THREADS", "1")
    proc = subprocess.run(
        [sys.executable, str(EXAMPLES / script), *map(str, args)],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert proc.returncode == 0, proc.stderr
    return proc.stdout


def band_rows(text):
    """(wavenumber, species, rho) rows of predict_polarized_bands.py's computed table."""
    rows = re.findall(r"^\s*(\d+) (\S+)\s+([\d.]+)  ", text, flags=re.MULTILINE)
    return [(float(f), s, float(r)) for f, s, r in rows]


def test_predict_from_the_structure_alone(tmp_path):
    out = run_example("predict_polarized_bands.py", CH2CL2_XYZ, cwd=tmp_path)
    # CH2Cl2: C2v, Γ_vib = 4A1 + A2 + 2B1 + 2B2 (Herzberg 1945; Shimanouchi 1972); every C2v
    # species is Raman-active, A2 is IR-inactive (C2v character table, Cotton 1990)
    assert "point group C2v, Γ_vib = 4A1 + A2 + 2B1 + 2B2" in out
    assert re.search(r"^A2\s+1  no  yes    depolarized", out, flags=re.MULTILINE)
    counts = re.search(r"(\d+) fundamentals: (\d+) Raman-active, of which (\d+) polarized", out)
    assert tuple(map(int, counts.groups())) == (9, 9, 4)


def test_predict_with_a_computed_result(tmp_path):
    out = run_example(
        "predict_polarized_bands.py",
        CH2CL2_XYZ,
        "--modes",
        CH2CL2_B3LYP,
        "--scale-for",
        "B3LYP/6-31G*",
        cwd=tmp_path,
    )
    rows = band_rows(out)
    assert sorted(s for _, s, _ in rows) == sorted(k for k, v in CH2CL2_LIQUID.items() for _ in v)
    for _, species, rho in rows:
        if species != "A1":  # non-totally-symmetric: ρ = 3/4 (Long 2002; common practice)
            assert rho == pytest.approx(0.75, abs=5e-4)
    # scaled B3LYP fundamentals within 5 % of the liquid values, species by species in order
    # (a few per cent is the usual quality of scaled B3LYP/6-31G* fundamentals, Merrick 2007)
    for species, published in CH2CL2_LIQUID.items():
        computed = sorted(f for f, s, _ in rows if s == species)
        np.testing.assert_allclose(computed, published, rtol=0.05)


def test_predict_computing_with_the_engine(tmp_path):
    xyz = tmp_path / "water.xyz"
    xyz.write_text(WATER_XYZ)
    out = run_example("predict_polarized_bands.py", xyz, "--compute", "hf/sto-3g", cwd=tmp_path)
    rows = band_rows(out)
    # Γ_vib(H2O) = 2A1 + B2 (Herzberg 1945); B2 depolarized with ρ = 3/4 (common practice)
    assert sorted(s for _, s, _ in rows) == ["A1", "A1", "B2"]
    assert [r for _, s, r in rows if s == "B2"] == [pytest.approx(0.75, abs=5e-4)]
    # HF/STO-3G puts the bend at ρ = 0.725 (PySCF): within 0.05 of 3/4, so not measurably
    # polarized (the rule of vibrapol.polarization); the symmetric stretch is polarized
    assert len(re.findall(r"\d  polarized$", out, flags=re.MULTILINE)) == 1
    assert len(re.findall(r"A1 +0\.72\d  totally symmetric, but rho too close", out)) == 1


def tex_rows(path):
    return [line for line in path.read_text().splitlines() if line.rstrip().endswith("\\\\")][1:]


def test_paper_figures_from_the_shipped_water_file(tmp_path):
    out = run_example(
        "paper_figures.py", EXAMPLES / "water.modes.json", "--output-dir", "figs", cwd=tmp_path
    )
    figs = tmp_path / "figs"
    assert "point group C2v" in out
    assert (figs / "spectrum.pdf").read_bytes()[:5] == b"%PDF-"  # ISO 32000 header
    assert (figs / "rho.pdf").read_bytes()[:5] == b"%PDF-"
    assert (figs / "spectrum.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    rows = tex_rows(figs / "modes.tex")
    assert len(rows) == 3  # water: 3 Raman-active fundamentals (2A1 + B2, Herzberg 1945)
    b2 = [r for r in rows if "$B_{2}$" in r]
    assert len(b2) == 1 and float(b2[0].split("&")[3]) == pytest.approx(0.75)
    assert [r.split("&")[4].strip(" \\") for r in rows].count("p") == 2
    # a second run without --force refuses before writing anything
    again = subprocess.run(
        [sys.executable, str(EXAMPLES / "paper_figures.py"), str(EXAMPLES / "water.modes.json"),
         "--output-dir", "figs"],
        cwd=tmp_path, capture_output=True, text=True,
        env={**os.environ, "PYTHONPATH": str(PROJECT_ROOT / "src")},
    )  # fmt: skip
    assert again.returncode != 0 and "--force" in again.stderr


def test_paper_figures_from_a_gaussian_output(tmp_path):
    source = qc_output("Gaussian16-A.03_dvb_raman.out")
    out = run_example("paper_figures.py", source, "--output-dir", "figs", cwd=tmp_path)
    assert "54 modes, point group C2h" in out
    rows = tex_rows(tmp_path / "figs" / "modes.tex")
    # trans-divinylbenzene, C2h: Γ_vib = 19Ag + 8Bg + 9Au + 18Bu (../shared/qc-outputs/README);
    # mutual exclusion: only the 27 g modes are Raman-active
    assert sum("$A_{g}$" in r for r in rows) == 19
    assert sum("$B_{g}$" in r for r in rows) == 8
    assert len(rows) == 27
    for r in rows:
        if "$B_{g}$" in r:  # non-totally-symmetric: ρ = 3/4 (common practice)
            assert float(r.split("&")[3]) == pytest.approx(0.75, abs=5e-4)


def test_match_and_rank_on_the_demo_scenario(tmp_path):
    out = run_example("match_and_rank.py", "--figure", "match.svg", cwd=tmp_path)
    assert "INVENTED" in out
    assert "best candidate: dichloromethane.modes.json" in out
    assigned = re.findall(r"^\s*([\d.]+)\s+[\d.]+\s+(\d+) (\S+)", out, flags=re.MULTILINE)
    species = {round(float(b)): s for b, _, s in assigned}
    for irrep, positions in CH2CL2_LIQUID.items():
        for p in positions:
            near = [s for b, s in species.items() if abs(b - p) <= 2]
            assert near == [irrep], (p, near)
    # the invented overtone near 2830 cm-1 has no fundamental and stays unassigned
    assert re.search(r"^\s*283\d\.\d\s+[\d.]+\s+- unassigned", out, flags=re.MULTILINE)
    ranking = re.findall(r"^\s+(\d)\s+([\d.]+)\s+\d+/\d+.*\s(\S+\.modes\.json)$", out, re.M)
    assert [r[2] for r in ranking] == ["dichloromethane.modes.json", "chloroform.modes.json"]
    assert (tmp_path / "match.svg").stat().st_size > 1000


def test_shipped_invented_pair_is_what_its_script_makes(tmp_path):
    script = runpy.run_path(str(EXAMPLES / "solvent-check" / "make_demo_data.py"))
    made = script["write_spectra"](tmp_path)
    shipped = np.loadtxt(data_path(SAMPLE_SPECTRUM), skiprows=10)
    remade = np.loadtxt(made, skiprows=10)
    assert shipped.shape == remade.shape == (3150, 3)
    np.testing.assert_allclose(remade, shipped, rtol=0, atol=1e-5)
    assert data_path(SAMPLE_SPECTRUM).read_text().startswith("# INVENTED DATA")


@pytest.mark.parametrize("name, group", [("dichloromethane.xyz", "C2v"), ("chloroform.xyz", "C3v")])
def test_shipped_start_structures_keep_their_symmetry(name, group):
    atoms = ase.io.read(data_path(name))
    # CH2Cl2 is C2v and CHCl3 C3v (Herzberg 1945; common practice)
    found = find_point_group(atoms.get_atomic_numbers(), atoms.get_positions(), where=name)
    assert found.symbol == group
    assert found.max_deviation_ang < 1e-4
