"""The match figure: measured VV and VH above the scaled computed spectra, joined band by band.

Upper half: the measured parallel (VV) and crossed (VH) spectra, normalized to the tallest VV
point.  Lower half: the computed spectra at the fitted scale factor, broadened with the
median measured width, normalized the same way, with their sticks.  A thin line joins each
measured band to the computed band assigned to it (solid, darker for higher confidence);
measured bands left unassigned get an open marker, computed bands in range left unassigned
a short grey tick.  Measured bands with a ratio carry their ρ (with its standard error); the
title says what was done to the measured spectra (spikes, baseline, cropping) as recorded in
their notes.  Labels that would overlap are left out, weakest first.  Object API only, like
:mod:`vibrapol.plotting`; returns the Figure.
"""

from __future__ import annotations

import dataclasses
import math
import textwrap
import warnings

import numpy as np
from matplotlib import rc_context
from matplotlib.backend_bases import RendererBase
from matplotlib.figure import Figure
from matplotlib.text import Text

from vibrapol.compare.results import Assignment
from vibrapol.compare.scores import DEFAULT_FWHM_CM1, measured_curves
from vibrapol.measured import PolarizedPair
from vibrapol.plotting.labels import Box, box_of, fix_layout, place_point_labels
from vibrapol.plotting.style import (
    DASHES,
    LABEL_PT,
    PALETTE,
    SHIFT_LABEL,
    STYLE,
    figure_width,
    format_irrep,
    new_figure,
)
from vibrapol.spectrum import broaden
from vibrapol.spectrum.lineshapes import LineShape

#: Vertical layout in normalized units: computed spectrum in [0, 1], measured in
#: [MEASURED_BASE, MEASURED_BASE + 1], joining lines in the gap between.
MEASURED_BASE = 1.45
GAP_LOW, GAP_HIGH = 1.05, 1.40


