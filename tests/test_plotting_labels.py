"""Band labels never overlap each other, the legend or the axes edge, and the strongest come first.

These are contract tests of the label placer, measured on the rendered figures: every label's
text box is taken from matplotlib's renderer (what is drawn), not from the placer's own
bookkeeping.  Spectra from a real Gaussian 16 output (divinylbenzene, B3LYP) and from seeded
random stick sets with crowded bands.
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest
from matplotlib import rc_context
from matplotlib.text import Annotation, Text

from _paths import qc_output
from spectrum_helpers import analytic_modeset
from vibrapol import plotting
from vibrapol.plotting.labels import (
    Box,
    Candidate,
    box_of,
    greedy_place,
    segment_hits_box,
)
from vibrapol.plotting.style import STYLE
from vibrapol.sources import read_modes
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import LineShape

#: Slack in display pixels for rounding of text extents (well under one pixel at 100 dpi).
SLACK = 0.5


def label_boxes(fig, ax, skip: str = "3/4") -> list[tuple[str, Box]]:
    # Rendered as save_figure renders: inside the journal style (mathtext settings are read at
    # draw time).
    with rc_context(STYLE):
        fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    return [
        # Text's own extent: an Annotation's would include its leader line.
        (t.get_text(), box_of(Text.get_window_extent(t, renderer)))
        for t in ax.texts
        if isinstance(t, Annotation) and skip not in t.get_text()
    ]


def assert_clean(fig, ax, labels: list[tuple[str, Box]], extra: list[Box] = ()) -> None:
    renderer = fig.canvas.get_renderer()
    frame = box_of(ax.get_window_extent(renderer))
    for text, b in labels:
        assert b.inside(frame, -SLACK), f"{text!r} leaves the axes: {b} not in {frame}"
    for (ta, a), (tb, b) in itertools.combinations(labels, 2):
        assert not a.overlaps(b, -SLACK), f"{ta!r} overlaps {tb!r}"
    legend = ax.get_legend()
    if legend is not None:
        lb = box_of(legend.get_window_extent(renderer))
        for text, b in labels:
            assert not b.overlaps(lb, -SLACK), f"{text!r} overlaps the legend"
    for text, b in labels:
        for o in extra:
            assert not b.overlaps(o, -SLACK), f"{text!r} overlaps {o}"


@pytest.fixture(scope="module")
def dvb_sticks():
    path = qc_output("Gaussian16-A.03_dvb_raman.out")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return stick_spectrum(read_modes(path), quantity="intensity")


def test_dvb_spectrum_labels_the_strongest_bands_without_overlap(dvb_sticks):
    # Real output: divinylbenzene, Gaussian 16 A.03.  Its five strongest VV bands at 532 nm lie
    # within 550 cm-1 (1263 and 1296 only 33 cm-1 apart): the old placer overprinted
    # "1295"/"1564", pushed "263" over the left spine and left 1296 unlabelled.
    grid = broaden(dvb_sticks)
    fig = plotting.spectrum_figure(grid, label_count=6)
    ax = fig.axes[0]
    labels = label_boxes(fig, ax)
    assert_clean(fig, ax, labels)
    shown = (dvb_sticks.positions_cm1 >= grid.shift_cm1[0]) & (
        dvb_sticks.positions_cm1 <= grid.shift_cm1[-1]
    )
    vv = np.where(shown, dvb_sticks.channel("vv"), -np.inf)
    strongest = np.argsort(-vv)[:5]
    texts = " ".join(t for t, _ in labels)
    for i in strongest:
        assert f"{dvb_sticks.positions_cm1[i]:.0f}" in texts, dvb_sticks.positions_cm1[i]
    assert len(labels) == 6


def test_dvb_rho_figure_labels_clear_of_markers_and_each_other(dvb_sticks):
    fig = plotting.depolarization_figure(dvb_sticks, label_count=8)
    ax = fig.axes[0]
    labels = label_boxes(fig, ax)
    assert len(labels) >= 6
    renderer = fig.canvas.get_renderer()
    markers = []
    for coll in ax.collections:
        sizes = coll.get_sizes()
        for k, (px, py) in enumerate(coll.get_offset_transform().transform(coll.get_offsets())):
            r = 0.5 * np.sqrt(sizes[k % len(sizes)]) * fig.dpi / 72.0
            markers.append(Box(px - r, py - r, px + r, py + r))
    fixed = [
        box_of(t.get_window_extent(renderer))
        for t in ax.texts
        if not (isinstance(t, Annotation) and t.arrow_patch is None and t.get_text()[:1].isdigit())
        and "3/4" in t.get_text()
    ]
    assert_clean(fig, ax, labels, markers + fixed)
    # The figure says what ρ and the marker size are.
    assert "linearly polarized" in ax.get_title(loc="left")
    assert fig.legends  # outside the axes, so the markers near 3/4 stay visible
    page = box_of(fig.bbox)
    for legend in fig.legends:
        assert box_of(legend.get_window_extent(renderer)).inside(page, -SLACK)
    assert "marker area" in ax.get_title(loc="left")


@pytest.mark.parametrize("seed", range(6))
def test_crowded_random_spectra_never_overlap(seed):
    # 12–30 bands with random heights, a third of them crowded into 150 cm-1.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(12, 30))
    pos = np.sort(
        np.concatenate([rng.uniform(200, 3400, n - n // 3), rng.uniform(1400, 1550, n // 3)])
    )
    tensors = []
    for _ in range(n):
        d = rng.normal(size=(3, 3))
        tensors.append(0.5 * (d + d.T) + rng.uniform(0, 2) * np.eye(3))
    sticks = stick_spectrum(analytic_modeset(tensors, list(pos)))
    grid = broaden(sticks, LineShape("lorentzian", 10.0), range_cm1=(100.0, 3600.0))
    for layout in ("shared", "stacked"):
        fig = plotting.spectrum_figure(grid, label_count=10, layout=layout)
        ax = fig.axes[0]
        assert_clean(fig, ax, label_boxes(fig, ax))
    fig = plotting.depolarization_figure(sticks, label_count=10)
    assert_clean(fig, fig.axes[0], label_boxes(fig, fig.axes[0]))


def test_greedy_repair_moves_one_label_to_make_room():
    # Contract: a label blocked by exactly one earlier label is placed when that label has
    # another free place.  Label 0 has two places, label 1 only the first place of label 0.
    frame = Box(0, 0, 100, 100)
    a0, a1 = Box(10, 10, 30, 20), Box(60, 10, 80, 20)
    kept = greedy_place([[Candidate(a0), Candidate(a1)], [Candidate(a0)]], [], frame, 5, 1.0)
    assert sorted((k, c.box) for k, c in kept) == [(0, a1), (1, a0)]


def test_segment_box_intersection():
    # Contract of the leader-line test: crossing, touching a corner, and missing.
    b = Box(0, 0, 10, 10)
    assert segment_hits_box((-5, 5, 15, 5), b)
    assert segment_hits_box((-5, -5, 0, 0), b)
    assert not segment_hits_box((-5, 11, 15, 11), b)
    assert not segment_hits_box((11, -5, 11, 15), b)


def test_match_figure_says_what_cleaning_and_shows_rho():
    from vibrapol import measured
    from vibrapol.compare import assign, candidate_from_modes
    from vibrapol.plotting.match import match_figure

    root = __import__("pathlib").Path(__file__).resolve().parents[1]
    data = root / "src" / "vibrapol" / "data" / "dichloromethane_liquid_vv_vh_INVENTED.txt"
    cand = candidate_from_modes(
        read_modes(root / "examples" / "solvent-check" / "dichloromethane.modes.json")
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        pair = measured.read_pair(data, None)
        pair, _, _ = measured.clean_pair(pair)
        bands = measured.measure_bands(pair, measured.find_bands(pair.vv))
        result = assign(cand, bands, pair=pair)
    fig = match_figure(result, pair)
    ax = fig.axes[0]
    title = ax.get_title()
    assert "measured:" in title and "baseline" in title
    rho_labels = [(t, b) for t, b in label_boxes(fig, ax) if t.startswith("ρ")]
    # Every measured band with a ratio inside the range gets one (invented demo data: 10
    # bands, all with VH).
    with_rho = [b for b in result.bands if np.isfinite(b.band_rho)]
    assert len(rho_labels) >= len(with_rho) - 2
    renderer = fig.canvas.get_renderer()
    modes = [
        box_of(t.get_window_extent(renderer))
        for t in ax.texts
        if isinstance(t, Text) and not isinstance(t, Annotation) and t.get_rotation() == 90
    ]
    for a, b in itertools.combinations(modes, 2):
        assert not a.overlaps(b, -SLACK)
    assert_clean(fig, ax, rho_labels, modes)


def test_unresolved_bands_get_their_own_marker(dvb_sticks):
    # Gaussian 16 dvb: the Ag band at 673.6 cm-1 has rho_linear 0.704, totally symmetric but
    # within the 0.05 margin of 3/4 (vibrapol.polarization): the table calls it "p?", so the
    # sticks and the rho figure must not show it as depolarized.
    k = int(np.argmin(np.abs(dvb_sticks.positions_cm1 - 673.6)))
    assert dvb_sticks.irreps[k] == "Ag" and 0.70 <= dvb_sticks.rho_linear[k] < 0.75
    assert dvb_sticks.unresolved[k] and not dvb_sticks.polarized[k]
    fig = plotting.depolarization_figure(dvb_sticks)
    ax = fig.axes[0]
    offsets = [c.get_offsets() for c in ax.collections if len(c.get_offsets())]
    hit = [
        i
        for i, pts in enumerate(offsets)
        if np.any(np.isclose(pts[:, 0], dvb_sticks.positions_cm1[k]))
    ]
    assert hit == [2]  # the third marker set: polarized, depolarized, unresolved
