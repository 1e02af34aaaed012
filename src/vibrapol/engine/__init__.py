"""Embedded PySCF engine: frequencies, normal modes and ∂α from a bare structure.

The main entry point is :func:`compute_modes`.
"""

from __future__ import annotations

from vibrapol.engine.compute import compute_modes
from vibrapol.engine.scf import EngineConvergenceError, EngineInputError, MethodSpec

__all__ = ["EngineConvergenceError", "EngineInputError", "MethodSpec", "compute_modes"]
