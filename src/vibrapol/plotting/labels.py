"""Placing labels on figures without collisions (used by :mod:`vibrapol.plotting`).

One greedy placer serves every figure: labels are taken in priority order (strongest band
first); each has a short list of candidate boxes, best first, and takes the first one that lies
inside the axes and overlaps no obstacle (legend, markers, fixed text), no label already placed
and no leader line already drawn.  A label with no free candidate stays off the figure, and the
next one is tried.  Everything is measured in display pixels from the rendered text, after the
figure's layout has been fixed, so what is checked is what is drawn.

Two kinds of labels use it:

* band labels above spectral peaks (:func:`place_labels`): centred above the band, then raised
  in rows or moved beside it, joined to the peak by a thin leader line; the y limit is chosen
  as the lowest that lets the wanted number of labels fit (the curves keep at least
  :data:`MIN_CURVE_FRACTION` of the height);
* labels beside scatter points (:func:`place_point_labels`): right, left, above, below and the
  diagonals of each point, then farther out with a leader line.

A leaner iterative library (repelling texts step by step) does not fit here: it gives no
guarantee that labels end free of overlaps or inside the axes, nor that the strongest bands
keep their labels; the tests measure exactly these properties on the rendered figures.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.backend_bases import RendererBase
from matplotlib.figure import Figure
from matplotlib.text import Annotation
from matplotlib.transforms import BboxBase

#: Gap between a peak (or the curves) and a label, in points.
OFFSET_PT = 2.0
#: Gap kept between two labels, and between a label and the axes edge, in points.
PAD_PT = 1.0
#: Space kept above the highest curve, as a fraction of its height.
CURVE_HEADROOM = 0.08
#: The curves keep at least this fraction of the axes height when the top is raised for labels.
MIN_CURVE_FRACTION = 0.6
#: Horizontal shifts of a band label's centre, in label widths (0 = centred above the band).
SHIFTS = (0.0, 0.6, -0.6, 1.1, -1.1)
#: Rows a band label may be raised by, in label heights.
ROWS = 4
#: Rise of a label placed away from its band, above the peak, in label heights.
SIDE_RISE = 0.5


@dataclass(frozen=True)
class Box:
    """An axis-aligned rectangle in display pixels."""

    x0: float
    y0: float
    x1: float
    y1: float

    def overlaps(self, other: Box, pad: float = 0.0) -> bool:
        """True when the two boxes, grown by ``pad`` on every side, share area."""
        return not (
            self.x1 + pad <= other.x0
            or other.x1 + pad <= self.x0
            or self.y1 + pad <= other.y0
            or other.y1 + pad <= self.y0
        )

    def inside(self, frame: Box, pad: float = 0.0) -> bool:
        """True when the box lies inside ``frame`` shrunk by ``pad``."""
        return (
            self.x0 >= frame.x0 + pad
            and self.x1 <= frame.x1 - pad
            and self.y0 >= frame.y0 + pad
            and self.y1 <= frame.y1 - pad
        )


def box_of(bbox: BboxBase) -> Box:
    """A :class:`Box` from a matplotlib ``Bbox``."""
    return Box(float(bbox.x0), float(bbox.y0), float(bbox.x1), float(bbox.y1))


Segment = tuple[float, float, float, float]


def segment_hits_box(seg: Segment, box: Box) -> bool:
    """True when the straight segment (x0, y0, x1, y1) crosses the box (Liang–Barsky clip)."""
    x0, y0, x1, y1 = seg
    dx, dy = x1 - x0, y1 - y0
    t0, t1 = 0.0, 1.0
    for p, q in ((-dx, x0 - box.x0), (dx, box.x1 - x0), (-dy, y0 - box.y0), (dy, box.y1 - y0)):
        if p == 0.0:
            if q < 0.0:
                return False
            continue
        t = q / p
        if p < 0.0:
            t0 = max(t0, t)
        else:
            t1 = min(t1, t)
        if t0 > t1:
            return False
    return True


@dataclass(frozen=True)
class Candidate:
    """One place a label may take: its box and, when away from its anchor, a leader line."""

    box: Box
    leader: Segment | None = None


def greedy_place(
    options: Sequence[Sequence[Candidate]],
    obstacles: Sequence[Box],
    frame: Box,
    count: int,
    pad: float,
    curves: Sequence[tuple[np.ndarray, np.ndarray]] = (),
) -> list[tuple[int, Candidate]]:
    """Choose a place for up to ``count`` labels, in the order given.

    Parameters
    ----------
    options : sequence of sequence of Candidate
        Candidates of each label, best first; labels in priority order.
    obstacles : sequence of Box
        Places no label may cover (legend, markers, fixed text).
    frame : Box
        Every label must lie inside it.
    count : int
        Most labels placed.
    pad : float
        Gap in pixels kept between labels and from the frame edge.
    curves : sequence of (ndarray, ndarray)
        Plotted lines as display-pixel vertices (x ascending); no label may cover a vertex.

    Returns
    -------
    list of (int, Candidate)
        Index into ``options`` and the chosen candidate of each label placed, in the order
        placed.
    """

    def clashes(cand: Candidate, others: Sequence[tuple[int, Candidate]]) -> list[int]:
        """Positions in ``others`` of the labels ``cand`` collides with."""
        b = cand.box
        hit = []
        for n, (_, c) in enumerate(others):
            if (
                b.overlaps(c.box, pad)
                or (c.leader is not None and segment_hits_box(c.leader, b))
                or (cand.leader is not None and segment_hits_box(cand.leader, c.box))
            ):
                hit.append(n)
        return hit

    def on_curve(b: Box) -> bool:
        for xs, ys in curves:
            lo, hi = np.searchsorted(xs, [b.x0 - pad, b.x1 + pad])
            seg = ys[max(lo - 1, 0) : hi + 1]
            if seg.size and np.any((seg >= b.y0 - pad) & (seg <= b.y1 + pad)):
                return True
        return False

    def free(cand: Candidate) -> bool:
        b = cand.box
        return (
            b.inside(frame, pad) and not any(b.overlaps(o) for o in obstacles) and not on_curve(b)
        )

    kept: list[tuple[int, Candidate]] = []
    for k, cands in enumerate(options):
        if len(kept) >= count:
            break
        usable = [c for c in cands if free(c)]
        chosen = next((c for c in usable if not clashes(c, kept)), None)
        if chosen is None:
            # Repair: take a place blocked by exactly one label, and move that label to another
            # of its places that is free of everything, this one included.
            for cand in usable:
                hit = clashes(cand, kept)
                if len(hit) != 1:
                    continue
                n = hit[0]
                j = kept[n][0]
                rest = [*kept[:n], *kept[n + 1 :], (k, cand)]
                move = next(
                    (c for c in options[j] if free(c) and not clashes(c, rest)),
                    None,
                )
                if move is not None:
                    kept[n] = (j, move)
                    chosen = cand
                    break
        if chosen is not None:
            kept.append((k, chosen))
    return kept


def fix_layout(fig: Figure) -> RendererBase:
    """Render once, then freeze the layout so that later text does not move the axes."""
    fig.canvas.draw()
    fig.set_layout_engine("none")
    # get_renderer exists on the raster canvases (Agg, which new_figure attaches), not the base
    return fig.canvas.get_renderer()  # type: ignore[attr-defined]


def _text_size(ax: Axes, renderer: RendererBase, text: str, **text_kw: Any) -> tuple[float, float]:
    probe = ax.text(0, 0, text, **text_kw)
    ext = probe.get_window_extent(renderer)
    probe.remove()
    return float(ext.width), float(ext.height)


def _legend_box(ax: Axes, renderer: RendererBase, frame: Box) -> Box | None:
    legend = ax.get_legend()
    if legend is None:
        return None
    lb = legend.get_window_extent(renderer)
    # Pin the legend where "best" put it: later text must not move it.
    legend.set_loc(
        ((lb.x0 - frame.x0) / (frame.x1 - frame.x0), (lb.y0 - frame.y0) / (frame.y1 - frame.y0))
    )
    return box_of(lb)


def place_labels(
    fig: Figure,
    ax: Axes,
    candidates: Sequence[tuple[float, str]],
    x: np.ndarray,
    curves: Sequence[np.ndarray],
    count: int,
    curve_top: float,
    **text_kw: Any,
) -> list[Annotation]:
    """Label up to ``count`` bands above the curves, strongest first.

    Parameters
    ----------
    fig, ax : Figure, Axes
        The x limits of ``ax`` must be set; its y limits are set here (from 0).
    candidates : sequence of (float, str)
        Band position (x data) and label text, in priority order.
    x : ndarray
        x values of the plotted curves.
    curves : sequence of ndarray
        The plotted y arrays (data units), so labels clear them.
    count : int
        Most labels drawn.
    curve_top : float
        Height of the highest curve (data units).
    **text_kw
        Passed to every label (font size, colour, ...).

    Returns
    -------
    list of Annotation
        The labels drawn, strongest first.
    """
    renderer = fix_layout(fig)
    frame = box_of(ax.get_window_extent(renderer))
    x0, x1 = ax.get_xlim()
    width_px = frame.x1 - frame.x0
    height_px = frame.y1 - frame.y0
    px_per_pt = fig.dpi / 72.0
    offset, pad = OFFSET_PT * px_per_pt, PAD_PT * px_per_pt
    legend = _legend_box(ax, renderer, frame)
    obstacles = [legend] if legend is not None else []
    envelope = np.max(np.vstack(curves), axis=0)
    inside = [(p, t) for p, t in candidates if x0 <= p <= x1]
    sizes = [_text_size(ax, renderer, t, **text_kw) for _, t in inside]

    def to_px(xd: float) -> float:
        return frame.x0 + (xd - x0) / (x1 - x0) * width_px

    def to_data(xp: float) -> float:
        return x0 + (xp - frame.x0) / width_px * (x1 - x0)

    def options(top: float) -> list[list[Candidate]]:
        scale = height_px / top
        out = []
        for (pos, _), (w, h) in zip(inside, sizes, strict=True):
            peak = float(np.interp(pos, x, envelope)) * scale
            anchor_x, anchor_y = to_px(pos), frame.y0 + peak
            cands = []
            for row in range(ROWS):
                for shift in SHIFTS:
                    cx = anchor_x + shift * w
                    lo, hi = to_data(cx - w / 2), to_data(cx + w / 2)
                    under = (x >= lo) & (x <= hi)
                    floor = float(envelope[under].max()) * scale if under.any() else 0.0
                    away = bool(shift or row)
                    if away:  # beside or above the band: clear of the peak, with a leader line
                        floor = max(floor, peak) + SIDE_RISE * h
                    y0 = frame.y0 + floor + offset + row * (h + pad)
                    box = Box(cx - w / 2, y0, cx + w / 2, y0 + h)
                    leader = None
                    if away:
                        end_x = cx - w / 2 if shift > 0 else cx + w / 2 if shift < 0 else cx
                        leader = (anchor_x, anchor_y + 0.5 * offset, end_x, y0)
                    cost = (y0 - frame.y0) + (h if away else 0.0) + abs(shift) * 0.5 * h
                    cands.append((cost, Candidate(box, leader)))
            cands.sort(key=lambda c: c[0])
            out.append([c for _, c in cands])
        return out

    lowest = (1.0 + CURVE_HEADROOM) * curve_top
    wanted = min(count, len(inside))
    best: tuple[tuple[int, ...], float, list[tuple[int, Candidate]]] | None = None
    for top in np.geomspace(lowest, curve_top / MIN_CURVE_FRACTION, 12):
        kept = greedy_place(options(float(top)), obstacles, frame, count, pad)
        # Best: the strongest bands labelled (lexicographic on the sorted indices placed),
        # then the lowest top.
        rank = tuple(sorted(k for k, _ in kept)) + (len(inside),) * (count - len(kept))
        if best is None or rank < best[0]:
            best = (rank, float(top), kept)
        if rank[:wanted] == tuple(range(wanted)):
            break
    assert best is not None
    _, top, kept = best
    ax.set_ylim(0.0, top)
    made = []
    for k, cand in sorted(kept, key=lambda kc: kc[0]):
        pos, text = inside[k]
        b = cand.box
        xy_text = (to_data(0.5 * (b.x0 + b.x1)), (b.y0 - frame.y0) / height_px * top)
        peak = float(np.interp(pos, x, envelope))
        made.append(
            _annotate(
                ax,
                text,
                (pos, peak + 0.5 * offset / height_px * top),
                xy_text,
                "center",
                cand,
                text_kw,
            )
        )
    return made


def _annotate(
    ax: Axes,
    text: str,
    xy: tuple[float, float],
    xy_text: tuple[float, float],
    ha: str,
    cand: Candidate,
    text_kw: dict[str, object],
) -> Annotation:
    """The label at its chosen place (bottom at ``xy_text``), with its leader line if any."""
    arrow = None
    if cand.leader is not None:
        arrow = {
            "arrowstyle": "-",
            "lw": 0.4,
            "color": "#888888",
            "relpos": _relpos(cand),
            "patchA": None,
            "shrinkA": 0.0,
            "shrinkB": 0.0,
        }
    return ax.annotate(
        text,
        xy,
        xytext=xy_text,
        textcoords="data",
        ha=ha,
        va="bottom",
        in_layout=False,
        annotation_clip=False,
        arrowprops=arrow,
        **text_kw,  # type: ignore[arg-type]
    )


def _relpos(cand: Candidate) -> tuple[float, float]:
    """Where on the label box its leader line starts (fraction of width, height)."""
    if cand.leader is None:
        return (0.5, 0.0)
    b, end_x, end_y = cand.box, cand.leader[2], cand.leader[3]
    return ((end_x - b.x0) / (b.x1 - b.x0), (end_y - b.y0) / (b.y1 - b.y0))


def place_point_labels(
    fig: Figure,
    ax: Axes,
    points: Sequence[tuple[float, float, float, str]],
    count: int,
    extra_obstacles: Sequence[Box] = (),
    first: str = "right",
    curves: Sequence[tuple[np.ndarray, np.ndarray]] = (),
    **text_kw: Any,
) -> list[Annotation]:
    """Label up to ``count`` scatter points, in the order given (most important first).

    Parameters
    ----------
    fig, ax : Figure, Axes
        Limits of ``ax`` must be final.
    points : sequence of (x, y, radius_pt, text)
        Data position of each point to label, its marker radius in points, and its label.
    count : int
        Most labels drawn.
    extra_obstacles : sequence of Box
        Further places no label may cover (display pixels): other markers, fixed text.
    first : ``"right"`` or ``"above"``
        Where a label is tried first (beside a point, or above a peak).
    curves : sequence of (ndarray, ndarray)
        Plotted lines (x, y in data units, x ascending) that no label may cover.
    **text_kw
        Passed to every label.

    Returns
    -------
    list of Annotation
    """
    renderer = fix_layout(fig)
    frame = box_of(ax.get_window_extent(renderer))
    px_per_pt = fig.dpi / 72.0
    pad, gap = PAD_PT * px_per_pt, 2.5 * px_per_pt
    legend = _legend_box(ax, renderer, frame)
    obstacles = list(extra_obstacles) + ([legend] if legend is not None else [])
    options = []
    anchors = []
    for xd, yd, radius_pt, text in points:
        w, h = _text_size(ax, renderer, text, **text_kw)
        px, py = (float(v) for v in ax.transData.transform((xd, yd)))
        anchors.append((px, py))
        r = radius_pt * px_per_pt
        cands = []
        for reach in (1.0, 2.2, 3.6):
            d = r + gap * reach
            places = [
                (px + d, py - h / 2),  # right
                (px - d - w, py - h / 2),  # left
                (px - w / 2, py + d),  # above
                (px - w / 2, py - d - h),  # below
                (px + 0.7 * d, py + 0.7 * d),  # upper right
                (px + 0.7 * d, py - 0.7 * d - h),  # lower right
                (px - 0.7 * d - w, py + 0.7 * d),  # upper left
                (px - 0.7 * d - w, py - 0.7 * d - h),  # lower left
            ]
            if first == "above":
                places = [places[i] for i in (2, 4, 6, 0, 1, 3, 5, 7)]
            for bx, by in places:
                box = Box(bx, by, bx + w, by + h)
                leader = None
                if reach > 1.0:
                    cx = min(max(px, box.x0), box.x1)
                    cy = min(max(py, box.y0), box.y1)
                    leader = (px, py, cx, cy)
                cands.append(Candidate(box, leader))
        options.append(cands)
    curves_px = []
    for curve_x, curve_y in curves:
        xy = ax.transData.transform(np.column_stack([curve_x, curve_y]))
        curves_px.append((xy[:, 0], xy[:, 1]))
    kept = greedy_place(options, obstacles, frame, count, pad, curves_px)
    inverse = ax.transData.inverted()
    made = []
    for k, cand in sorted(kept, key=lambda kc: kc[0]):
        xd, yd, _, text = points[k]
        b = cand.box
        tx, ty = inverse.transform((b.x0, b.y0))
        made.append(_annotate(ax, text, (xd, yd), (tx, ty), "left", cand, text_kw))
    return made


def marker_box(px: float, py: float, radius_px: float) -> Box:
    """Square around a round marker of the given radius (display pixels)."""
    return Box(px - radius_px, py - radius_px, px + radius_px, py + radius_px)
