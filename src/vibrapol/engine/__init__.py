"""Embedded PySCF engine: frequencies, normal modes and ∂α from a bare structure.

The main entry point is :func:`compute_modes`.
"""

from __future__ import annotations

import os

# OpenMP threads that spin while waiting (the GNU default) slow PySCF down by an order of
# magnitude when another process shares the cores: measured here, water HF/STO-3G on 2 busy
# cores took 11 s with 2 spinning threads and 1.3 s with passive waiting.  The setting must be
# in the environment before PySCF's OpenMP runtime loads; a value the user set is kept.
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

from vibrapol.engine.compute import compute_modes  # noqa: E402
from vibrapol.engine.scf import EngineConvergenceError, EngineInputError, MethodSpec  # noqa: E402

__all__ = ["EngineConvergenceError", "EngineInputError", "MethodSpec", "compute_modes"]
