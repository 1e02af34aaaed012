"""Contract: the command line imports only what the chosen subcommand needs.

Start-up time itself is measured in bench/startup.py, never here; these tests check which modules
a command loads (``sys.modules`` in a fresh interpreter), which does not depend on the machine.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import os
import subprocess
import sys

import numpy as np
import pytest

from _paths import PROJECT_ROOT
from vibrapol.cli import SUBCOMMANDS, build_parser, main

SRC = str(PROJECT_ROOT / "src")
GAUSSIAN_LOG = PROJECT_ROOT / "tests" / "fixtures" / "gaussian_hood_raman.log"


def _modules_after(argv: list[str]) -> set[str]:
    """Modules loaded by ``vibrapol ARGV`` run in a fresh interpreter (its output discarded)."""
    code = (
        "import contextlib, io, json, sys\n"
        "from vibrapol.cli import main\n"
        "quiet = io.StringIO()\n"
        "with contextlib.redirect_stdout(quiet), contextlib.redirect_stderr(quiet):\n"
        f"    status = main({argv!r})\n"
        "print(json.dumps([status, sorted(sys.modules)]))\n"
    )
    env = {**os.environ, "PYTHONPATH": SRC}
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True
    )
    status, modules = json.loads(out.stdout.strip().splitlines()[-1])
    assert status == 0, f"vibrapol {' '.join(argv)} exited with {status}"
    return set(modules)


def _loaded(modules: set[str], names: tuple[str, ...]) -> list[str]:
    return sorted(n for n in names if n in modules)


def test_top_level_help_imports_no_subcommand_and_no_heavy_library():
    modules = _modules_after(["--help"])
    heavy = ("pyscf", "matplotlib", "dask", "cclib", "ase", "scipy.optimize", "numpy", "scipy")
    heavy += ("pandas",)
    assert _loaded(modules, heavy) == []
    assert _loaded(modules, tuple(m for m, _ in SUBCOMMANDS.values())) == []


def test_subcommand_help_imports_only_that_subcommand():
    modules = _modules_after(["table", "--help"])
    others = tuple(m for name, (m, _) in SUBCOMMANDS.items() if name not in {"table"})
    # table borrows option helpers from the spectrum and symmetry modules, nothing else
    assert _loaded(modules, others) == ["vibrapol.cli.spectrum", "vibrapol.cli.symmetry"]
    assert _loaded(modules, ("pyscf", "matplotlib", "dask", "cclib", "scipy.optimize")) == []


def test_table_of_a_gaussian_log_loads_no_engine_plotting_or_cluster_library():
    modules = _modules_after(["table", str(GAUSSIAN_LOG)])
    assert "vibrapol.sources.gaussian_log" in modules  # it did read the file
    assert _loaded(modules, ("pyscf", "matplotlib", "dask", "pandas")) == []
    # our own Gaussian reader, and symmetry without SciPy's optimizer or spatial packages
    assert _loaded(modules, ("cclib", "scipy.optimize", "scipy.spatial")) == []


def test_partial_parser_help_is_the_full_parsers_help():
    """Contract: building only the chosen subcommand changes no help text and no usage line."""
    full = build_parser()
    assert build_parser([]).format_help() == full.format_help()
    full_subs = next(a for a in full._actions if isinstance(a, argparse._SubParsersAction))
    for name in SUBCOMMANDS:
        one = build_parser([name])
        subs = next(a for a in one._actions if isinstance(a, argparse._SubParsersAction))
        assert subs.choices[name].format_help() == full_subs.choices[name].format_help(), name


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        ([], "vibrapol: error: the following arguments are required: SUBCOMMAND"),
        (["tabl"], "vibrapol: error: argument SUBCOMMAND: invalid choice: 'tabl'"),
        (["table"], "vibrapol table: error: the following arguments are required: source"),
        (
            ["--traceback", "table", "x", "--nope"],
            "vibrapol: error: unrecognized arguments: --nope",
        ),
    ],
)
def test_usage_errors_are_unchanged(argv, message):
    """Contract: one line and exit status 2 whether or not the subcommand is known."""
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        status = main(argv)
    assert status == 2
    assert err.getvalue().startswith(message)
    assert err.getvalue().count("\n") == 1


def test_distances_equal_scipy_cdist_to_the_last_bit():
    """Reference library: scipy.spatial.distance.cdist (the symmetry code used it before)."""
    from scipy.spatial.distance import cdist

    from vibrapol.structure import distances_ang

    rng = np.random.default_rng(7)
    for n in (1, 3, 24, 300):
        a, b = rng.normal(size=(n, 3)) * 4.0, rng.normal(size=(n + 2, 3)) * 4.0
        assert np.array_equal(distances_ang(a, b), cdist(a, b))
