"""Helpers shared by the subcommands: output handling."""

from __future__ import annotations

import argparse
import sys

from vibrapol.fileio import check_writable, write_atomic


def add_output_arguments(parser: argparse.ArgumentParser, what: str = "output") -> None:
    """Add ``-o/--output`` and ``--force``."""
    parser.add_argument(
        "-o", "--output", metavar="FILE", help=f"write the {what} here (default: standard output)"
    )
    parser.add_argument("--force", action="store_true", help="overwrite an existing output file")


def check_output(args: argparse.Namespace) -> None:
    """Fail early, before any work, if the output file may not be written."""
    if args.output:
        check_writable(args.output, args.force)


def emit(args: argparse.Namespace, text: str) -> None:
    """Write ``text`` to ``--output`` atomically, or to standard output."""
    if args.output:
        write_atomic(args.output, text, force=args.force)
        print(f"wrote {args.output}", file=sys.stderr)
    else:
        sys.stdout.write(text)
