"""Figures for papers: polarized spectra, depolarization ratios and polar sweeps.

Built with matplotlib's object API only (``matplotlib.figure.Figure`` with an Agg canvas; no
pyplot, no global state), so they render headless.  Every function returns the ``Figure`` for
further editing in Python; :func:`save_figure` writes SVG, PDF (vector, text kept as text) or
300 dpi PNG atomically.  No numeric module imports this one.

Sizes, fonts and colours are in :mod:`vibrapol.plotting.style` (journal column widths,
7–8 pt text, a colour-blind-safe palette); VV and VH also differ in line style so a figure reads
in grey scale.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from matplotlib import rc_context
from matplotlib.artist import Artist
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.projections.polar import PolarAxes
from matplotlib.ticker import AutoMinorLocator, FixedLocator

from vibrapol.errors import VibrapolError
from vibrapol.invariants import rho_natural_from_linear
from vibrapol.plotting.conditions import add_caption, shift_label
from vibrapol.plotting.labels import (
    CURVE_HEADROOM,
    box_of,
    fix_layout,
    marker_box,
    place_labels,
    place_point_labels,
)
from vibrapol.plotting.style import (
    CHANNEL_NAMES,
    DASHES,
    LABEL_PT,
    OTHER_COLOURS,
    PALETTE,
    STYLE,
    WIDTHS_IN,
    figure_bytes,
    figure_width,
    format_irrep,
    new_figure,
    save_figure,
)
from vibrapol.polarization import POLARIZED_BELOW
from vibrapol.spectrum import GridSpectrum, StickSpectrum
from vibrapol.spectrum.sweep import PolarSweep

__all__ = [
    "CHANNEL_NAMES",
    "PALETTE",
    "STYLE",
    "WIDTHS_IN",
    "depolarization_figure",
    "figure_bytes",
    "format_irrep",
    "polar_figure",
    "save_figure",
    "spectrum_figure",
]


def _colour(channel: str, k: int) -> str:
    return PALETTE.get(channel, OTHER_COLOURS[k % len(OTHER_COLOURS)])


def _band_label(
    sticks: StickSpectrum, i: int, show_rho: bool, mode_words: Sequence[str] | None = None
) -> str:
    """The label of band i: wavenumber and irrep, ρ of a polarized band, what it does.

    ρ goes on the second line, and the words of the band's (first) mode on the last when
    ``mode_words`` are given.
    """
    text = f"{sticks.positions_cm1[i]:.0f}"
    if sticks.irreps[i]:
        text += f" {format_irrep(sticks.irreps[i])}"
    rho = sticks.rho_linear[i]
    if show_rho and sticks.polarized[i] and math.isfinite(rho):
        text += f"\nρ {rho:.2f}"
    if mode_words and sticks.mode_sets[i] and mode_words[sticks.mode_sets[i][0]]:
        text += f"\n{mode_words[sticks.mode_sets[i][0]]}"
    return text


def _y_label(grid: GridSpectrum, normalize: bool) -> tuple[str, float]:
    quantity = grid.sticks.conditions.quantity
    if normalize:
        name = {
            "activity": "Raman activity",
            "intensity": "Raman intensity",
            "cross-section": "Raman intensity",
        }
        return f"{name[quantity]} (normalized)", 1.0
    peak = float(np.max(np.abs(grid.values))) or 1.0
    exp = int(math.floor(math.log10(peak)))
    unit = {
        "activity": "Å$^4$ amu$^{-1}$ cm",
        "intensity": "Å$^4$ amu$^{-1}$ cm, relative",
        "cross-section": "cm$^2$ sr$^{-1}$ / cm$^{-1}$",
    }[quantity]
    if quantity == "cross-section":
        return f"d$\\sigma$/d$\\Omega$ (10$^{{{exp}}}$ {unit})", 10.0**exp
    return f"Raman {quantity} density ({unit})", 1.0


def spectrum_figure(
    grid: GridSpectrum,
    *,
    channels: Sequence[str] = ("vv", "vh"),
    layout: str = "shared",
    width: str | float = "single",
    height_in: float | None = None,
    sticks: bool = True,
    label_count: int = 6,
    label_channel: str = "vv",
    show_rho: bool = True,
    normalize: bool = True,
    xlim_cm1: tuple[float, float] | None = None,
    title: str | None = None,
    caption: bool = True,
    mode_words: Sequence[str] | None = None,
) -> Figure:
    """Polarized spectra (VV and VH by default) with sticks and labels of the strongest bands.

    Parameters
    ----------
    grid : GridSpectrum
    channels : sequence of str
        Channels to draw, in order (all must be in the grid).
    layout : ``"shared"`` (one axes) or ``"stacked"`` (one panel per channel, shared x and y).
    width : ``"single"``, ``"double"`` or a width in inches.
    height_in : float, optional
        Default: 2.4 in (2.7 in from 5 in wide) for shared axes, 0.2 + 1.35 in per panel stacked.
    sticks : bool
        Draw the sticks under the envelope (scaled so the tallest stick meets the tallest peak).
    label_count : int
        Number of bands labelled with wavenumber, irrep and, for polarized bands, ρ.
    label_channel : str
        Channel whose strongest bands are labelled.
    normalize : bool
        Scale so the largest value of the first channel is 1.
    xlim_cm1 : (float, float), optional
        Shown range (default: the grid range).
    title : str, optional
    caption : bool
        Write the conditions (laser, temperature, geometry, sample, detector, scale factor
        and its source, line shape, method) under the axes (default True).
    mode_words : sequence of str, optional
        Words saying what each mode of the (single) source does, one per mode
        (:attr:`vibrapol.describe.ModeDescription.short`), added under each band label.
    """
    if mode_words is not None and len(grid.sticks.components) > 1:
        raise VibrapolError(
            "mode descriptions on the labels need a spectrum of one source, not a mixture"
        )
    if layout not in ("shared", "stacked"):
        raise VibrapolError(f"layout must be shared or stacked, got {layout!r}")
    chans = [c.lower() for c in channels]
    data = {c: grid.channel(c) for c in chans}
    x = grid.shift_cm1
    xlim = xlim_cm1 or (float(x[0]), float(x[-1]))
    shown = (x >= xlim[0]) & (x <= xlim[1])
    ylabel, unit_scale = _y_label(grid, normalize)
    norm = float(np.max(data[chans[0]][shown])) if normalize else unit_scale
    norm = norm or 1.0
    stick_scale = 0.0
    if sticks:
        heights = np.concatenate([grid.sticks.channel(c) for c in chans])
        env = max(float(np.max(v[shown])) for v in data.values())
        stick_scale = env / float(np.max(heights)) if np.max(heights) > 0 else 0.0
    n_panels = 1 if layout == "shared" else len(chans)
    w = figure_width(width)
    h = height_in or ((2.4 if w < 5 else 2.7) if layout == "shared" else 0.2 + 1.35 * n_panels)
    with rc_context(STYLE):
        fig = new_figure(w, h)
        axes = fig.subplots(n_panels, 1, sharex=True, sharey=True, squeeze=False)[:, 0]
        for k, c in enumerate(chans):
            ax = axes[0 if layout == "shared" else k]
            colour = _colour(c, k)
            if sticks and stick_scale > 0:
                pos = grid.sticks.positions_cm1
                hts = grid.sticks.channel(c) * stick_scale / norm
                ok = (pos >= xlim[0]) & (pos <= xlim[1]) & (hts > 0)
                ax.vlines(
                    pos[ok], 0.0, hts[ok], colors=colour, linewidths=0.5, alpha=0.45, zorder=1
                )
            ch, _, source = c.partition(":")  # overlays name columns CHANNEL:SOURCE
            if source:
                colour = OTHER_COLOURS[(k // 2) % len(OTHER_COLOURS)]
            ax.plot(
                x,
                data[c] / norm,
                color=colour,
                linestyle=DASHES.get(ch, "-"),
                lw=0.9,
                zorder=3,
                label=f"{source.replace(chr(92), '/').rsplit('/', 1)[-1]} {ch.upper()}"
                if source
                else CHANNEL_NAMES.get(c, c),
            )
        top = max(float(np.max(v[shown])) for v in data.values()) / norm
        for ax in axes:
            ax.set_xlim(*xlim)
            ax.xaxis.set_minor_locator(AutoMinorLocator())
            ax.yaxis.set_minor_locator(AutoMinorLocator())
            if normalize:
                ax.set_yticks([0.0, 0.5, 1.0])
        for ax in axes:
            ax.set_ylim(0.0, (1.0 + CURVE_HEADROOM) * top)
        for ax in axes:
            ax.legend(loc="best", handlelength=2.2, borderaxespad=0.2)
        if layout == "shared":
            axes[0].set_ylabel(ylabel)
        else:
            fig.supylabel(ylabel, fontsize=8.0)
        axes[-1].set_xlabel(shift_label(grid.sticks.conditions))
        if caption:
            add_caption(fig, grid.sticks.conditions, grid.lineshape, grid.sticks.warnings)
        if title:
            fig.suptitle(title, fontsize=8.0)
        if label_count and label_channel in chans:
            ax = axes[0 if layout == "shared" else chans.index(label_channel)]
            st = grid.sticks
            inside = (st.positions_cm1 >= xlim[0]) & (st.positions_cm1 <= xlim[1])
            strength = np.where(inside, st.channel(label_channel), -np.inf)
            order = [int(i) for i in np.argsort(-strength, kind="stable") if strength[i] > 0]
            curves = (
                [v / norm for v in data.values()]
                if layout == "shared"
                else [data[label_channel] / norm]
            )
            cands = [
                (float(st.positions_cm1[i]), _band_label(st, i, show_rho, mode_words))
                for i in order[: 6 * label_count]
            ]
            place_labels(
                fig,
                ax,
                cands,
                x,
                curves,
                label_count,
                top,
                fontsize=LABEL_PT,
                color="#333333",
                multialignment="center",
                linespacing=1.05,
            )
            for other in axes:
                other.set_ylim(ax.get_ylim())
        if normalize:
            for ax in axes:
                ax.spines["left"].set_bounds(0.0, 1.0)
                ax.yaxis.set_minor_locator(FixedLocator(np.arange(0.1, 1.0, 0.1).tolist()))
    return fig


def depolarization_figure(
    sticks: StickSpectrum,
    *,
    kind: str = "linear",
    width: str | float = "single",
    height_in: float | None = None,
    min_relative_activity: float = 0.01,
    label_count: int = 8,
    xlim_cm1: tuple[float, float] | None = None,
) -> Figure:
    """Depolarization ratio of each band, with the limit for non-totally-symmetric modes.

    ``kind="linear"``: ρ for linearly polarized excitation, limit 3/4; ``"natural"``: ρ for
    natural light, limit 6/7 (D. A. Long, *The Raman Effect*, 2002, ch. 5).  Bands weaker than
    ``min_relative_activity`` of the strongest (VV + VH) are left out.  Filled markers are
    measurably polarized bands (labelled with wavenumber and irrep), open markers the others;
    the shaded zone below the limit is where no measurement tells a ratio from the limit (the
    rule of :mod:`vibrapol.polarization`: an open marker inside it that is not on the limit is
    a totally symmetric band too close to 3/4 to tell).  The marker area grows with the band's
    VV + VH strength.
    """
    if kind not in ("linear", "natural"):
        raise VibrapolError(f"kind must be linear or natural, got {kind!r}")
    rho = sticks.rho_linear if kind == "linear" else sticks.rho_natural
    limit, limit_text = (0.75, "3/4") if kind == "linear" else (6.0 / 7.0, "6/7")
    if kind == "natural" and sticks.conditions.geometry_deg == 180:
        limit, limit_text = 1.0, "1"  # back-scattering: NH = NV for an isotropic sample
    strength = sticks.channel("vv") + sticks.channel("vh")
    keep = np.isfinite(rho) & (
        strength >= min_relative_activity * (strength.max() if strength.size else 0)
    )
    pos = sticks.positions_cm1
    if xlim_cm1:
        keep &= (pos >= xlim_cm1[0]) & (pos <= xlim_cm1[1])
    if not np.any(keep):
        raise VibrapolError("no Raman-active band to show in the depolarization figure")
    pol = keep & sticks.polarized
    unres = keep & ~sticks.polarized & sticks.unresolved
    dep = keep & ~sticks.polarized & ~sticks.unresolved
    lo, hi = xlim_cm1 or (float(pos[keep].min()), float(pos[keep].max()))
    pad = 0.0 if xlim_cm1 else 0.05 * (hi - lo or 100.0)
    size = 8.0 + 42.0 * strength / strength[keep].max()  # marker area ∝ band strength
    with rc_context(STYLE):
        w = figure_width(width)
        # a single column needs more height: the legend and the caption sit above and below
        fig = new_figure(w, height_in or (2.4 if w >= 5.0 else 3.2))
        ax = fig.add_subplot()
        ax.axhline(limit, color="#555555", lw=0.7, ls=(0, (3, 2)), zorder=1)
        zone_low = POLARIZED_BELOW if kind == "linear" else rho_natural_from_linear(POLARIZED_BELOW)
        ax.axhspan(float(zone_low), limit, color="#dddddd", lw=0, zorder=0)
        limit_label = ax.annotate(
            f"ρ = {limit_text}",
            (1.0, limit),
            xycoords=("axes fraction", "data"),
            xytext=(-2, 2),
            textcoords="offset points",
            ha="right",
            va="bottom",
            fontsize=LABEL_PT,
            color="#555555",
        )
        # one marker per outcome of the polarization rule: (bands, face, edge, edge width, label)
        kinds = [
            (pol, PALETTE["vv"], PALETTE["vv"], 0.0, "polarized"),
            (dep, "white", PALETTE["vh"], 0.9, "depolarized"),
            (unres, "#9cc3e0", PALETTE["vv"], 0.9, "totally symmetric, ρ too close to 3/4 to tell"),
        ]
        handles: list[Artist] = []
        for bands, face, edge, width, label in kinds:
            ax.scatter(
                pos[bands], rho[bands], s=size[bands], facecolor=face, edgecolor=edge, lw=width,
                zorder=3,
            )  # fmt: skip
            handles.append(
                Line2D([], [], ls="none", marker="o", ms=4.5, mfc=face, mec=edge, mew=width,
                       label=label)
            )  # fmt: skip
        handles += [
            Patch(
                color="#dddddd",
                label=f"zone too close to {limit_text} to tell "
                f"($\\rho_\\mathrm{{linear}}$ ≥ {POLARIZED_BELOW:.2f})",
            ),
        ]
        ax.set_xlim(lo - pad, hi + pad)
        ax.set_ylim(-0.03, 0.92 if kind == "linear" else 1.02)
        ax.spines["left"].set_bounds(0.0, 0.75 if kind == "linear" else 1.0)
        ax.set_yticks([0.0, 0.25, 0.5, 0.75] if kind == "linear" else [0.0, 0.25, 0.5, 0.75, 1.0])
        ax.xaxis.set_minor_locator(AutoMinorLocator())
        ax.set_xlabel(shift_label(sticks.conditions))
        ax.set_ylabel(
            r"$\rho_\mathrm{linear}$ = VH/VV"
            if kind == "linear"
            else r"$\rho_\mathrm{natural}$ = NH/NV"
        )
        add_caption(fig, sticks.conditions, warned=sticks.warnings)
        # Outside the axes, above them: the markers near 3/4 stay visible.
        fig.legend(
            handles=handles,
            loc="outside upper left",
            ncols=3 if fig.get_figwidth() >= 5.0 else 1,
            handletextpad=0.3,
            columnspacing=1.0,
        )
        light = "linearly polarized" if kind == "linear" else "natural (unpolarized)"
        ax.set_title(
            f"ρ for {light} excitation\nmarker area ∝ band strength (VV + VH)",
            loc="left",
            fontsize=LABEL_PT,
            color="#333333",
        )
        renderer = fix_layout(fig)
        px_per_pt = fig.dpi / 72.0
        markers = []
        for shown_i in np.flatnonzero(keep):
            px, py = ax.transData.transform((pos[shown_i], rho[shown_i]))
            markers.append(marker_box(px, py, 0.5 * math.sqrt(size[shown_i]) * px_per_pt))
        order = [int(i) for i in np.argsort(-np.where(pol, strength, -np.inf)) if pol[i]]
        points = []
        for i in order:
            irrep = f" {format_irrep(sticks.irreps[i])}" if sticks.irreps[i] else ""
            points.append((pos[i], rho[i], 0.5 * math.sqrt(size[i]), f"{pos[i]:.0f}{irrep}"))
        place_point_labels(
            fig,
            ax,
            points,
            label_count,
            extra_obstacles=[*markers, box_of(limit_label.get_window_extent(renderer))],
            fontsize=LABEL_PT,
            color="#333333",
        )
    return fig


def polar_figure(
    sweep: PolarSweep, *, width: str | float = "double", columns: int = 4, normalize: bool = True
) -> Figure:
    """One polar panel per band: parallel and crossed heights versus polarizer angle.

    0° (polarizer along V) points up and angles grow clockwise towards H (90°); each panel is
    scaled to its own maximum when ``normalize`` (grid circles at 0.5 and 1).
    """
    n = sweep.n_bands
    if n == 0:
        raise VibrapolError("the sweep has no bands")
    cols = max(1, min(columns, n))
    rows = math.ceil(n / cols)
    w = figure_width(width)
    theta = np.deg2rad(sweep.angles_deg)
    with rc_context(STYLE):
        fig = new_figure(w, rows * (w / cols) * 1.12 + 0.45)
        for b in range(n):
            ax = fig.add_subplot(rows, cols, b + 1, projection="polar")
            assert isinstance(ax, PolarAxes)
            par, crs = sweep.parallel[:, b], sweep.crossed[:, b]
            scale = max(float(np.max(par)), float(np.max(crs))) if normalize else 1.0
            scale = scale or 1.0
            ax.plot(theta, par / scale, color=PALETTE["vv"], lw=1.0, label="parallel")
            ax.plot(
                theta, crs / scale, color=PALETTE["vh"], lw=1.0, ls=(0, (4, 1.5)), label="crossed"
            )
            ax.set_theta_zero_location("N")
            ax.set_theta_direction(-1)
            ax.tick_params(labelsize=6.0, pad=0.0)
            ax.set_xticks(np.deg2rad(np.arange(0, 360, 45)))
            ax.set_xticklabels(["0°", "", "90°", "", "", "", "", ""])
            ax.set_yticklabels([])
            if normalize:
                ax.set_rticks([0.5, 1.0])
                ax.set_rlim(0, 1.05)
            ax.grid(lw=0.4, color="#CCCCCC")
            label = f"{sweep.positions_cm1[b]:.0f} cm$^{{-1}}$"
            if sweep.irreps[b]:
                label += f"  {format_irrep(sweep.irreps[b])}"
            ax.set_title(label, fontsize=7.5, pad=4.0)
        fig.legend(*fig.axes[0].get_legend_handles_labels(), loc="outside upper center", ncols=2)
        add_caption(fig, sweep.conditions)
    return fig
