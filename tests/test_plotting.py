"""Figures render headless to PNG, SVG and PDF with the expected text."""

import re

import numpy as np
import pytest

from spectrum_helpers import analytic_modeset
from vibrapol import plotting
from vibrapol.errors import VibrapolError
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum import orientation as o
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.sweep import polar_sweep

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def grid():
    # Totally symmetric band diag(1, 2, 3) (ρ = 9/192 ≈ 0.05, Long 2002) and a traceless one
    # (ρ = 3/4).
    m = analytic_modeset(
        [np.diag([1.0, 2.0, 3.0]), [[0, 1.0, 0], [1.0, 0, 0], [0, 0, 0]]], [1000.0, 2500.0]
    )
    return broaden(
        stick_spectrum(m), LineShape("lorentzian", 10.0), range_cm1=(200.0, 3400.0), step_cm1=1.0
    )


def svg_text(data: bytes) -> str:
    return data.decode("utf-8")


def png_size(data: bytes) -> tuple[int, int]:
    # PNG specification (W3C / ISO 15948): width and height are big-endian uint32 at bytes 16–24.
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


@pytest.mark.parametrize("layout", ["shared", "stacked"])
def test_spectrum_figure_svg_carries_labels_as_text(grid, layout):
    fig = plotting.spectrum_figure(grid, layout=layout)
    svg = svg_text(plotting.figure_bytes(fig, "svg"))
    # svg.fonttype "none" keeps text as <text> elements: wavenumber labels, ρ of the polarized
    # band (9/192 = 0.047 → "0.05"), channel names and the axis label must be searchable.
    for needle in ("1000", "2500", "ρ 0.05", "VV (parallel)", "VH (crossed)", "Raman shift"):
        assert needle in svg, needle
    assert "ρ 0.75" not in svg  # the depolarized band carries no ρ label
    width_pt = float(re.search(r'<svg[^>]*width="([0-9.]+)pt"', svg).group(1))
    assert width_pt == pytest.approx(3.3 * 72, abs=0.5)  # single journal column, 3.3 in


def test_png_is_300_dpi_at_journal_width(grid, tmp_path):
    fig = plotting.spectrum_figure(grid, width="double")
    path = plotting.save_figure(fig, tmp_path / "s.png")
    data = path.read_bytes()
    assert data[:8] == PNG_MAGIC
    w, h = png_size(data)
    assert w == pytest.approx(7.0 * 300, abs=2)  # double column, 7 in at 300 dpi
    assert h == pytest.approx(2.7 * 300, abs=2)  # default height at double width


def test_pdf_and_save_refuses_overwrite(grid, tmp_path):
    fig = plotting.spectrum_figure(grid)
    path = plotting.save_figure(fig, tmp_path / "s.pdf")
    data = path.read_bytes()
    assert data[:5] == b"%PDF-" and len(data) > 5000
    with pytest.raises(VibrapolError, match="already exists"):
        plotting.save_figure(fig, path)
    with pytest.raises(VibrapolError, match=r"\.png, \.svg or \.pdf"):
        plotting.save_figure(fig, tmp_path / "s.jpg")


def test_depolarization_figure_marks_three_quarters(grid):
    svg = svg_text(plotting.figure_bytes(plotting.depolarization_figure(grid.sticks), "svg"))
    # The limit ρ = 3/4 for non-totally-symmetric modes (Long 2002) is drawn and labelled.
    assert "3/4" in svg and "polarized" in svg and "depolarized" in svg and "1000" in svg


def test_polar_figure_has_one_panel_per_band():
    t = np.zeros((2, 3, 3))
    t[0, 2, 2] = 1.0
    t[1, 0, 1] = t[1, 1, 0] = 1.0
    sweep = polar_sweep(
        analytic_modeset(t, [900.0, 1300.0]), orientation=o.aligned("z", "y"), top=2
    )
    fig = plotting.polar_figure(sweep)
    assert len(fig.axes) == 2
    svg = svg_text(plotting.figure_bytes(fig, "svg"))
    assert "900 cm" in svg and "1300 cm" in svg and "parallel" in svg and "crossed" in svg


def test_irrep_formatting():
    assert plotting.format_irrep("A1g") == "A$_{1g}$"
    assert plotting.format_irrep("E'") == "E'"
    assert plotting.format_irrep("B2") == "B$_{2}$"
