"""vibrapol: polarized Raman spectra of molecules.

Reads frequencies, normal modes and polarizability derivatives from quantum-chemistry outputs
(or computes them with an embedded PySCF engine), computes Raman invariants, activities and
depolarization ratios per mode, and builds the per-mode Raman table.
"""

from __future__ import annotations

__version__ = "0.1.0"

from vibrapol.modeset import ModeSet, Provenance  # noqa: E402
from vibrapol.ramantable import RamanTable, raman_table  # noqa: E402
from vibrapol.sources import read_modes  # noqa: E402

__all__ = ["ModeSet", "Provenance", "RamanTable", "raman_table", "read_modes", "__version__"]
