"""Test session set-up: one BLAS thread per process, and tests/ importable for helper modules."""

from __future__ import annotations

import os
import sys
from pathlib import Path

# One BLAS/OpenMP thread per test process: pytest-xdist runs two processes on two cores.
os.environ.setdefault("OMP_NUM_THREADS", "1")
# Idle OpenMP threads sleep instead of spinning (much faster on a shared 2-core machine).
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

# The helper modules (_paths, _source_contract) are imported by name; pytest's default import
# mode puts tests/ on sys.path already, --import-mode=importlib does not.
_TESTS = str(Path(__file__).resolve().parent)
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

# Kept for test modules that still import these from conftest; new code imports _paths.
from _paths import FIXTURES, PROJECT_ROOT, QC_OUTPUTS, qc_output  # noqa: E402, F401
