"""Per-mode Raman table (frequency, invariants, activity, depolarization ratios) of any source."""

from __future__ import annotations

import argparse

from vibrapol.cli._common import add_output_arguments, check_output, emit
from vibrapol.cli._options import (
    add_degeneracy_argument,
    add_isotopes_argument,
    add_kind_argument,
    add_no_symmetry_argument,
)
from vibrapol.cli.spectrum import add_scale_arguments, scale_from_args
from vibrapol.cli.symmetry import add_symmetry_arguments, recorded_warnings
from vibrapol.errors import OptionError, VibrapolError
from vibrapol.output.tables import FORMATTERS, table_latex, table_markdown
from vibrapol.ramantable import raman_table, symmetry_table, with_warnings
from vibrapol.sources import read_modes


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol table``."""
    parser.add_argument("source", help="quantum-chemistry output file or vibrapol *.modes.json")
    add_kind_argument(parser)
    add_isotopes_argument(parser, "tabulate this isotopologue instead of the source's masses")
    parser.add_argument(
        "--format", choices=sorted(FORMATTERS), default="text", help="output format (default text)"
    )
    add_degeneracy_argument(parser, " when the point group is not used (--no-symmetry)")
    add_no_symmetry_argument(parser)
    add_symmetry_arguments(parser)
    parser.add_argument(
        "--no-describe",
        action="store_true",
        help="leave the description column empty (default: describe every mode by the bond "
        "stretches, bends, wags and torsions carrying its potential energy)",
    )
    add_scale_arguments(parser)
    add_output_arguments(parser, "table")


#: Formats with one row per band, which may show scaled wavenumbers.
BAND_FORMATTERS = {"markdown": table_markdown, "latex": table_latex}
BAND_FORMATS = tuple(BAND_FORMATTERS)


def run(args: argparse.Namespace) -> int:
    """Read the source, compute the table, print or write it."""
    check_output(args)
    scaled = any(
        getattr(args, n) is not None for n in ("scale", "scale_for", "scale_high", "split_cm1")
    )
    if scaled and args.format not in BAND_FORMATS:
        raise VibrapolError(
            "--scale, --scale-for, --scale-high and --split-cm1 apply to the band tables "
            "(--format markdown or latex); the per-mode formats list harmonic wavenumbers"
        )
    scale = scale_from_args(args) if scaled else None
    if args.no_symmetry and args.symmetrize:
        raise OptionError("--symmetrize needs the point group; it cannot go with --no-symmetry")
    describe = not args.no_describe and args.format not in BAND_FORMATS
    with recorded_warnings() as texts:
        modes = read_modes(args.source, kind=args.kind)
        if args.isotopes is not None:
            from vibrapol.isotopes import isotopologue

            modes = isotopologue(modes, args.isotopes)
        if scale is not None:  # a published factor must belong to the source's method and basis
            scale.check_belongs(modes.provenance.method, modes.provenance.basis, args.source)
        if args.no_symmetry:
            table = raman_table(
                modes, degeneracy_tol_cm1=args.degeneracy_tol_cm1, describe=describe
            )
        else:
            _, table = symmetry_table(
                modes,
                tolerance_ang=args.symmetry_tolerance_ang,
                symmetrize=args.symmetrize,
                degeneracy_tol_cm1=args.degeneracy_tol_cm1,
                describe=describe,
            )
    table = with_warnings(table, texts)
    if args.format in BAND_FORMATS:
        emit(args, BAND_FORMATTERS[args.format](table, scale))
    else:
        emit(args, FORMATTERS[args.format](table))
    return 0
