"""DataFrames and notebook views of the tables vibrapol writes.

Contract checked: each ``to_dataframe()`` has the columns of its CSV file, in order, and the
values the CSV shows (to the CSV's printed precision, read back with
``pandas.read_csv(comment="#")``); ``df.attrs`` carries the conditions of the ``#`` lines;
``repr`` is a few lines naming the source; ``_repr_html_`` escapes every text.  The numbers
come from the bundled water example (HF/6-31G*, computed with PySCF) and an invented VV/VH pair
(vibrapol.measured.synthetic, labelled so).
"""

from __future__ import annotations

import dataclasses
import io
import re
import warnings

import numpy as np
import pytest

from _paths import PROJECT_ROOT, qc_output
from vibrapol import measured, raman_table, read_modes
from vibrapol.compare import assign, candidate_from_modes, rank
from vibrapol.measured.synthetic import TrueBand, synthetic_pair
from vibrapol.output import assignments as out_assign
from vibrapol.output import bands as out_bands
from vibrapol.output import spectra as out_spectra
from vibrapol.output import tables as out_tables
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.scaling import FrequencyScale
from vibrapol.symmetry import mode_symmetry

pd = pytest.importorskip("pandas")

WATER = PROJECT_ROOT / "examples" / "water.modes.json"


@pytest.fixture(scope="module")
def objects():
    """Table, sticks, grid, measured bands, assignment and ranking of the water example."""
    modes = read_modes(WATER)
    sym = mode_symmetry(modes)
    table = raman_table(sym.modes, symmetry=sym)
    sticks = stick_spectrum(
        modes,
        quantity="intensity",
        laser_nm=785.0,
        temperature_k=300.0,
        scale=FrequencyScale.published("HF/6-31G*"),
        channels=["nv", "nh"],
    )
    grid = broaden(sticks, LineShape("lorentzian", fwhm_cm1=10.0), range_cm1=(1000, 4000))
    # invented bands at water's gas-phase fundamentals (Shimanouchi 1972, values from memory)
    x = np.arange(1000.0, 4000.0, 1.0)
    true = [TrueBand(1595, 14, 40, rho=0.55), TrueBand(3657, 20, 300, rho=0.08)]
    true.append(TrueBand(3756, 20, 120, rho=0.75))
    pair = synthetic_pair(x, true, noise_sigma=0.02)
    bands = measured.measure_bands(pair)
    first = candidate_from_modes(modes, laser_nm=532.0)
    heavy = modes.subset([0, 1])  # a second candidate, one band short
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        second = candidate_from_modes(heavy, laser_nm=532.0, label="two <modes> & more")
    result = assign(first, bands, pair=pair)
    ranking = rank([first, second], bands, pair=pair)
    return {
        "table": (table, out_tables.table_csv(table), out_tables.TABLE_CSV_FORMATS),
        "sticks": (
            sticks,
            out_spectra.sticks_csv(sticks),
            {**dict.fromkeys(sticks.channels, ".8g"), **out_spectra.STICK_CSV_FORMATS},
        ),
        "grid": (
            grid,
            out_spectra.grid_csv(grid),
            {"shift_cm1": ".4f", **dict.fromkeys(grid.channels, ".8g")},
        ),
        "bands": (
            bands,
            out_bands.measured_bands_csv(bands),
            {
                **dict.fromkeys(out_bands.MEASURED_BAND_COLUMNS, ".6g"),
                **out_bands.MEASURED_BAND_CSV_FORMATS,
            },
        ),
        "assignment": (
            result,
            out_assign.assignment_csv(result),
            out_assign.ASSIGNMENT_CSV_FORMATS,
        ),
        "ranking": (ranking, out_assign.ranking_csv(ranking), out_assign.RANKING_CSV_FORMATS),
    }


def _tolerance(fmt: str) -> dict[str, float]:
    """Half a unit of the last digit a format prints (".4f", ".6g")."""
    digits = int(re.fullmatch(r"\.(\d+)[fg]", fmt).group(1))
    if fmt.endswith("f"):
        return {"rtol": 0.0, "atol": 0.5 * 10.0**-digits * (1 + 1e-9)}
    return {"rtol": 0.5 * 10.0 ** (1 - digits) * (1 + 1e-9), "atol": 0.0}


