"""Placing band labels above spectral peaks without collisions (used by :mod:`vibrapol.plotting`).

Greedy placement in priority order (strongest band first).  A label is tried centred above its
band, then beside it (right, then left) joined to the peak by a thin leader line; at each place
it sits just high enough to clear every curve under its width.  A place is taken only if the
label overlaps no label already placed and not the legend; a band with no free place stays
unlabelled.  Finally the y limit is raised just enough for the labels kept.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

#: Gap between a peak (or the curves) and a label, in points.
OFFSET_PT = 2.0
#: Highest allowed label top, as a fraction of the axes height.
TOP_FRACTION = 0.97
#: Space kept above the highest curve, as a fraction of its height.
CURVE_HEADROOM = 0.08
#: Extra rise of a label placed beside its band, as a fraction of the highest curve.
SIDE_RISE = 0.06
#: Where a label is tried, as shifts of its centre in label widths (0 = centred).
SHIFTS = (0.0, 0.6, -0.6)


@dataclass
class _Box:
    pos: float  # band position (data)
    peak: float  # top of the curves at the band (data)
    x0: float  # label extent (data)
    x1: float
    bottom: float  # label bottom before the offset (data)
    h_px: float  # label height including the offset


def _overlap(a: _Box, b: _Box, top: float, axes_px: float) -> bool:
    if a.x1 <= b.x0 or b.x1 <= a.x0:
        return False
    ya, yb = a.bottom / top * axes_px, b.bottom / top * axes_px
    return not (ya + a.h_px <= yb or yb + b.h_px <= ya)


def _top_needed(boxes: Sequence[_Box], curve_top: float, axes_px: float) -> float:
    need = (1.0 + CURVE_HEADROOM) * curve_top
    for b in boxes:
        room = TOP_FRACTION - b.h_px / axes_px
        if room > 0.15:
            need = max(need, b.bottom / room)
    return need


def place_labels(
    fig: Figure,
    ax: Axes,
    candidates: Sequence[tuple[float, str]],
    x: np.ndarray,
    curves: Sequence[np.ndarray],
    count: int,
    curve_top: float,
    **text_kw: object,
) -> list:
    """Annotate up to ``count`` of ``candidates`` ((position, text), best first) on ``ax``.

    ``curves`` are the plotted y arrays on axis ``x`` (in the axes' data units); the x limits
    of ``ax`` must be set.  Returns the annotations made and sets the y limits of ``ax``.
    """
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    x0, x1 = ax.get_xlim()
    per_px = (x1 - x0) / frame.width
    offset_px = OFFSET_PT * fig.dpi / 72.0
    envelope = np.max(np.vstack(curves), axis=0)
    legend = ax.get_legend()
    legend_box = None
    if legend is not None:
        lb = legend.get_window_extent(renderer)
        legend.set_loc(((lb.x0 - frame.x0) / frame.width, (lb.y0 - frame.y0) / frame.height))
        legend_box = (
            x0 + (lb.x0 - frame.x0) * per_px,
            x0 + (lb.x1 - frame.x0) * per_px,
            lb.y0 - frame.y0,
        )

    def top_of_curves(lo: float, hi: float) -> float | None:
        under = (x >= lo) & (x <= hi)
        return float(envelope[under].max()) if under.any() else None

    kept: list[tuple[str, _Box]] = []
    for pos, text in candidates:
        if len(kept) >= count:
            break
        probe = ax.text(0, 0, text, **text_kw)
        ext = probe.get_window_extent(renderer)
        probe.remove()
        width, half = ext.width * per_px, 0.5 * ext.width * per_px
        if not x[0] <= pos <= x[-1]:
            continue
        peak = float(np.interp(pos, x, envelope))
        for shift in SHIFTS:
            centre = pos + shift * width
            lo, hi = centre - half, centre + half
            if lo < x0 - 0.01 * (x1 - x0) or hi > x1 + 0.01 * (x1 - x0):
                continue
            bottom = top_of_curves(lo, hi) or 0.0
            if shift:
                bottom = max(bottom, peak) + SIDE_RISE * curve_top
            b = _Box(pos, peak, lo, hi, bottom, ext.height + offset_px)
            top = _top_needed([kb for _, kb in kept] + [b], curve_top, frame.height)
            clash = any(_overlap(b, kb, top, frame.height) for _, kb in kept)
            if legend_box is not None and not (hi <= legend_box[0] or lo >= legend_box[1]):
                clash = clash or b.bottom / top * frame.height + b.h_px > legend_box[2]
            if not clash:
                kept.append((text, b))
                break
    top = _top_needed([kb for _, kb in kept], curve_top, frame.height)
    ax.set_ylim(0.0, top)
    offset_data = offset_px / frame.height * top
    made = []
    for text, b in kept:
        centre = 0.5 * (b.x0 + b.x1)
        beside = abs(centre - b.pos) > 1e-9
        made.append(
            ax.annotate(
                text,
                (b.pos, b.peak + 0.5 * offset_data),
                xytext=(centre, b.bottom + offset_data),
                textcoords="data",
                ha="center",
                va="bottom",
                in_layout=False,
                arrowprops={
                    "arrowstyle": "-",
                    "lw": 0.4,
                    "color": "#888888",
                    "relpos": (0.5, 0.0),
                    "shrinkA": 0.5,
                    "shrinkB": 0.0,
                }
                if beside
                else None,
                **text_kw,
            )
        )
    return made
