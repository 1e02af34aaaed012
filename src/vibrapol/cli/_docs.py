"""Render the help of every subcommand as Markdown: the source of ``docs/cli.md``.

Regenerate the page after changing any option or adding a subcommand::

    python -m vibrapol.cli._docs > docs/cli.md

``tests/test_docs.py`` fails while the committed page differs from what this prints.  The text
comes from the same :func:`vibrapol.cli.build_parser` the ``vibrapol`` command uses, at a fixed
width so that the page does not depend on the terminal it was made in.
"""

from __future__ import annotations

import argparse
import re
import sys
import textwrap

from vibrapol.cli import build_parser

#: Line width of the rendered help (independent of the terminal).
HELP_WIDTH = 96

_INTRO = """\
# Command-line reference

<!-- Generated from the argument parsers by `python -m vibrapol.cli._docs > docs/cli.md`.
     Do not edit by hand: tests/test_docs.py checks that this page is current. -->

Every subcommand is `vibrapol SUBCOMMAND ...`; `vibrapol SUBCOMMAND --help` prints the same
options as below, wrapped to your terminal.  Shared behaviour:

- An error you can cause (a bad file, a bad option) prints one line,
  `vibrapol SUBCOMMAND: error: ...`, saying what is wrong, where, and what to do, and the
  command exits with status 2.  `--traceback` shows the Python stack instead.
- Inputs must be regular files (a symbolic link to one is fine): devices such as `/dev/zero`,
  named pipes and directories are refused before they are opened.  Size bounds: 2 GB for
  quantum-chemistry outputs and *.modes.json, 200 MB for structures and measured spectra.
- A structure in XYZ format is recognised by its content, whatever the file is called, and
  its comment line is free text.  A file with several structures (frames) is refused: keep
  the one you want, e.g. the last with `ase convert -n -1 traj.xyz last.xyz`.
- Every output of a command is checked before any work starts: never overwritten without
  `--force`; a name ending in `/`, a directory, a device or a pipe is refused; two outputs
  naming the same file are refused; an output that is one of the inputs is refused even with
  `--force` (also through symbolic or hard links).
- Symbolic links are followed, as editors do: the file the link points to is written and the
  link stays.  A link to a file that does not exist yet counts as an existing file (it needs
  `--force`).
- All outputs are written to temporary files and renamed into place only when every one is
  complete: a full disk, a name too long or any other failure leaves the old files as they
  were and no partial new ones, with one line saying what went wrong.
- Where the terminal cannot show characters such as ±, ρ, Å or ⁻¹ (for example under
  `LC_ALL=C`), they are printed as `+/-`, `rho`, `A`, `^-1`; files are always UTF-8.
- Warnings (printed values that disagree with vibrapol's own numbers, imaginary modes, coarse
  grids) go to standard error as `vibrapol: warning: ...`.

See [quickstart.md](quickstart.md) for a first session and [concepts.md](concepts.md) for what
the numbers mean.
"""


class _ParagraphFormatter(argparse.HelpFormatter):
    """Fixed width; keeps the blank-line paragraphs of a description instead of merging them."""

    def __init__(self, prog: str) -> None:
        super().__init__(prog, width=HELP_WIDTH, max_help_position=32)

    def _fill_text(self, text: str, width: int, indent: str) -> str:
        paragraphs = re.split(r"\n\s*\n", textwrap.dedent(text).strip())
        return "\n\n".join(
            textwrap.fill(
                " ".join(p.split()),
                width,
                initial_indent=indent,
                subsequent_indent=indent,
                break_on_hyphens=False,
            )
            for p in paragraphs
        )

    def _split_lines(self, text: str, width: int) -> list[str]:
        return textwrap.wrap(" ".join(text.split()), width, break_on_hyphens=False)


def subcommand_parsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    """Name → parser of every subcommand of ``parser``, in the order they were added."""
    for action in parser._actions:  # argparse offers no public accessor for subparsers
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def _help_text(parser: argparse.ArgumentParser) -> str:
    parser.formatter_class = _ParagraphFormatter
    return parser.format_help().rstrip() + "\n"


def _one_line_helps(parser: argparse.ArgumentParser) -> dict[str, str]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return {a.dest: a.help or "" for a in action._choices_actions}
    return {}


def render_cli_markdown() -> str:
    """The whole ``docs/cli.md`` page: an index of subcommands and the help of each."""
    parser = build_parser()
    subs = subcommand_parsers(parser)
    helps = _one_line_helps(parser)
    out = [_INTRO, "| subcommand | what it does |", "|---|---|"]
    out += [f"| [`{name}`](#vibrapol-{name}) | {helps.get(name, '')} |" for name in subs]
    out += ["", "## vibrapol", "", "```text", _help_text(parser) + "```", ""]
    for name, sub in subs.items():
        out += [f"## vibrapol {name}", "", "```text", _help_text(sub) + "```", ""]
    return "\n".join(out).rstrip() + "\n"


def main() -> int:
    """Print the page on standard output."""
    sys.stdout.write(render_cli_markdown())
    return 0


if __name__ == "__main__":
    sys.exit(main())
