"""Theoretical Raman spectra: sticks per band, broadened spectra on a grid, and their parts.

The public spectrum API is exported here: :func:`stick_spectrum` turns a
:class:`~vibrapol.modeset.ModeSet` into a :class:`StickSpectrum` and :func:`broaden` samples it
on a grid into a :class:`GridSpectrum`.  The modules of the package:

- :mod:`~vibrapol.spectrum.sticks`: conditions, sticks per degenerate set;
- :mod:`~vibrapol.spectrum.broadening`: grids and broadened spectra;
- :mod:`~vibrapol.spectrum.channels`: polarization channels and scattering geometries;
- :mod:`~vibrapol.spectrum.quantities`: activity, relative intensity (detector convention),
  cross section;
- :mod:`~vibrapol.spectrum.lineshapes`: Lorentzian, Gaussian and Voigt profiles;
- :mod:`~vibrapol.spectrum.scaling`: frequency scale factors;
- :mod:`~vibrapol.spectrum.orientation`: oriented samples;
- :mod:`~vibrapol.spectrum.sweep`: polarization-angle sweeps;
- :mod:`~vibrapol.spectrum.conformers`: Boltzmann mixtures of conformers.
"""

from __future__ import annotations

from vibrapol.spectrum.broadening import (
    ACTIVE_FRACTION,
    DEFAULT_LINESHAPE,
    HIDDEN_BAND_FRACTION,
    GridSpectrum,
    broaden,
    default_range,
    hidden_bands,
    make_grid,
    read_only,
)
from vibrapol.spectrum.sticks import LOW_BAND_CM1, Conditions, StickSpectrum, stick_spectrum

__all__ = [
    "ACTIVE_FRACTION",
    "DEFAULT_LINESHAPE",
    "HIDDEN_BAND_FRACTION",
    "LOW_BAND_CM1",
    "Conditions",
    "GridSpectrum",
    "StickSpectrum",
    "broaden",
    "default_range",
    "hidden_bands",
    "make_grid",
    "read_only",
    "stick_spectrum",
]
