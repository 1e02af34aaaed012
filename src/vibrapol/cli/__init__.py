"""Command line: ``vibrapol SUBCOMMAND ...``, one module per subcommand.

Each subcommand module has ``add_arguments(parser)`` and ``run(args) -> int``; the logic lives in
the library.  A :class:`~vibrapol.errors.VibrapolError` prints one line and exits with status 2;
``--traceback`` shows the stack instead.
"""

from __future__ import annotations

import argparse
import errno
import importlib
import sys
import warnings
from collections.abc import Sequence
from typing import NoReturn

from vibrapol import __version__
from vibrapol.cli._common import ascii_safe_streams, devnull_stdout
from vibrapol.errors import VibrapolError
from vibrapol.textio import tracking_inputs

#: Operating-system errors a user's environment causes (a full disk, a read-only file system,
#: a name too long): one line and exit status 2, like any other error a user can cause.
_ENVIRONMENT_ERRNOS = frozenset(
    {errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EROFS, errno.EIO, errno.ENAMETOOLONG}
)

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


class OneLineParser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line, like every other vibrapol error.

    argparse prints the whole usage block before the message; for a command with many
    options that buries the one line that matters.  ``--help`` still shows the usage.
    """

    def error(self, message: str) -> NoReturn:
        """Print ``PROG: error: MESSAGE`` and a pointer to ``--help``; exit with status 2."""
        hint = ""
        if message.endswith("expected one argument"):
            # "--range-cm1 -3600:3600": argparse takes a value starting with '-' for an option
            hint = (
                " (a value starting with '-' must be joined with '=', e.g. --range-cm1=-3600:3600)"
            )
        self.exit(2, f"{self.prog}: error: {message}{hint}; see {self.prog} --help\n")


def build_parser() -> argparse.ArgumentParser:
    """The top-level parser with every subcommand attached."""
    parser = OneLineParser(
        prog="vibrapol",
        description="Polarized Raman spectra of molecules: invariants, depolarization ratios, "
        "symmetry, spectra and assignment.",
    )
    parser.add_argument("--version", action="version", version=f"vibrapol {__version__}")
    parser.add_argument("--traceback", action="store_true", help="show the full stack on errors")
    sub = parser.add_subparsers(dest="command", metavar="SUBCOMMAND", required=True)
    for name, module_name in SUBCOMMANDS.items():
        module = importlib.import_module(module_name)
        p = sub.add_parser(
            name,
            help=module.HELP,
            description=module.__doc__,
            epilog=getattr(module, "EPILOG", None),
        )
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
    ascii_safe_streams()
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, or a usage error (already printed)
        return exc.code if isinstance(exc.code, int) else 0 if exc.code is None else 2
    warnings.formatwarning = _format_warning
    try:
        with tracking_inputs():  # no output of this command may overwrite one of its inputs
            status = int(args._run(args) or 0)
        sys.stdout.flush()  # a full disk behind standard output shows here, not at exit
        return status
    except VibrapolError as exc:
        if args.traceback:
            raise
        print(f"vibrapol {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("vibrapol: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader of standard output went away (``vibrapol table … | head``): stop quietly,
        # and point stdout at /dev/null so the interpreter's final flush does not fail again.
        devnull_stdout()
        return 1
    except OSError as exc:
        if args.traceback:
            raise
        if exc.errno not in _ENVIRONMENT_ERRNOS:
            raise
        if not exc.filename:  # most likely standard output; stop the final flush failing too
            devnull_stdout()
        what = f"{exc.filename}: " if exc.filename else "writing failed: "
        print(f"vibrapol {args.command}: error: {what}{exc.strerror or exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
