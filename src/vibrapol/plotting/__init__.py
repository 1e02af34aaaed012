"""Figures for papers (matplotlib; never imported by the numeric modules).

- :mod:`~vibrapol.plotting.spectra`: polarized spectra, depolarization ratios, polar sweeps
  (exported here);
- :mod:`~vibrapol.plotting.style`: sizes, fonts, colours and saving;
- :mod:`~vibrapol.plotting.labels`: band labels that do not overlap;
- :mod:`~vibrapol.plotting.conditions`: the conditions caption;
- :mod:`~vibrapol.plotting.match`: the figure of an assignment against a measured pair.
"""

from __future__ import annotations

from vibrapol.plotting.spectra import (
    CHANNEL_NAMES,
    PALETTE,
    STYLE,
    WIDTHS_IN,
    depolarization_figure,
    figure_bytes,
    format_irrep,
    polar_figure,
    save_figure,
    spectrum_figure,
)

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
