"""``vibrapol symmetry`` and the symmetry columns of ``vibrapol table``."""

from __future__ import annotations

import json

import pytest

import symmetry_geometries as geo
from _source_contract import csv_records
from vibrapol.cli import main
from vibrapol.engine import compute_modes
from vibrapol.sources.modes_json import write_modes_json


def write_xyz(path, z, x, comment="test structure (ideal geometry built by the tests)"):
    from ase.data import chemical_symbols

    lines = [str(len(z)), comment]
    lines += [
        f"{chemical_symbols[a]} {p[0]:.8f} {p[1]:.8f} {p[2]:.8f}" for a, p in zip(z, x, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def water_json(tmp_path_factory):
    z, x = geo.moved(*geo.water(), seed=3)
    modes = compute_modes((z, x), "hf", "sto-3g", optimize=False, progress=False)
    return write_modes_json(modes, tmp_path_factory.mktemp("water") / "water.modes.json")


def test_symmetry_of_ccl4_xyz(tmp_path, capsys):
    # Done criterion of the issue: Td, A1 + E + 2T2, A1 polarized (Herzberg 1945)
    path = write_xyz(tmp_path / "ccl4.xyz", *geo.moved(*geo.ccl4(), seed=1, noise_ang=0.001))
    assert main(["symmetry", str(path)]) == 0
    out = capsys.readouterr().out
    assert "point group: Td" in out
    assert "Γ_vib = A1 + E + 2T2" in out
    lines = {
        line.split()[0]: line for line in out.splitlines() if line[:3] in ("A1 ", "E  ", "T2 ")
    }
    assert "polarized (rho_linear < 3/4)" in lines["A1"] and "depolarized" not in lines["A1"]
    assert "depolarized (rho_linear = 3/4)" in lines["E"]
    assert "x, y, z" in lines["T2"]


def test_symmetry_json(tmp_path, capsys):
    path = write_xyz(tmp_path / "benzene.xyz", *geo.benzene())
    assert main(["symmetry", str(path), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["point_group"] == "D6h"
    # Herzberg (1945): 20 fundamentals, 7 Raman-active, 4 IR-active, none in both
    counts = doc["band_counts"]
    assert (counts["fundamentals"], counts["raman_active"], counts["ir_active"]) == (20, 7, 4)
    assert counts["coincident"] == 0
    assert len(doc["character_table"]["irreps"]) == 12


def test_symmetry_of_a_mode_file(water_json, capsys):
    assert main(["symmetry", str(water_json), "--characters"]) == 0
    out = capsys.readouterr().out
    assert "point group: C2v" in out and "Γ_vib = 2A1 + B2" in out
    modes = [line.split() for line in out.splitlines() if line.strip()[:2] in ("1 ", "2 ", "3 ")]
    assert [m[2] for m in modes] == ["A1", "A1", "B2"]
    assert [m[-1] for m in modes] == ["polarized", "polarized", "depolarized"]
    assert "σv'(yz)" in out  # the character table is printed


def test_table_fills_symmetry_columns(water_json, capsys):
    assert main(["table", str(water_json), "--format", "csv"]) == 0
    rows = csv_records(capsys.readouterr().out)
    assert {"ir_active", "raman_active", "purity"} <= set(rows[0])
    assert all(float(r["purity"]) > 0.99 for r in rows)  # an exact Hessian: pure species
    assert [r["irrep"] for r in rows] == ["A1", "A1", "B2"]
    assert [r["ir_active"] for r in rows] == ["true"] * 3
    assert [r["raman_active"] for r in rows] == ["true"] * 3
    # non-totally symmetric: ρ_linear = 3/4 (Long 2002); totally symmetric: polarized, except
    # that HF/STO-3G gives the bend ρ = 0.717 (PySCF), within 0.05 of 3/4: not measurably
    # polarized, so the rule of vibrapol.polarization calls it unresolved
    assert float(rows[2]["rho_linear"]) == pytest.approx(0.75, abs=1e-6)
    assert float(rows[0]["rho_linear"]) == pytest.approx(0.717, abs=1e-3)
    assert [r["polarized"] for r in rows] == ["false", "true", "false"]
    assert [r["polarization"] for r in rows] == ["unresolved", "polarized", "depolarized"]
    assert main(["table", str(water_json)]) == 0
    text = capsys.readouterr().out
    assert "point group: C2v" in text and "Mulliken" in text


def test_table_without_symmetry(water_json, capsys):
    assert main(["table", str(water_json), "--format", "csv", "--no-symmetry"]) == 0
    rows = csv_records(capsys.readouterr().out)
    assert [r["irrep"] for r in rows] == ["", "", ""]
    assert [r["ir_active"] for r in rows] == ["", "", ""]


@pytest.mark.parametrize(
    "content, message",
    [
        ("1\none atom\nHe 0 0 0\n", "single atom has no vibrations"),
        ("2\noverlap\nH 0 0 0\nH 0 0 0.05\n", "overlapping atoms"),
        ("this file has no coordinates at all\n", "no atomic coordinates"),
    ],
)
def test_bad_input_one_line_error(tmp_path, capsys, content, message):
    path = tmp_path / "bad.xyz"
    path.write_text(content)
    out = tmp_path / "report.txt"
    assert main(["symmetry", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1
    assert not out.exists()
