"""Shared test fixtures: where the real quantum-chemistry outputs are, and small PySCF jobs."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

# One BLAS/OpenMP thread per test process: pytest-xdist runs two processes on two cores.
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

PROJECT_ROOT = Path(__file__).resolve().parents[1]
QC_OUTPUTS = PROJECT_ROOT.parent / "shared" / "qc-outputs"
FIXTURES = Path(__file__).resolve().parent / "fixtures"


def qc_output(name: str) -> Path:
    """Path of a real output in ../shared/qc-outputs, skipping the test when it is absent."""
    path = QC_OUTPUTS / name
    if not path.is_file():
        pytest.skip(
            f"real output {name} not available (../shared/qc-outputs is absent in this checkout)"
        )
    return path
