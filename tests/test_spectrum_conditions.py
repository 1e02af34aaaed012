"""Ranges that hold every band, and conditions carried by every CSV file and figure.

Water (examples/water.modes.json, RHF/6-31G* computed with vibrapol's engine) has its harmonic
bend at 1826.5 cm⁻¹ and its O–H stretches at 4056.4 (A1) and 4175.2 (B2) cm⁻¹; the symmetric
stretch is its strongest Raman band.
"""

from __future__ import annotations

import csv
import io
import warnings

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.errors import AccuracyWarning
from vibrapol.output.spectra import grid_csv, sticks_csv, sweep_csv
from vibrapol.sources import read_modes
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.scaling import FrequencyScale
from vibrapol.spectrum.sweep import polar_sweep

WATER = PROJECT_ROOT / "examples" / "water.modes.json"


@pytest.fixture(scope="module")
def water():
    return read_modes(WATER)


def test_default_range_holds_every_band_of_water(water):
    sticks = stick_spectrum(water, quantity="intensity")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        grid = broaden(sticks)
    assert grid.shift_cm1[0] <= 100.0
    assert grid.shift_cm1[-1] >= 4175.2 + 5 * 8.0  # the B2 stretch with five widths to spare
    # the figure's normalisation therefore sees the strongest band, the A1 stretch
    assert abs(grid.shift_cm1[np.argmax(grid.channel("vv"))] - 4056.4) < 1.0


def test_explicit_range_that_hides_strong_bands_is_warned_by_name(water):
    sticks = stick_spectrum(water, quantity="intensity")
    with pytest.warns(AccuracyWarning, match=r"leaves out 4056 cm-1 \(A1\).*4175 cm-1 \(B2\)"):
        broaden(sticks, range_cm1=(100.0, 3600.0))


def test_range_leaving_out_only_weak_bands_is_quiet():
    # Two isotropic tensors, the second 0.1 × the first: its activity is 1 % of the first's
    # (activities are quadratic in the tensor), below the 5 % that is warned.
    from spectrum_helpers import analytic_modeset

    m = analytic_modeset([np.eye(3), 0.1 * np.eye(3)], [1000.0, 3000.0])
    sticks = stick_spectrum(m, quantity="activity")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        broaden(sticks, range_cm1=(500.0, 2000.0))
    strong = stick_spectrum(analytic_modeset([np.eye(3), 0.3 * np.eye(3)], [1000.0, 3000.0]))
    with pytest.warns(AccuracyWarning, match="3000 cm-1 at 9 % of the strongest"):
        broaden(strong, range_cm1=(500.0, 2000.0))


def test_cli_default_range_holds_the_stretches(tmp_path, monkeypatch):
    from vibrapol.cli import main

    out = tmp_path / "w.csv"
    assert main(["spectrum", str(WATER), "-o", str(out)]) == 0
    rows = _rows(out.read_text())
    assert float(rows[-1]["shift_cm1"]) >= 4175.2


def _rows(text: str) -> list[dict[str, str]]:
    # The reading that pandas.read_csv(comment="#") does: "#" lines are comments.
    body = "".join(x for x in io.StringIO(text) if not x.startswith("#"))
    return list(csv.DictReader(io.StringIO(body)))


def _comments(text: str) -> dict[str, str]:
    out = {}
    for line in text.splitlines():
        if line.startswith("# "):
            key, _, value = line[2:].partition(": ")
            out[key] = value
    return out


def test_every_csv_states_its_conditions(water):
    scale = FrequencyScale.published("HF/6-31G*")
    sticks = stick_spectrum(water, quantity="intensity", laser_nm=785.0, scale=scale)
    grid = broaden(sticks, LineShape("gaussian", 12.0))
    sweep = polar_sweep(water, quantity="intensity", laser_nm=785.0, scale=scale, top=2)
    for text in (grid_csv(grid), sticks_csv(sticks), sweep_csv(sweep)):
        c = _comments(text)
        assert c["laser"] == "785 nm" and c["temperature"] == "298.15 K"
        assert "deg scattering" in c["geometry"] and c["sample"]
        assert c["detector"].startswith("photon-counting")
        assert "0.8953" in c["scale"] and "doi:10.1021/jp073974n" in c["scale"]
        assert c["method"] == "RHF/6-31g*"
        assert "line shape" in c
        assert _rows(text)  # the table under the comments reads as CSV
    assert _comments(grid_csv(grid))["line shape"] == "gaussian, FWHM 12 cm-1"
    assert _comments(sticks_csv(sticks))["line shape"] == "none (sticks)"


def test_json_states_the_same_conditions(water):
    import json

    from vibrapol.output.spectra import grid_json

    scale = FrequencyScale.published("HF/6-31G*")
    sticks = stick_spectrum(water, laser_nm=785.0, scale=scale, detector="energy")
    doc = json.loads(grid_json(broaden(sticks)))
    h = doc["header"]
    assert (h["laser_nm"], h["detector"], h["method"]) == (785.0, "energy", "RHF/6-31g*")
    assert h["scale_source"]["doi"] == "10.1021/jp073974n" and h["scale_factor"] == 0.8953
    assert doc["lineshape"]["description"] == "lorentzian, FWHM 8 cm-1"


def test_pandas_reads_the_csv_with_comment_lines(water):
    pd = pytest.importorskip("pandas", reason="pandas is not installed")
    grid = broaden(stick_spectrum(water), range_cm1=(1000.0, 4500.0))
    frame = pd.read_csv(io.StringIO(grid_csv(grid)), comment="#")
    assert list(frame.columns) == ["shift_cm1", "vv", "vh"]
    assert len(frame) == grid.shift_cm1.size


def test_figures_carry_conditions_and_say_when_unscaled(water):
    pytest.importorskip("matplotlib")
    from vibrapol.plotting import depolarization_figure, polar_figure, spectrum_figure

    sticks = stick_spectrum(water, quantity="intensity", detector="energy")
    fig = spectrum_figure(broaden(sticks))
    ax = fig.axes[0]
    assert "unscaled harmonic" in ax.get_xlabel()
    caption = " ".join(fig._supxlabel.get_text().split())
    for word in ("532 nm", "298.15 K", "90° scattering", "energy detector", "lorentzian",
                 "FWHM 8", "RHF/6-31g*", "unscaled"):  # fmt: skip
        assert word in caption
    assert r"\tilde\nu_0" in caption  # formula typeset with mathtext subscripts
    fig.canvas.draw()  # mathtext must parse
    rho = depolarization_figure(sticks)
    assert "unscaled" in rho.axes[0].get_xlabel() and "532 nm" in rho._supxlabel.get_text()
    scaled = stick_spectrum(water, scale=FrequencyScale(0.9))
    assert "0.9" in spectrum_figure(broaden(scaled)).axes[0].get_xlabel()
    polar = polar_figure(polar_sweep(water, top=2))
    assert "180° scattering" in polar._supxlabel.get_text()