def _check_against_csv(frame, text, formats):
    # everything as the text it is in the file, so that "4 5" and "" stay what they are
    csv = pd.read_csv(io.StringIO(text), comment="#", dtype=str, keep_default_na=False)
    assert list(frame.columns) == list(csv.columns)
    assert len(frame) == len(csv)
    for name in frame.columns:
        ours, theirs = frame[name], list(csv[name])
        if pd.api.types.is_bool_dtype(ours):
            shown = ["" if pd.isna(v) else ("true" if v else "false") for v in ours]
            assert shown == theirs, name
        elif pd.api.types.is_numeric_dtype(ours):
            read = np.array([float(v) if v else np.nan for v in theirs])
            assert np.array_equal(np.isnan(read), np.isnan(ours.to_numpy(float))), name
            tol = _tolerance(formats[name]) if name in formats else {"rtol": 0, "atol": 0}
            np.testing.assert_allclose(read, ours.to_numpy(float), equal_nan=True, **tol)
        else:
            assert [str(v) for v in ours] == theirs, name


@pytest.mark.parametrize("which", ["table", "sticks", "grid", "bands", "assignment", "ranking"])
def test_dataframe_has_the_csv_columns_and_values(objects, which):
    """Contract: one source for the CSV file and the DataFrame (columns, order, values)."""
    obj, text, formats = objects[which]
    frame = obj.to_dataframe()
    _check_against_csv(frame, text, formats)
    assert frame.attrs  # the conditions travel with the frame


def test_the_check_fails_when_a_frame_drifts_from_its_csv(objects):
    """The comparison above can fail: a changed value or a renamed column is caught."""
    table, text, formats = objects["table"]
    frame = table.to_dataframe()
    moved = frame.assign(frequency_cm1=frame["frequency_cm1"] + 0.001)
    with pytest.raises(AssertionError):
        _check_against_csv(moved, text, formats)
    with pytest.raises(AssertionError):
        _check_against_csv(frame.rename(columns={"a2": "a2_ang4"}), text, formats)


def test_table_frame_keeps_full_precision_and_header(objects):
    table = objects["table"][0]
    frame = table.to_dataframe()
    # the CSV rounds the frequency to 4 decimals; the frame keeps the ModeSet's number
    assert np.array_equal(frame["frequency_cm1"].to_numpy(), table.freqs_cm1)
    assert frame.attrs["source"] == str(WATER)
    assert frame.attrs["point_group"] == "C2v"
    assert frame.attrs["units"]["activity"] == "angstrom^4/amu"
    assert tuple(frame.attrs["warnings"]) == table.warnings
    assert frame["irrep"].tolist() == ["A1", "A1", "B2"]
    assert frame["polarized"].tolist() == [True, True, False]


