"""Displacement arrows of normal modes, one small panel per mode (a strip for a paper's SI)."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.figure import Figure

from vibrapol.errors import OptionError
from vibrapol.modeset import ModeSet
from vibrapol.plotting.style import new_figure

#: Atoms closer than this times the sum of their covalent radii are drawn bonded.
BOND_FACTOR = 1.2


def _view_axes(coords: np.ndarray) -> np.ndarray:
    """The two principal axes along which the molecule is widest (rows), for the projection."""
    centred = coords - coords.mean(axis=0)
    _, _, vt = np.linalg.svd(centred, full_matrices=True)
    return vt[:2]


def mode_arrows_figure(modes: ModeSet, indices: Sequence[int], *, panel_in: float = 1.6) -> Figure:
    """Atoms, bonds and displacement arrows of the modes ``indices`` (0-based), side by side.

    The molecule is projected on the plane of its two widest principal axes (the same view
    in every panel); arrows are the Cartesian displacements L/√m projected on that plane,
    scaled so that the longest arrow of each panel is 40 % of the molecule's size.  Motion
    perpendicular to the view (out-of-plane modes of a planar molecule) shows as short
    arrows; the panel title gives the number and wavenumber of the mode.
    """
    from ase.data import covalent_radii
    from ase.data.colors import jmol_colors

    if not indices:
        raise OptionError("give at least one mode to draw")
    for i in indices:
        if not 0 <= i < modes.n_modes:
            raise OptionError(
                f"mode {i + 1} does not exist: the source has modes 1 to {modes.n_modes}"
            )
    coords = np.asarray(modes.coordinates_ang, dtype=float)
    axes2 = _view_axes(coords)
    xy = (coords - coords.mean(axis=0)) @ axes2.T
    size = float(np.ptp(xy, axis=0).max()) or 1.0
    z = np.asarray(modes.atomic_numbers)
    fig = new_figure(panel_in * len(indices), panel_in)
    for p, index in enumerate(indices):
        ax = fig.add_subplot(1, len(indices), p + 1)
        for a in range(len(z)):
            for b in range(a + 1, len(z)):
                limit = BOND_FACTOR * (covalent_radii[z[a]] + covalent_radii[z[b]])
                if np.linalg.norm(coords[a] - coords[b]) < limit:
                    ax.plot(*xy[[a, b]].T, color="0.5", lw=1.2, zorder=1)
        ax.scatter(
            xy[:, 0], xy[:, 1], s=40 + 6 * np.sqrt(z), c=[jmol_colors[k] for k in z],
            edgecolors="black", linewidths=0.4, zorder=2,
        )  # fmt: skip
        d = modes.displacements()[index] @ axes2.T
        longest = float(np.linalg.norm(modes.displacements()[index], axis=1).max()) or 1.0
        d = d * (0.4 * size / longest)
        ax.quiver(
            xy[:, 0], xy[:, 1], d[:, 0], d[:, 1], angles="xy", scale_units="xy", scale=1,
            color="tab:red", width=0.012, zorder=3,
        )  # fmt: skip
        nu = float(modes.freqs_cm1[index])
        wn = f"{nu:.0f}" if nu >= 0 else f"{-nu:.0f}i"
        ax.set_title(f"mode {index + 1}: {wn} cm$^{{-1}}$", fontsize=7)
        ax.set_aspect("equal")
        pad = 0.3 * size + 0.5
        ax.set_xlim(xy[:, 0].min() - pad, xy[:, 0].max() + pad)
        ax.set_ylim(xy[:, 1].min() - pad, xy[:, 1].max() + pad)
        ax.set_axis_off()
    return fig
