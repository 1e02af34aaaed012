"""``vibrapol demo``: its pieces on a small scenario (water against H2S), the full demo, errors.

The small scenario runs the demo's code path unchanged with other molecules, a cheaper level
(HF/3-21G) and an invented measured pair of water written here.  The full demo (HF/6-31G*,
dichloromethane against chloroform, minutes) is marked slow.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from ase.build import molecule

from vibrapol.cli import main
from vibrapol.demo import (
    CAUTION,
    DEFAULT_SCENARIO,
    DemoMolecule,
    planned_files,
    run_demo,
)
from vibrapol.demo.report import check_bands
from vibrapol.errors import VibrapolError
from vibrapol.measured.synthetic import TrueBand, synthetic_pair

# Gas-phase fundamentals of H2O (species in the C2v convention with x ⊥ the molecular plane):
# T. Shimanouchi, Tables of Molecular Vibrational Frequencies, Consolidated Volume I, NSRDS-NBS
# 39 (1972); values from memory.  The areas and the a1 ratios of the pair are invented.
WATER_BANDS = {1595.0: "A1", 3657.0: "A1", 3756.0: "B2"}
WATER_PAIR = (
    TrueBand(1595.0, 14.0, 20.0, 0.35),
    TrueBand(3657.0, 20.0, 100.0, 0.05),
    TrueBand(3756.0, 20.0, 30.0, 0.75),
)


def _write_xyz(path, name):
    atoms = molecule(name)
    rows = [f"{s} {x:.6f} {y:.6f} {z:.6f}" for s, (x, y, z) in zip(
        atoms.get_chemical_symbols(), atoms.get_positions(), strict=True)]  # fmt: skip
    path.write_text(f"{len(rows)}\n{name} (ASE G2 structure)\n" + "\n".join(rows) + "\n")
    return str(path)


def _write_pair(path):
    x = np.arange(1000.0, 4000.0, 1.0)
    pair = synthetic_pair(x, WATER_PAIR, noise_sigma=0.01, rng=np.random.default_rng(3))
    lines = ["# INVENTED DATA for a test", "shift_cm1 VV VH"]
    lines += [
        f"{a:.1f} {b:.5f} {c:.5f}"
        for a, b, c in zip(x, pair.vv.intensity, pair.vh.intensity, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


def small_scenario(folder):
    return dataclasses.replace(
        DEFAULT_SCENARIO,
        sample=DemoMolecule("water", "water (H2O)", _write_xyz(folder / "water.xyz", "H2O")),
        alternatives=(DemoMolecule("h2s", "H2S", _write_xyz(folder / "h2s.xyz", "SH2")),),
        basis="3-21g",
        measured=_write_pair(folder / "water_pair.txt"),
        range_cm1=(1000.0, 4000.0),
        title="small demo (test)",
        measured_note="INVENTED test pair of water",
    )


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo")
    scenario = small_scenario(folder)
    lines: list[str] = []
    result = run_demo(
        folder / "out", scenario=scenario, workers=1, progress=False, log=lines.append
    )
    return scenario, result, lines


def test_every_planned_file_is_written(small):
    scenario, result, _ = small
    names = [n for n, _ in planned_files(scenario)]
    assert sorted(p.name for p, _ in result.files) == sorted(names)
    for name in names:
        path = result.output_dir / name
        assert path.stat().st_size > 0, name
    # file signatures (PNG: ISO/IEC 15948; SVG is XML)
    assert (result.output_dir / "water_vv_vh.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in (result.output_dir / "match.svg").read_bytes()[:500]
    text = (result.output_dir / "water_spectrum.csv").read_text()
    head = [x for x in text.splitlines() if not x.startswith("#")]
    assert head[0].split(",")[:3] == ["shift_cm1", "vv", "vh"]
    # grid over the scenario's range, 0.5 cm-1 steps (spectrum module default): 6001 points
    rows = [r for r in head[1:] if r and not r.startswith("#")]
    assert len(rows) == pytest.approx(6001, abs=1)


def test_table_has_the_species_of_water(small):
    _, result, _ = small
    table = result.table
    # Γ_vib(H2O) = 2A1 + B2 (Herzberg 1945; Shimanouchi 1972; common practice)
    assert table.point_group == "C2v"
    assert sorted(table.irreps) == ["A1", "A1", "B2"]
    b2 = table.irreps.index("B2")
    # non-totally-symmetric band: ρ_linear = 3/4 exactly (Long 2002, ch. 5; common practice)
    assert table.rho_linear[b2] == pytest.approx(0.75, abs=1e-6)
    assert table.polarized.sum() == 2


def test_assignment_follows_the_published_species(small):
    _, result, _ = small
    a = result.assignment
    assert a.scores.n_assigned == 3
    for position, species in WATER_BANDS.items():
        band = a.nearest(position)
        assert band.band_cm1 == pytest.approx(position, abs=2.0)
        assert band.irrep == species
    # HF/3-21G published factor 0.9085 (Scott & Radom 1996, from memory); the fit stays near it
    assert a.scale.factor == pytest.approx(0.9085, abs=0.05)


def test_ranking_prefers_water_over_h2s(small):
    _, result, _ = small
    # H2S fundamentals 2615, 1183, 2626 cm-1 (Shimanouchi 1972, from memory) are ~30 % below
    # water's: no factor in the search range (published ± 6 %) brings them onto the bands
    assert result.ranking.best.label == "water (H2O)"
    assert result.ranking.margin() > 0.2


def test_summary_and_caution(small):
    _, result, lines = small
    steps = [line[:5] for line in lines if line.startswith("[")]
    # step 1 once per molecule, then steps 2-5 once each
    assert steps == ["[1/5]", "[1/5]", "[2/5]", "[3/5]", "[4/5]", "[5/5]"]
    text = result.summary
    assert "INVENTED" in text
    assert "2 of 3 bands polarized" in text
    for path, _ in result.files:
        assert path.name in text
    saved = (result.output_dir / "summary.txt").read_text()
    assert saved.count(CAUTION) == 1 and text in saved
    pol, dep = check_bands(result.assignment)
    # strongest polarized band: ν1 at 3657 (invented area 100); depolarized: ν3 (B2) at 3756
    assert pol.band_cm1 == pytest.approx(3657.0, abs=2.0)
    assert dep.band_cm1 == pytest.approx(3756.0, abs=2.0)


def test_summary_names_scaled_and_harmonic_wavenumbers_as_the_table_does(small):
    # Contract: every band the summary quotes is "SCALED (SPECIES; mode N, harmonic H)", and
    # mode N of the table file has harmonic wavenumber H and that species; SCALED is H times
    # the factor the summary states.
    import re

    _, result, _ = small
    text = " ".join(result.summary.split())
    quoted = re.findall(r"(\d+) \((\w+); mode (\d+)(?:\+\d+)*, harmonic ([\d.]+)\)", text)
    assert quoted, "the summary quotes no band with its mode and harmonic wavenumber"
    factor = float(re.search(r"harmonic × ([\d.]+)", text).group(1))
    rows = {}
    for line in (result.output_dir / "water_table.txt").read_text().splitlines():
        cells = line.split()
        if len(cells) > 5 and cells[0].isdigit() and cells[1][0].isdigit():
            rows[int(cells[0])] = (float(cells[1]), cells[2])
    for scaled, irrep, mode, harmonic in quoted:
        freq, species = rows[int(mode)]
        # The table prints two decimals and the summary one, each rounded from the full value:
        # the two can differ by 0.05 + 0.005 (3812.3503 prints "3812.35", which rounds to
        # 3812.3, and "3812.4").
        assert species == irrep and abs(freq - float(harmonic)) <= 0.0551
        assert int(scaled) == round(factor * freq)


def test_rerun_refuses_then_reuses_the_checkpoints(small):
    scenario, result, _ = small
    out = result.output_dir
    before = {p.name: p.stat().st_mtime_ns for p, _ in result.files}
    with pytest.raises(VibrapolError, match="--force"):
        run_demo(out, scenario=scenario, workers=1, progress=False, log=lambda m: None)
    assert {p.name: p.stat().st_mtime_ns for p, _ in result.files} == before
    again = run_demo(
        out, scenario=scenario, force=True, workers=1, progress=False, log=lambda m: None
    )
    assert again.reused == {"water": True, "h2s": True}
    np.testing.assert_allclose(again.table.freqs_cm1, result.table.freqs_cm1, rtol=0, atol=1e-9)


def test_cli_refuses_an_existing_output_without_force(tmp_path, capsys):
    out = tmp_path / "demo"
    out.mkdir()
    (out / "ranking.txt").write_text("earlier run\n")
    assert main(["demo", "--output-dir", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "--force" in err and str(out) in err
    assert (out / "ranking.txt").read_text() == "earlier run\n"
    assert sorted(p.name for p in out.iterdir()) == ["ranking.txt"]


@pytest.mark.parametrize(
    "args, words",
    [
        (["--level", "hf"], "METHOD/BASIS"),
        (["--workers", "0"], "--workers"),
    ],
)
def test_cli_bad_options(tmp_path, capsys, args, words):
    out = tmp_path / "never"
    assert main(["demo", "--output-dir", str(out), *args]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and words in err
    assert not out.exists()


def test_cli_output_dir_that_is_a_file(tmp_path, capsys):
    path = tmp_path / "file.txt"
    path.write_text("x")
    assert main(["demo", "--output-dir", str(path)]) == 2
    assert "not a folder" in capsys.readouterr().err


@pytest.mark.slow
def test_full_demo(tmp_path):
    result = run_demo(tmp_path / "demo", progress=False, log=lambda m: None)
    a = result.assignment
    assert result.ranking.best.label == "dichloromethane (CH2Cl2)"
    # Species of the liquid CH2Cl2 fundamentals (Shimanouchi 1972, from memory), in vibrapol's
    # C2v convention (yz = the CCl2 plane, B1 symmetric under the HCH plane): the CH2 stretch
    # and rock antisymmetric in the HCH plane are B1, the wag and the CCl2 stretch B2.
    species = {283: "A1", 702: "A1", 737: "B2", 898: "B1", 1155: "A2", 1265: "B2",
               1422: "A1", 2985: "A1", 3047: "B1"}  # fmt: skip
    for position, irrep in species.items():
        band = a.nearest(position)
        assert band.band_cm1 == pytest.approx(position, abs=2.0)
        assert band.irrep == irrep, position
    # the invented overtone near 2830 cm-1 has no fundamental
    assert not a.nearest(2830).assigned
    # HF/6-31G* published factor 0.8953 (MMR07, ../shared/reference/scale-factors.md)
    assert a.scale.factor == pytest.approx(0.8953, abs=0.02)
    pol, dep = check_bands(a)
    assert (round(pol.band_cm1), round(dep.band_cm1)) == (702, 737)
