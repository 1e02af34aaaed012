"""vibrapol: polarized Raman spectra of molecules.

Reads frequencies, normal modes and polarizability derivatives from quantum-chemistry outputs
(or computes them with an embedded PySCF engine), computes Raman invariants, activities and
depolarization ratios per mode, builds the per-mode Raman table and spectra, and assigns
computed modes to measured bands.

The public API at a glance (each name is documented in its module)::

    read_modes(path)                 -> ModeSet          (vibrapol.sources)
    raman_table(modes), symmetry_table(modes) -> RamanTable (vibrapol.ramantable)
    mode_symmetry(modes)             -> ModeSymmetry     (vibrapol.symmetry)
    stick_spectrum(modes), broaden(sticks)               (vibrapol.spectrum)
    read_pair(vv, vh), measure_bands(pair)               (vibrapol.measured)
    candidate_from_modes, assign, rank                   (vibrapol.compare)
    compute_modes(structure)         -> ModeSet          (vibrapol.engine, PySCF)

Every name is imported on first use (the data model and the readers too), so ``import vibrapol``
loads only the error types: the ``vibrapol`` command starts without NumPy or SciPy, and no import
of the package loads PySCF, Dask or matplotlib before they are needed.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from vibrapol.errors import VibrapolError

if TYPE_CHECKING:  # pragma: no cover
    from vibrapol.compare import (
        Assignment,
        Candidate,
        Ranking,
        assign,
        candidate_from_modes,
        mixture_candidate,
        rank,
    )
    from vibrapol.engine import compute_modes
    from vibrapol.measured import PolarizedPair, clean_pair, measure_bands, read_pair
    from vibrapol.modeset import ModeSet, Provenance
    from vibrapol.ramantable import RamanTable, raman_table, symmetry_table
    from vibrapol.sources import read_modes
    from vibrapol.spectrum import (
        Conditions,
        GridSpectrum,
        StickSpectrum,
        broaden,
        stick_spectrum,
    )
    from vibrapol.symmetry import ModeSymmetry, mode_symmetry

__version__ = "0.1.0"

#: Names imported on first use, and the module each comes from.
_LAZY = {
    "ModeSet": "vibrapol.modeset",
    "Provenance": "vibrapol.modeset",
    "RamanTable": "vibrapol.ramantable",
    "raman_table": "vibrapol.ramantable",
    "symmetry_table": "vibrapol.ramantable",
    "read_modes": "vibrapol.sources",
    "Conditions": "vibrapol.spectrum",
    "GridSpectrum": "vibrapol.spectrum",
    "StickSpectrum": "vibrapol.spectrum",
    "broaden": "vibrapol.spectrum",
    "stick_spectrum": "vibrapol.spectrum",
    "ModeSymmetry": "vibrapol.symmetry",
    "mode_symmetry": "vibrapol.symmetry",
    "PolarizedPair": "vibrapol.measured",
    "clean_pair": "vibrapol.measured",
    "measure_bands": "vibrapol.measured",
    "read_pair": "vibrapol.measured",
    "Assignment": "vibrapol.compare",
    "Candidate": "vibrapol.compare",
    "Ranking": "vibrapol.compare",
    "assign": "vibrapol.compare",
    "candidate_from_modes": "vibrapol.compare",
    "mixture_candidate": "vibrapol.compare",
    "rank": "vibrapol.compare",
    "compute_modes": "vibrapol.engine",
}

#: Sub-packages reachable as attributes (``vibrapol.plotting``) without importing them first.
_SUBPACKAGES = frozenset(
    {
        "compare",
        "demo",
        "engine",
        "measured",
        "output",
        "plotting",
        "sources",
        "spectrum",
        "symmetry",
    }
)


def __getattr__(name: str) -> Any:
    """Import a public name or a sub-package on first use."""
    if name in _LAZY:
        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    if name in _SUBPACKAGES:
        return importlib.import_module(f"vibrapol.{name}")
    raise AttributeError(f"module 'vibrapol' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY, *_SUBPACKAGES})


__all__ = [
    "Assignment",
    "Candidate",
    "Conditions",
    "GridSpectrum",
    "ModeSet",
    "ModeSymmetry",
    "PolarizedPair",
    "Provenance",
    "RamanTable",
    "Ranking",
    "StickSpectrum",
    "VibrapolError",
    "__version__",
    "assign",
    "broaden",
    "candidate_from_modes",
    "clean_pair",
    "compute_modes",
    "measure_bands",
    "mixture_candidate",
    "mode_symmetry",
    "rank",
    "raman_table",
    "read_modes",
    "read_pair",
    "stick_spectrum",
    "symmetry_table",
]
