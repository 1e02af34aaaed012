"""The CI gate as written down.

Contracts checked here:

* ``.ci/run`` runs exactly the README's test command (the second ``bash`` block of README.md);
* that command runs ``ruff check .``, ``ruff format --check .`` and ``mypy`` before the tests;
* mypy is configured in ``pyproject.toml`` for the package without switching checks off
  globally: no disabled error codes, and missing imports allowed only per named module.
"""

from __future__ import annotations

import re
import tomllib

from _paths import PROJECT_ROOT

GATES = ("ruff check .", "ruff format --check .", "mypy", "pytest -q -n 2")


def _readme_test_command() -> str:
    text = (PROJECT_ROOT / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```bash\n(.*?)\n```", text, flags=re.DOTALL)
    return blocks[1].strip()


def _ci_command() -> str:
    lines = (PROJECT_ROOT / ".ci" / "run").read_text(encoding="utf-8").splitlines()
    commands = [s for s in lines if s.strip() and not s.startswith(("#", "set ", "cd "))]
    assert len(commands) == 1, commands
    return commands[0].strip()


def test_ci_runs_the_readme_test_command():
    assert _ci_command() == _readme_test_command()


def test_lint_and_types_run_before_the_tests():
    steps = [s.strip() for s in _readme_test_command().split("&&")]
    positions = [steps.index(g) for g in GATES]
    assert positions == sorted(positions)
    assert steps[-1] == "pytest -q -n 2"


def test_mypy_is_configured_without_global_escapes():
    config = tomllib.loads((PROJECT_ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    mypy = config["tool"]["mypy"]
    assert mypy["files"] == ["src/vibrapol"]
    assert mypy["python_version"] == "3.11"
    assert mypy["warn_unused_ignores"] is True
    assert "disable_error_code" not in mypy
    assert "ignore_missing_imports" not in mypy
    for override in mypy.get("overrides", []):
        assert "disable_error_code" not in override
        assert override["module"], override
    extra = config["project"]["optional-dependencies"]["test"]
    assert any(req.startswith("mypy>=") for req in extra)
