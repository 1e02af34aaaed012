"""Published scale factors: the values against the reference compilation, and the check that a
factor belongs to the data it scales.

Reference: ../shared/reference/scale-factors.md (Table 1, fundamental factors, each seen in the
place its "where seen" column names).  The comparison with the whole table skips when the file is
absent; the rows quoted in the other tests name the file as their source.
"""

from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path

import numpy as np
import pytest

from spectrum_helpers import analytic_modeset
from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.modeset import Provenance
from vibrapol.spectrum import stick_spectrum
from vibrapol.spectrum.scaling import (
    SCALE_FACTORS,
    SOURCES,
    WHERE_SEEN,
    FrequencyScale,
    lookup_factor,
)

REFERENCE = Path(__file__).resolve().parents[2] / "shared" / "reference" / "scale-factors.md"


def _reference_rows() -> list[tuple[str, str, str, str, tuple[str, ...]]]:
    text = REFERENCE.read_text(encoding="utf-8")
    table = text.split("## Table 1")[1].split("## Table 2")[0]
    rows = []
    for line in table.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) != 7 or cells[0] in ("method", "") or cells[0].startswith("---"):
            continue
        method, basis, factor, kind, source, seen, _note = cells
        assert kind == "fundamental"
        rows.append((method, basis, factor, source, tuple(seen.split(", "))))
    return rows


@pytest.mark.skipif(not REFERENCE.is_file(), reason="reference compilation not present")
def test_every_factor_is_a_row_of_the_reference_table():
    want = _reference_rows()
    have = [(f.label, f.basis, f.factor, f.source, f.where_seen) for f in SCALE_FACTORS]
    assert len(have) == len(want) == 209  # the reference's own count of fundamental rows
    want = [(m, b, float(x), s, w) for m, b, x, s, w in want]
    assert sorted(have) == sorted(want)


def test_every_source_and_place_is_documented():
    for f in SCALE_FACTORS:
        assert f.source in SOURCES
        assert all(w in WHERE_SEEN for w in f.where_seen)


def test_b3lyp_631gd_default_is_merrick_moran_radom_2007():
    # scale-factors.md, Table 1: "B3LYP | 6-31G(d) | 0.9613 | fundamental | MMR07 | W-COLL";
    # 0.960 is CCCBDB's value, 0.9614 SR96's ("Values that common compilations round ...", 1).
    entry = lookup_factor("B3LYP/6-31G*")
    assert (entry.factor, entry.source, entry.doi) == (0.9613, "MMR07", "10.1021/jp073974n")
    assert lookup_factor("B3LYP/6-31G(d)@SR96").factor == 0.9614
    assert lookup_factor("B3LYP/6-31G(d)@CCCBDB").factor == 0.960
    assert lookup_factor("b3lyp/6-31g(d)", source="TDB").factor == 0.952


def test_description_carries_source_doi_and_where_seen_not_memory():
    text = FrequencyScale.published("HF/6-31G*").describe()
    assert "0.8953" in text and "MMR07" in text and "doi:10.1021/jp073974n" in text
    assert "W-COLL" in text and "from memory" not in text


def test_plain_mp2_is_ambiguous_and_the_message_names_the_choices():
    # scale-factors.md, Table 1: MP2/6-31G(d) has frozen-core (SR96 0.9434) and all-electron
    # (SR96 0.9427) rows, and MMR07 0.9441 with the core treatment not stated.
    with pytest.raises(VibrapolError, match="ambiguous: frozen-core and all-electron") as err:
        lookup_factor("MP2/6-31G*")
    assert "MP2(FC)/6-31G(d)@SR96 = 0.9434" in str(err.value)
    assert "MP2(AE)/6-31G(d)@SR96 = 0.9427" in str(err.value)
    assert lookup_factor("MP2(FC)/6-31G*").factor == 0.9434
    assert lookup_factor("MP2=FULL/6-31G*").factor == 0.9427
    assert lookup_factor("MP2/6-31G(d)@MMR07").factor == 0.9441


def test_a_source_giving_two_values_is_refused():
    # scale-factors.md, "Values that common compilations round ...", 9: K17 PBE/aug-cc-pVTZ is
    # listed twice (0.9910 and 0.9920).
    with pytest.raises(VibrapolError, match="two values"):
        lookup_factor("PBE/aug-cc-pVTZ@K17")


# -- a factor must belong to the data ---------------------------------------------------------

POLARIZED = np.diag([2.0, -1.0, 2.0])


def _modes(method: str, basis: str, name: str = "calc.out"):
    m = analytic_modeset([POLARIZED], [3000.0])
    return dataclasses.replace(
        m, provenance=Provenance(source_file=name, method=method, basis=basis)
    )


@pytest.mark.parametrize(
    ("method", "basis", "spec"),
    [("B3LYP", "STO-3G", "B3LYP/6-31G*"), ("B3LYP", "6-31G(d)", "HF/6-31G*")],
)
def test_factor_for_another_method_or_basis_is_refused(method, basis, spec):
    with pytest.raises(VibrapolError, match="does not belong to this output") as err:
        stick_spectrum(_modes(method, basis), scale=FrequencyScale.published(spec))
    assert f"{method}/{basis}" in str(err.value) and "--scale F" in str(err.value)


@pytest.mark.parametrize(
    ("method", "basis", "spec"),
    [
        ("RHF", "6-31g* (Cartesian d)", "HF/6-31G(d)"),  # the engine's provenance
        ("RB3LYP", "6-31G(d)", "B3LYP/6-31G*"),  # Gaussian's spelling
        ("MP2", "6-31G(d)", "MP2(FC)/6-31G*"),  # core not recorded: cannot differ
    ],
)
def test_spellings_of_the_same_method_and_basis_are_accepted(method, basis, spec):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        s = stick_spectrum(_modes(method, basis), scale=FrequencyScale.published(spec))
    assert s.positions_cm1[0] == pytest.approx(3000.0 * lookup_factor(spec).factor)


def test_unrecorded_method_is_warned_not_refused():
    with pytest.warns(AccuracyWarning, match="could not be checked"):
        stick_spectrum(_modes("", ""), scale=FrequencyScale.published("B3LYP/6-31G*"))


def test_a_given_factor_is_a_deliberate_choice():
    s = stick_spectrum(_modes("B3LYP", "STO-3G"), scale=FrequencyScale(0.9613))
    assert s.positions_cm1[0] == pytest.approx(3000.0 * 0.9613)


def test_table_command_refuses_a_factor_of_another_level(capsys):
    # examples/water.modes.json is RHF/6-31G*; a B3LYP factor does not belong to it.
    from _paths import PROJECT_ROOT
    from vibrapol.cli import main

    water = str(PROJECT_ROOT / "examples" / "water.modes.json")
    args = ["table", water, "--format", "markdown", "--scale-for", "B3LYP/6-31G*"]
    assert main(args) == 2
    assert "does not belong to this output" in capsys.readouterr().err
