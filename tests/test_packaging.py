"""The package as users get it: the built wheel works outside the source tree, the docs site builds.

Contracts checked here:

* the wheel built from the project's own files installs into a clean environment and
  ``vibrapol table`` runs there on an example, importing the installed copy (not ``src/``), with
  the bundled demo data found inside the installed package;
* the documentation site (``mkdocs.yml``: the pages of ``docs/`` and an API reference generated
  from the numpydoc docstrings) builds with warnings as errors.
"""

from __future__ import annotations

import os
import site
import subprocess
import sys
import sysconfig
from pathlib import Path

import pytest

from _paths import PROJECT_ROOT


def _clean_env() -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTHON")}
    env["PYTHONNOUSERSITE"] = "1"
    return env


@pytest.mark.slow
def test_wheel_installs_and_runs_outside_the_source_tree(tmp_path):
    pytest.importorskip("wheel", reason="building the wheel needs the 'wheel' package ([test])")
    dist = tmp_path / "dist"
    build = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "-q",
         "-w", str(dist), str(PROJECT_ROOT)],
        capture_output=True, text=True, timeout=300,
    )  # fmt: skip
    assert build.returncode == 0, build.stderr
    (wheel,) = dist.glob("vibrapol-*.whl")
    # A clean environment: a new venv without the project.  Its dependencies (numpy, PySCF, …)
    # are made visible through a plain path entry to this interpreter's site-packages; a plain
    # entry does not run the .pth files there, so the editable install of src/ stays invisible.
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True)
    purelib = Path(sysconfig.get_path("purelib", vars={"base": str(venv), "platbase": str(venv)}))
    (purelib / "_deps.pth").write_text("\n".join(site.getsitepackages()) + "\n")
    install = subprocess.run(
        [sys.executable, "-m", "pip", "install", "--no-deps", "--no-index", "-q",
         "--target", str(purelib), str(wheel)],
        capture_output=True, text=True, timeout=300,
    )  # fmt: skip
    assert install.returncode == 0, install.stderr
    python = venv / "bin" / "python"
    work = tmp_path / "elsewhere"
    work.mkdir()
    example = work / "water.modes.json"
    example.write_bytes((PROJECT_ROOT / "examples" / "water.modes.json").read_bytes())
    probe = subprocess.run(
        [str(python), "-c",
         "import vibrapol, importlib.resources as r; print(vibrapol.__file__); "
         "print(r.files('vibrapol').joinpath('data', 'dichloromethane.xyz').is_file())"],
        cwd=work, env=_clean_env(), capture_output=True, text=True, timeout=120,
    )  # fmt: skip
    assert probe.returncode == 0, probe.stderr
    where, data_found = probe.stdout.split()
    assert Path(where).is_relative_to(purelib), where
    assert data_found == "True"
    table = subprocess.run(
        [str(python), "-m", "vibrapol", "table", "water.modes.json", "--format", "csv"],
        cwd=work, env=_clean_env(), capture_output=True, text=True, timeout=300,
    )  # fmt: skip
    assert table.returncode == 0, table.stderr
    # examples/water.modes.json (PySCF RHF/6-31G*): bend, symmetric and antisymmetric stretch.
    rows = [r for r in table.stdout.splitlines() if r and not r.startswith("#")]
    assert len(rows) == 1 + 3
    assert rows[1].split(",")[1].startswith("1826.5")


def test_documentation_site_builds_strictly(tmp_path):
    pytest.importorskip("mkdocs", reason="the docs site needs mkdocs ([test] extra)")
    pytest.importorskip("mkdocstrings", reason="the API reference needs mkdocstrings")
    out = tmp_path / "site"
    run = subprocess.run(
        [sys.executable, "-m", "mkdocs", "build", "--strict", "-q", "-d", str(out)],
        cwd=PROJECT_ROOT, capture_output=True, text=True, timeout=600,
        env={**os.environ, "NO_MKDOCS_2_WARNING": "1"},
    )  # fmt: skip
    assert run.returncode == 0, run.stdout + run.stderr
    reference = (out / "reference" / "modeset" / "index.html").read_text(encoding="utf-8")
    # Generated from the code: the class and a documented attribute of its docstring.
    assert "ModeSet" in reference and "freqs_cm1" in reference


def test_every_docs_page_is_in_the_site_navigation():
    # Contract: a page added to docs/ is reachable from the site's navigation.
    text = (PROJECT_ROOT / "mkdocs.yml").read_text(encoding="utf-8")
    for page in sorted((PROJECT_ROOT / "docs").rglob("*.md")):
        rel = page.relative_to(PROJECT_ROOT / "docs").as_posix()
        assert rel in text, f"{rel} is missing from the nav of mkdocs.yml"