def match_figure(
    assignment: Assignment,
    pair: PolarizedPair | None = None,
    *,
    width: str | float = "double",
    height_in: float = 3.2,
    xlim_cm1: tuple[float, float] | None = None,
    label_modes: bool = True,
    title: str | None = None,
) -> Figure:
    """Measured spectra over the scaled computed ones with a line per assigned band.

    Parameters
    ----------
    assignment : Assignment
        From :func:`vibrapol.compare.assign`.
    pair : PolarizedPair, optional
        The cleaned measured spectra (default: the fitted band model of the assignment).
    width : ``"single"``, ``"double"`` or inches.
    height_in : float
    xlim_cm1 : (float, float), optional
        Shown range (default: the measured range).
    label_modes : bool
        Write the mode number and species under each assigned computed band.
    title : str, optional
        Default: candidate, scale factor and overall score.
    """
    x, vv, vh = measured_curves(assignment.measured, pair)
    xlim = xlim_cm1 or assignment.range_cm1
    shown = (x >= xlim[0]) & (x <= xlim[1])
    norm_meas = float(np.max(vv[shown])) if np.any(shown) else 1.0
    norm_meas = norm_meas if norm_meas > 0 else 1.0
    sticks = assignment.sticks
    factor = assignment.scale.factor
    widths = [b.fwhm_cm1 for b in assignment.measured.bands if math.isfinite(b.fwhm_cm1)]
    fwhm = float(np.median(widths)) if widths else DEFAULT_FWHM_CM1
    scaled = dataclasses.replace(sticks, positions_cm1=factor * sticks.harmonic_cm1)
    grid_x = np.linspace(xlim[0], xlim[1], max(2000, int((xlim[1] - xlim[0]) / 0.5)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        grid = broaden(scaled, LineShape("lorentzian", fwhm), grid_cm1=grid_x)
    calc_vv, calc_vh = grid.channel("vv"), grid.channel("vh")
    norm_calc = float(np.max(calc_vv)) or 1.0
    stick_vv = scaled.channel("vv")
    stick_scale = 1.0 / float(np.max(stick_vv)) if np.max(stick_vv) > 0 else 0.0
    with rc_context(STYLE):
        fig = new_figure(figure_width(width), height_in)
        ax = fig.subplots()
        base = MEASURED_BASE
        ax.plot(x, base + vv / norm_meas, color=PALETTE["vv"], lw=0.8, label="measured VV")
        if vh is not None:
            ax.plot(
                x, base + vh / norm_meas, color=PALETTE["vh"], lw=0.8, ls=DASHES["vh"],
                label="measured VH",
            )  # fmt: skip
        ax.plot(grid_x, calc_vv / norm_calc, color=PALETTE["vv"], lw=0.8, alpha=0.75)
        ax.plot(grid_x, calc_vh / norm_calc, color=PALETTE["vh"], lw=0.8, ls=DASHES["vh"])
        pos = scaled.positions_cm1
        inside = (pos >= xlim[0]) & (pos <= xlim[1])
        ax.vlines(
            pos[inside], 0.0, stick_vv[inside] * stick_scale, colors="#555555", lw=0.5, alpha=0.5
        )
        for j in assignment.unassigned_sticks:
            if xlim[0] <= pos[j] <= xlim[1]:
                ax.vlines(pos[j], GAP_LOW - 0.06, GAP_LOW, colors="#999999", lw=0.8)
        mode_labels = []
        for b in sorted(assignment.bands, key=lambda b: -b.band_area):
            if not xlim[0] <= b.band_cm1 <= xlim[1]:
                continue
            if b.assigned:
                shade = 0.25 + 0.75 * (b.confidence if math.isfinite(b.confidence) else 1.0)
                ax.plot(
                    [b.band_cm1, b.mode_cm1_scaled], [GAP_HIGH, GAP_LOW],
                    color="black", lw=0.6, alpha=shade,
                )  # fmt: skip
                if label_modes:
                    text = b.mode.replace(" ", ",")
                    if b.irrep:
                        text += f" {format_irrep(b.irrep)}"
                    mode_labels.append(ax.text(
                        b.mode_cm1_scaled, -0.04, text, rotation=90, ha="center", va="top",
                        fontsize=LABEL_PT - 1, color="#333333",
                    ))  # fmt: skip
            else:
                ax.plot(
                    [b.band_cm1], [GAP_HIGH], marker="o", mfc="none", mec="black", ms=3.5,
                    mew=0.6, ls="none",
                )  # fmt: skip
        ax.set_xlim(*xlim)
        ax.set_ylim(-0.45 if label_modes else -0.05, base + 1.1)
        ax.set_yticks([0.5, base + 0.5], [f"computed\n× {factor:.4f}", "measured"])
        ax.tick_params(axis="y", length=0)
        ax.spines["left"].set_visible(False)
        ax.set_xlabel(SHIFT_LABEL)
        ax.legend(loc="upper right", handlelength=2.2, borderaxespad=0.2)
        s = assignment.scores
        ax.set_title(
            title
            if title is not None
            else f"{assignment.label}\n{s.n_assigned}/{s.n_bands} bands assigned, "
            f"scale {factor:.4f}, score {s.overall:.2f}\n"
            + textwrap.fill(cleaning_note(pair), int(15 * figure_width(width))),
            fontsize=8.0,
        )
        curves = [(x, base + vv / norm_meas), (grid_x, calc_vv / norm_calc)]
        if vh is not None:
            curves.append((x, base + vh / norm_meas))
        renderer = fix_layout(fig)
        mode_labels = _drop_overlapping(mode_labels, renderer)
        points = []
        for b in sorted(assignment.bands, key=lambda b: -b.band_area):
            if math.isfinite(b.band_rho) and xlim[0] <= b.band_cm1 <= xlim[1]:
                digits = 3 if b.band_rho_err < 0.01 else 2
                text = f"ρ {b.band_rho:.{digits}f}"
                if math.isfinite(b.band_rho_err):
                    text += f" ± {b.band_rho_err:.{digits}f}"
                y = base + float(np.interp(b.band_cm1, x, vv)) / norm_meas
                points.append((b.band_cm1, y, 1.0, text))
        place_point_labels(
            fig,
            ax,
            points,
            len(points),
            extra_obstacles=[box_of(t.get_window_extent(renderer)) for t in mode_labels],
            first="above",
            curves=curves,
            fontsize=LABEL_PT - 1,
            color="#333333",
        )
    return fig


def cleaning_note(pair: PolarizedPair | None) -> str:
    """One line saying what was done to the measured spectra, from their notes."""
    if pair is None:
        return "measured: the fitted band model (no cleaned spectra given)"
    notes = list(dict.fromkeys((*pair.vv.notes, *(pair.vh.notes if pair.vh else ()))))
    return "measured: " + ("; ".join(notes) if notes else "as read, no cleaning recorded")


def _drop_overlapping(texts: list[Text], renderer: RendererBase) -> list[Text]:
    """Remove texts that overlap one kept earlier (``texts`` in priority order); the rest."""
    kept: list[Text] = []
    boxes: list[Box] = []
    for t in texts:
        b = box_of(t.get_window_extent(renderer))
        if any(b.overlaps(k) for k in boxes):
            t.remove()
        else:
            kept.append(t)
            boxes.append(b)
    return kept
