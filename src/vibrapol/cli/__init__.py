"""Command line: ``vibrapol SUBCOMMAND ...``, one module per subcommand.

Each subcommand module has ``add_arguments(parser)`` and ``run(args) -> int``; the logic lives in
the library.  A :class:`~vibrapol.errors.VibrapolError` prints one line and exits with status 2;
``--traceback`` shows the stack instead.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import warnings
from collections.abc import Sequence

from vibrapol import __version__
from vibrapol.errors import VibrapolError

#: Subcommand name → module in vibrapol.cli.
SUBCOMMANDS = {
    "table": "vibrapol.cli.table",
    "symmetry": "vibrapol.cli.symmetry",
    "compute": "vibrapol.cli.compute",
    "spectrum": "vibrapol.cli.spectrum",
    "sweep": "vibrapol.cli.sweep",
    "match": "vibrapol.cli.match",
    "rank": "vibrapol.cli.rank",
    "demo": "vibrapol.cli.demo",
}


def build_parser() -> argparse.ArgumentParser:
    """The top-level parser with every subcommand attached."""
    parser = argparse.ArgumentParser(
        prog="vibrapol",
        description="Polarized Raman spectra of molecules: invariants, depolarization ratios, "
        "symmetry, spectra and assignment.",
    )
    parser.add_argument("--version", action="version", version=f"vibrapol {__version__}")
    parser.add_argument("--traceback", action="store_true", help="show the full stack on errors")
    sub = parser.add_subparsers(dest="command", metavar="SUBCOMMAND", required=True)
    for name, module_name in SUBCOMMANDS.items():
        module = importlib.import_module(module_name)
        p = sub.add_parser(name, help=module.HELP, description=module.__doc__)
        p.add_argument(
            "--traceback",
            action="store_true",
            default=argparse.SUPPRESS,
            help="show the full stack on errors",
        )
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def _format_warning(message, category, filename, lineno, line=None):  # noqa: ANN001
    return f"vibrapol: warning: {message}\n"


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``vibrapol`` console script; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    warnings.formatwarning = _format_warning
    try:
        return int(args._run(args) or 0)
    except VibrapolError as exc:
        if args.traceback:
            raise
        print(f"vibrapol {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("vibrapol: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
