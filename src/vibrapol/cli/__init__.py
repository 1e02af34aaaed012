"""Command line: ``vibrapol SUBCOMMAND ...``, one module per subcommand.

Each subcommand module has ``add_arguments(parser)`` and ``run(args) -> int``; the logic lives in
the library.  :data:`SUBCOMMANDS` names the modules, and only the chosen one is imported.  A
:class:`~vibrapol.errors.VibrapolError` prints one line and exits with status 2; ``--traceback``
shows the stack instead.
"""

from __future__ import annotations

import argparse
import errno
import importlib
import sys
import warnings
from collections.abc import Iterable, Sequence
from typing import NamedTuple, NoReturn

from vibrapol import __version__
from vibrapol.cli._common import ascii_safe_streams, devnull_stdout
from vibrapol.errors import VibrapolError
from vibrapol.textio import tracking_inputs

#: Operating-system errors a user's environment causes (a full disk, a read-only file system,
#: a name too long): one line and exit status 2, like any other error a user can cause.
_ENVIRONMENT_ERRNOS = frozenset(
    {errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EROFS, errno.EIO, errno.ENAMETOOLONG}
)


class Subcommand(NamedTuple):
    """Where a subcommand lives and its one-line help (shown by ``vibrapol --help``)."""

    module: str
    help: str


#: Subcommand name → its module in vibrapol.cli and one-line help, in the order of
#: ``vibrapol --help``.  The top-level parser is built from this table alone, so ``vibrapol
#: --help`` imports no subcommand module and ``vibrapol SUB ...`` imports only SUB's.
SUBCOMMANDS: dict[str, Subcommand] = {
    "table": Subcommand(
        "vibrapol.cli.table", "per-mode Raman table of a quantum-chemistry output or *.modes.json"
    ),
    "symmetry": Subcommand(
        "vibrapol.cli.symmetry",
        "point group, Γ_vib and selection rules of a structure or of computed modes",
    ),
    "compute": Subcommand(
        "vibrapol.cli.compute",
        "compute modes and Raman tensors of a structure with the embedded PySCF engine",
    ),
    "spectrum": Subcommand(
        "vibrapol.cli.spectrum",
        "polarized Raman spectrum (VV, VH, ...) as CSV/JSON, with optional figures",
    ),
    "sweep": Subcommand(
        "vibrapol.cli.sweep",
        "band intensities versus polarizer angle for isotropic or oriented samples",
    ),
    "shifts": Subcommand(
        "vibrapol.cli.shifts",
        "isotope shifts: each mode beside the same mode of an isotopologue (--isotopes)",
    ),
    "animate": Subcommand(
        "vibrapol.cli.animate",
        "frames of one mode for a molecular viewer (multi-frame XYZ, ASE trajectory), arrows",
    ),
    "match": Subcommand(
        "vibrapol.cli.match", "assign computed modes to the bands of a measured VV/VH spectrum"
    ),
    "rank": Subcommand(
        "vibrapol.cli.rank",
        "rank candidate structures by how well they match a measured VV/VH spectrum",
    ),
    "demo": Subcommand(
        "vibrapol.cli.demo",
        "run the whole job on the embedded engine in a worked scenario (a few minutes)",
    ),
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


def build_parser(commands: Iterable[str] | None = None) -> argparse.ArgumentParser:
    """The top-level parser; the options of ``commands`` (default: every subcommand) attached.

    Every subcommand is listed (``vibrapol --help``, "invalid choice" errors), but only the
    modules of ``commands`` are imported and only their parsers get options, description and
    epilog: :func:`main` passes the one subcommand named on the command line.
    """
    wanted = set(SUBCOMMANDS if commands is None else commands)
    parser = OneLineParser(
        prog="vibrapol",
        description="Polarized Raman spectra of molecules: invariants, depolarization ratios, "
        "symmetry, spectra and assignment.",
    )
    parser.add_argument("--version", action="version", version=f"vibrapol {__version__}")
    parser.add_argument("--traceback", action="store_true", help="show the full stack on errors")
    sub = parser.add_subparsers(dest="command", metavar="SUBCOMMAND", required=True)
    for name, (module_name, one_line) in SUBCOMMANDS.items():
        if name not in wanted:
            sub.add_parser(name, help=one_line)
            continue
        module = importlib.import_module(module_name)
        p = sub.add_parser(
            name,
            help=one_line,
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


def chosen_subcommand(argv: Sequence[str]) -> str | None:
    """The subcommand named in ``argv``, or None when there is none (or it is not one of ours).

    The top-level options take no value, so the subcommand is the first word that is not an
    option; argparse itself then reports a missing or unknown one as it always has.
    """
    for word in argv:
        if not word.startswith("-"):
            return word if word in SUBCOMMANDS else None
    return None


def _format_warning(message, category, filename, lineno, line=None):  # noqa: ANN001
    return f"vibrapol: warning: {message}\n"


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``vibrapol`` console script; returns the exit status."""
    ascii_safe_streams()
    words = sys.argv[1:] if argv is None else list(argv)
    command = chosen_subcommand(words)
    parser = build_parser([] if command is None else [command])
    try:
        args = parser.parse_args(words)
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
