"""The user documentation in docs/ is current: CLI page, runnable API examples, commands, links.

- docs/cli.md must equal what ``python -m vibrapol.cli._docs`` prints from the argument
  parsers (regenerate with that command after changing an option, see DEVELOPERS.md).
- Every ``pycon`` block of docs/api.md is run as a doctest, in order, in one namespace, from
  the project root.  Its expected outputs are checked numbers: hand-derived values stated beside
  them in the page (invariants of diag(1, 0, 0); channel heights for a² = γ² = 1; ρ = 3/4 for a
  non-totally-symmetric mode and Γ_vib = 2A1 + B2 of water, common practice), the values the
  invented spectrum was built from, published HF/STO-3G water frequencies (NIST CCCBDB, from
  memory), and regression values of our own for examples/water.modes.json.
- Every ``vibrapol ...`` command line in the shell blocks of docs/*.md and README.md parses with
  the real parser (options and choices exist), and every ``vibrapol`` import in a Python block
  resolves.
- Relative links between the pages point at files that exist.
"""

from __future__ import annotations

import ast
import doctest
import importlib
import importlib.util
import re
import shlex
import tempfile
from pathlib import Path

import pytest

from _paths import PROJECT_ROOT
from vibrapol.cli import build_parser
from vibrapol.cli._docs import render_cli_markdown

DOCS = PROJECT_ROOT / "docs"
PAGES = sorted(DOCS.glob("*.md"))
_FENCE = re.compile(r"^```([\w-]*)[^\n]*\n(.*?)^```\s*$", re.MULTILINE | re.DOTALL)


def fenced_blocks(path: Path, *languages: str) -> list[str]:
    """Contents of the fenced code blocks of ``path`` whose info string is one of ``languages``."""
    text = path.read_text(encoding="utf-8")
    return [body for lang, body in _FENCE.findall(text) if lang in languages]


def test_cli_page_is_generated_from_the_parsers():
    committed = (DOCS / "cli.md").read_text(encoding="utf-8")
    assert committed == render_cli_markdown(), (
        "docs/cli.md is out of date: run `python -m vibrapol.cli._docs > docs/cli.md`"
    )


def test_cli_page_covers_every_subcommand():
    page = (DOCS / "cli.md").read_text(encoding="utf-8")
    from vibrapol.cli import SUBCOMMANDS

    for name in SUBCOMMANDS:
        assert f"## vibrapol {name}\n" in page


def test_api_examples_run(monkeypatch, tmp_path):
    blocks = fenced_blocks(DOCS / "api.md", "pycon")
    assert len(blocks) >= 10, "docs/api.md lost its runnable examples"
    monkeypatch.chdir(PROJECT_ROOT)
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))  # the page's mkdtemp() lands here
    parser = doctest.DocTestParser()
    test = parser.get_doctest("\n".join(blocks), {}, "docs/api.md", str(DOCS / "api.md"), 0)
    flags = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE | doctest.IGNORE_EXCEPTION_DETAIL
    runner = doctest.DocTestRunner(optionflags=flags)
    failures = []
    runner.run(test, out=failures.append)
    assert runner.failures == 0, "".join(failures)
    assert runner.tries >= 40


def _command_lines(block: str) -> list[str]:
    """``vibrapol ...`` commands of a shell block (continuations joined, chains split)."""
    joined = re.sub(r"\\\n\s*", " ", block)
    commands = []
    for line in joined.splitlines():
        for part in re.split(r"&&|;|\|", line):
            part = part.strip().removeprefix("$ ").strip()
            if part.startswith("vibrapol "):
                commands.append(part)
    return commands


def _shell_commands() -> list[tuple[str, str]]:
    found = []
    for page in [*PAGES, PROJECT_ROOT / "README.md"]:
        for block in fenced_blocks(page, "bash", "sh", "console"):
            found += [(page.name, c) for c in _command_lines(block)]
    return found


_COMMANDS = _shell_commands()


@pytest.mark.parametrize(
    ("page", "command"), _COMMANDS, ids=[f"{p}:{' '.join(c.split()[:2])}" for p, c in _COMMANDS]
)
def test_documented_commands_parse(page, command):
    words = shlex.split(command, comments=True)[1:]
    if words in (["--version"], ["--help"]):
        return
    try:
        args = build_parser().parse_args(words)
    except SystemExit as exc:  # argparse reports unknown options and bad choices this way
        pytest.fail(f"{page}: `{command}` does not parse (exit {exc.code})")
    assert args.command == words[0]


def _python_imports() -> list[tuple[str, str, str | None]]:
    found = []
    for page in [*PAGES, PROJECT_ROOT / "README.md"]:
        for block in fenced_blocks(page, "python"):
            for node in ast.walk(ast.parse(block)):
                if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("vibrapol"):
                    found += [(page.name, node.module, a.name) for a in node.names]
                elif isinstance(node, ast.Import):
                    found += [(page.name, a.name, None) for a in node.names]
    return [f for f in found if f[1].split(".")[0] == "vibrapol"]


_IMPORTS = _python_imports()


@pytest.mark.parametrize(
    ("page", "module", "name"), _IMPORTS, ids=[f"{p}:{m}.{n or ''}" for p, m, n in _IMPORTS]
)
def test_documented_imports_exist(page, module, name):
    mod = importlib.import_module(module)
    if name is not None:
        assert hasattr(mod, name) or importlib.util.find_spec(f"{module}.{name}"), (
            f"{page}: `from {module} import {name}` fails"
        )


def test_python_blocks_are_valid_python():
    for page in [*PAGES, PROJECT_ROOT / "README.md"]:
        for block in fenced_blocks(page, "python"):
            ast.parse(block)  # raises SyntaxError naming the line


_LINK = re.compile(r"\]\(([^)#\s]+)(#[^)\s]*)?\)")


def _anchor(heading: str) -> str:
    """GitHub's anchor of a Markdown heading: lower case, punctuation dropped, spaces to '-'."""
    text = re.sub(r"[^\w\- ]", "", heading.strip().lower())
    return text.replace(" ", "-")


def test_relative_links_resolve():
    problems = []
    for page in [*PAGES, PROJECT_ROOT / "README.md"]:
        for target, anchor in _LINK.findall(page.read_text(encoding="utf-8")):
            if "://" in target:
                continue
            path = (page.parent / target).resolve()
            if not path.exists():
                problems.append(f"{page.name}: {target} does not exist")
                continue
            if anchor and path.suffix == ".md":
                headings = re.findall(r"^#+ (.+)$", path.read_text(encoding="utf-8"), re.M)
                if anchor[1:] not in {_anchor(h) for h in headings}:
                    problems.append(f"{page.name}: no heading for {target}{anchor}")
    assert not problems, "\n".join(problems)


def test_index_lists_every_page():
    index = (DOCS / "index.md").read_text(encoding="utf-8")
    missing = [p.name for p in PAGES if p.name != "index.md" and f"({p.name}" not in index]
    assert not missing, f"docs/index.md does not link to {missing}"
