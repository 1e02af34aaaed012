"""Where the tests find their files: the fixtures of our own and the real program outputs.

Imported by test modules as ``from _paths import ...`` (tests/ is on ``sys.path``: pytest puts
it there for the test modules of a folder without ``__init__.py``, and conftest.py adds it for
any import mode).  A plain module rather than conftest.py, which pytest imports itself and
which is not meant to be imported by tests.
"""

from __future__ import annotations

from pathlib import Path

import pytest

PROJECT_ROOT = Path(__file__).resolve().parents[1]
#: Real outputs of the programs, beside the project (never copied into the repository).
QC_OUTPUTS = PROJECT_ROOT.parent / "shared" / "qc-outputs"
#: Small files of our own in the layouts of the programs (tests/fixtures/generators writes them).
FIXTURES = Path(__file__).resolve().parent / "fixtures"


def qc_output(name: str) -> Path:
    """Path of a real output in ../shared/qc-outputs, skipping the test when it is absent."""
    path = QC_OUTPUTS / name
    if not path.is_file():
        pytest.skip(
            f"real output {name} not available (../shared/qc-outputs is absent in this checkout)"
        )
    return path