def test_unknown_values_are_missing_not_invented():
    """A source with activities only: a², γ², ρ unknown → NaN, 'polarized' unknown → NA."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the generic reader announces the ratios it loses
        modes = read_modes(PROJECT_ROOT / "tests" / "fixtures" / "qchem54_co2.out", kind="cclib")
        frame = raman_table(modes).to_dataframe()
    assert frame["a2"].isna().all() and frame["rho_linear"].isna().all()
    assert frame["polarized"].isna().all() and str(frame["polarized"].dtype) == "boolean"
    assert frame["ir_active"].isna().all()  # no symmetry given
    np.testing.assert_allclose(frame["activity"], modes.activity)  # as read, not changed


def test_spectrum_frames_carry_the_conditions(objects):
    sticks, grid = objects["sticks"][0], objects["grid"][0]
    for frame in (sticks.to_dataframe(), grid.to_dataframe()):
        assert frame.attrs["laser_nm"] == 785.0
        assert frame.attrs["temperature_k"] == 300.0
        assert frame.attrs["scale_factor"] == pytest.approx(0.8953)  # MMR07, HF/6-31G*
        assert frame.attrs["conditions"]["laser"] == "785 nm"
    assert grid.to_dataframe().attrs["lineshape"] == "lorentzian, FWHM 10 cm-1"


def test_assignment_and_ranking_frames(objects):
    result, ranking = objects["assignment"][0], objects["ranking"][0]
    frame = result.to_dataframe()
    assert frame.attrs["scale_factor"] == result.scale.factor
    assert frame["mode"].tolist() == [b.mode for b in result.bands]
    ranked = ranking.to_dataframe()
    assert ranked["rank"].tolist() == [1, 2]
    assert ranked["candidate"].tolist() == list(ranking.labels)


# -- repr and HTML ----------------------------------------------------------------------------


def _all(objects):
    modes = read_modes(WATER)
    return [modes, *(v[0] for v in objects.values())]


def test_repr_is_short_and_names_the_source(objects):
    for obj in _all(objects):
        text = repr(obj)
        assert len(text.splitlines()) <= 5, text
        assert len(text) < 700, text
        # the measured bands come from an invented pair in memory; the rest from the file
        source = "(in memory)" if type(obj).__name__ == "MeasuredBands" else "water.modes.json"
        assert source in text, text


def test_repr_of_a_large_mode_set_stays_short():
    """The issue's example: a 54-mode table printed 6,000 characters of arrays."""
    modes = read_modes(qc_output("Gaussian16-A.03_dvb_raman.fchk"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table = raman_table(modes)
    for obj in (modes, table):
        assert "54 modes" in repr(obj)
        assert len(repr(obj)) < 600
        assert "Gaussian16-A.03_dvb_raman.fchk" in repr(obj)


def test_html_shows_every_row_and_the_warnings(objects):
    table = objects["table"][0]
    shown = dataclasses.replace(table, warnings=("a warning of our own",))
    page = shown._repr_html_()
    assert page.count("<tr>") == 1 + table.n_modes  # header and one row per mode
    assert "a warning of our own" in page
    for name in out_tables.TABLE_COLUMNS:
        assert f"<th>{name}</th>" in page


def test_html_escapes_text(objects):
    """Contract: a file name or label with markup is shown as text, never as markup."""
    modes = read_modes(WATER)
    bad = "<script>alert('x')</script> & co"
    hostile = dataclasses.replace(
        modes, provenance=dataclasses.replace(modes.provenance, source_file=bad)
    )
    for obj in (hostile, raman_table(hostile)):
        page = obj._repr_html_()
        assert "<script>" not in page
        assert "&lt;script&gt;" in page and "&amp; co" in page
    ranking = objects["ranking"][0]
    page = ranking._repr_html_()
    assert "two <modes>" not in page and "two &lt;modes&gt; &amp; more" in page


def test_long_html_tables_are_cut_in_the_middle(objects):
    grid = objects["grid"][0]
    rows = [{"x": float(i)} for i in range(500)]
    from vibrapol.display import MAX_HTML_ROWS, html_table

    page = html_table(["x"], rows)
    assert page.count("<tr>") == 1 + MAX_HTML_ROWS + 1  # header, rows shown, the gap
    assert f"… {500 - MAX_HTML_ROWS} more rows …" in page
    assert grid._repr_html_().count("<tr>") == 1 + grid.sticks.n_bands


def test_pandas_is_not_imported_by_vibrapol_or_by_a_repr():
    """Start-up contract: pandas loads only when a DataFrame is asked for."""
    import subprocess
    import sys

    code = (
        "import sys, vibrapol\n"
        "m = vibrapol.read_modes('examples/water.modes.json')\n"
        "t = vibrapol.raman_table(m); repr(m); m._repr_html_(); repr(t); t._repr_html_()\n"
        "assert 'pandas' not in sys.modules, 'pandas loaded'\n"
        "t.to_dataframe(); assert 'pandas' in sys.modules\n"
    )
    env = {"PYTHONPATH": str(PROJECT_ROOT / "src"), "PATH": ""}
    done = subprocess.run(
        [sys.executable, "-c", code], cwd=PROJECT_ROOT, capture_output=True, text=True, env=env
    )
    assert done.returncode == 0, done.stderr


def test_formula_in_repr():
    from vibrapol.display import formula

    # Hill order (common practice): C, H, then alphabetical; no carbon: alphabetical
    assert formula(["C", "Cl", "Cl", "H", "H"]) == "CH2Cl2"
    assert formula(["O", "H", "H"]) == "H2O"
