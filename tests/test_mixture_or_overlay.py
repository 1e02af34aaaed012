"""Several sources: a Boltzmann mixture only for conformers, an overlay for anything else.

Sources: examples/water.modes.json (H2O, RHF/6-31G*, vibrapol's engine) and
tests/fixtures/orca6_nh3_planar.out (NH3, HF/STO-3G, ORCA 6.0.1 output).  Weighting the two by
their electronic energies (−76.0 vs −55.4 hartree) gave ammonia a weight of exp(−54000/2.5) = 0
before: the output was water alone.
"""

from __future__ import annotations

import csv
import dataclasses
import io

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.cli import main
from vibrapol.errors import VibrapolError
from vibrapol.sources import read_modes
from vibrapol.spectrum.conformers import conformer_spectrum, formula

WATER = PROJECT_ROOT / "examples" / "water.modes.json"
AMMONIA = PROJECT_ROOT / "tests" / "fixtures" / "orca6_nh3_planar.out"


@pytest.fixture(scope="module")
def pair():
    return read_modes(WATER), read_modes(AMMONIA)


def test_formula_in_hill_order(pair):
    assert [formula(m) for m in pair] == ["H2O", "H3N"]


def test_different_molecules_are_not_a_boltzmann_mixture(pair):
    with pytest.raises(VibrapolError, match=r"different molecules, not conformers.*--overlay"):
        conformer_spectrum(list(pair))
    with pytest.raises(VibrapolError, match="different molecules"):
        conformer_spectrum(list(pair), relative_energies_kjmol=[0.0, 0.0])


def test_conformers_at_different_levels_are_refused(pair):
    water = pair[0]
    other = dataclasses.replace(
        water, provenance=dataclasses.replace(water.provenance, method="B3LYP", basis="6-31G*")
    )
    with pytest.raises(VibrapolError, match="different levels of theory"):
        conformer_spectrum([water, other], relative_energies_kjmol=[0.0, 1.0])


def test_rank_mixture_runs_the_same_check(pair):
    from vibrapol.compare import mixture_candidate

    with pytest.raises(VibrapolError, match="different molecules.*one candidate each"):
        mixture_candidate(list(pair))


def test_cli_refuses_the_mixture_with_the_way_to_overlay(tmp_path, capsys):
    out = tmp_path / "mix.csv"
    assert main(["spectrum", str(WATER), str(AMMONIA), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--overlay" in err[0] and "H3N" in err[0]
    assert not out.exists()


def _table(text: str) -> list[dict[str, str]]:
    body = "".join(x for x in io.StringIO(text) if not x.startswith("#"))
    return list(csv.DictReader(io.StringIO(body)))


def test_overlay_gives_one_column_per_source_and_channel(tmp_path):
    # Contract: an overlay column equals the source's own spectrum on the same grid.
    both, alone = tmp_path / "both.csv", tmp_path / "water.csv"
    grid = ["--range-cm1", "1000:4500", "--step-cm1", "1"]
    assert main(["spectrum", str(WATER), str(AMMONIA), "--overlay", *grid, "-o", str(both)]) == 0
    assert main(["spectrum", str(WATER), *grid, "-o", str(alone)]) == 0
    rows, ref = _table(both.read_text()), _table(alone.read_text())
    assert list(rows[0]) == [
        "shift_cm1",
        f"vv:{WATER}",
        f"vh:{WATER}",
        f"vv:{AMMONIA}",
        f"vh:{AMMONIA}",
    ]
    np.testing.assert_allclose(
        [float(r[f"vv:{WATER}"]) for r in rows], [float(r["vv"]) for r in ref], rtol=1e-7
    )
    assert max(float(r[f"vv:{AMMONIA}"]) for r in rows) > 0  # ammonia is not weighted away
    assert "(weight 1)" in both.read_text().split("\n# columns")[0]
