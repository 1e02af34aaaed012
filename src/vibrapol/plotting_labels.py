"""Placing band labels above spectral peaks without collisions (used by :mod:`vibrapol.plotting`).

Greedy placement in priority order (strongest band first): a label sits centred above its band,
high enough to clear every curve under its whole width; it is kept only if it overlaps no label
already placed and not the legend.  The y limit is then raised just enough for the labels kept.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

#: Gap between a peak and its label, in points.
OFFSET_PT = 2.0
#: Highest allowed label top, as a fraction of the axes height.
TOP_FRACTION = 0.97
#: Space kept above the highest curve when there are no labels, as a fraction of its height.
CURVE_HEADROOM = 0.08


@dataclass
class _Box:
    x0: float  # data
    x1: float
    y_data: float  # anchor (top of the curves under the label)
    h_px: float  # label height including the offset


def _overlap(a: _Box, b: _Box, top: float, axes_px: float) -> bool:
    if a.x1 <= b.x0 or b.x1 <= a.x0:
        return False
    ya, yb = a.y_data / top * axes_px, b.y_data / top * axes_px
    return not (ya + a.h_px <= yb or yb + b.h_px <= ya)


def _top_needed(boxes: Sequence[_Box], curve_top: float, axes_px: float) -> float:
    need = (1.0 + CURVE_HEADROOM) * curve_top
    for b in boxes:
        room = TOP_FRACTION - b.h_px / axes_px
        if room > 0.15:
            need = max(need, b.y_data / room)
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

    ``curves`` are the plotted y arrays on axis ``x`` (in the axes' data units); the axes' x
    limits must be set.  Returns the annotations kept and sets the y limits of ``ax``.
    """
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    box = ax.get_window_extent(renderer)
    x0, x1 = ax.get_xlim()
    per_px = (x1 - x0) / box.width
    offset_px = OFFSET_PT * fig.dpi / 72.0
    envelope = np.max(np.vstack(curves), axis=0)
    legend = ax.get_legend()
    legend_box = None
    if legend is not None:
        lb = legend.get_window_extent(renderer)
        legend.set_loc(
            ((lb.x0 - box.x0) / box.width, (lb.y0 - box.y0) / box.height)
        )  # freeze "best"
        legend_box = (
            x0 + (lb.x0 - box.x0) * per_px,
            x0 + (lb.x1 - box.x0) * per_px,
            lb.y0 - box.y0,
        )
    kept: list[tuple[object, _Box]] = []
    for pos, text in candidates:
        if len(kept) >= count:
            break
        ann = ax.annotate(
            text,
            (pos, 0.0),
            xytext=(0, OFFSET_PT),
            textcoords="offset points",
            ha="center",
            va="bottom",
            in_layout=False,
            **text_kw,
        )
        ext = ann.get_window_extent(renderer)
        half = 0.5 * ext.width * per_px  # the glyph box already has side bearings
        lo, hi = pos - half, pos + half
        under = (x >= lo) & (x <= hi)
        if lo < x0 - 0.02 * (x1 - x0) or hi > x1 + 0.02 * (x1 - x0) or not under.any():
            ann.remove()
            continue
        b = _Box(lo, hi, float(envelope[under].max()), ext.height + offset_px)
        boxes = [kb for _, kb in kept] + [b]
        top = _top_needed(boxes, curve_top, box.height)
        clash = any(_overlap(b, kb, top, box.height) for _, kb in kept)
        if legend_box is not None and not (hi <= legend_box[0] or lo >= legend_box[1]):
            clash = clash or b.y_data / top * box.height + b.h_px > legend_box[2]
        if clash:
            ann.remove()
            continue
        ann.xy = (pos, b.y_data)
        kept.append((ann, b))
    top = _top_needed([kb for _, kb in kept], curve_top, box.height)
    ax.set_ylim(0.0, top)
    return [a for a, _ in kept]
