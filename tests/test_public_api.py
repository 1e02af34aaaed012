"""Contract of the package's top level: the public API of ``import vibrapol`` and its cost.

Contracts checked (docs/api.md, design.md "Package layout"): every name of ``vibrapol.__all__``
resolves to the object of its home module; ``import vibrapol`` never loads PySCF, Dask or
matplotlib (heavy libraries are imported where they are used, never at start-up); importing the
measured-spectrum package does not load the quantum-chemistry readers.
"""

import importlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

import vibrapol

SRC = str(Path(vibrapol.__file__).resolve().parents[1])


def _loaded_after(statement: str, prefixes: tuple[str, ...]) -> str:
    code = (
        f"import sys; {statement}; "
        f"print(sorted(m for m in sys.modules if m.split('.')[0] in {prefixes!r}"
        f" or m.startswith({prefixes!r})))"
    )
    env = {**os.environ, "PYTHONPATH": SRC}
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True
    )
    return out.stdout.strip()


def test_import_loads_no_heavy_library():
    assert _loaded_after("import vibrapol", ("pyscf", "dask", "matplotlib")) == "[]"


def test_measured_spectra_do_not_load_the_program_readers():
    # design.md: measured/ reads measured spectra; the quantum-chemistry readers are not its room
    assert _loaded_after("import vibrapol.measured", ("vibrapol.sources",)) == "[]"


@pytest.mark.parametrize("name", sorted(set(vibrapol.__all__) - {"__version__"}))
def test_public_name_is_its_home_module_object(name):
    value = getattr(vibrapol, name)
    home = importlib.import_module(value.__module__)
    assert getattr(home, name) is value


@pytest.mark.parametrize(
    ("name", "home"),
    [
        ("stick_spectrum", "vibrapol.spectrum"),
        ("broaden", "vibrapol.spectrum"),
        ("assign", "vibrapol.compare"),
        ("rank", "vibrapol.compare"),
        ("read_pair", "vibrapol.measured"),
        ("compute_modes", "vibrapol.engine"),
        ("read_modes", "vibrapol.sources"),
        ("raman_table", "vibrapol.ramantable"),
    ],
)
def test_public_name_matches_its_package(name, home):
    assert getattr(vibrapol, name) is getattr(importlib.import_module(home), name)


def test_subpackage_reachable_as_attribute():
    assert vibrapol.plotting is importlib.import_module("vibrapol.plotting")


def test_unknown_name_raises_attribute_error():
    with pytest.raises(AttributeError, match="no attribute 'no_such_name'"):
        vibrapol.no_such_name  # noqa: B018
