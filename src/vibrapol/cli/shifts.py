"""Isotope shifts: each harmonic mode of the source beside the same mode of an isotopologue.

The isotopologue's modes come from the Cartesian Hessian rebuilt from the source's complete
set of modes and analysed again with the masses of --isotopes (vibrapol.isotopes); each parent
mode is paired with the isotopologue mode whose Cartesian displacements overlap it most (one
to one).  Columns: mode, frequency_cm1, isotopologue_mode, isotopologue_cm1, shift_cm1
(ν̃′ − ν̃), ratio (ν̃′/ν̃), overlap.  Harmonic wavenumbers, unscaled.  Only wavenumbers are
compared, so a source without ∂α/∂x will do (its Raman numbers are not used).
"""

from __future__ import annotations

import argparse

from vibrapol.cli._common import add_output_arguments, check_output, emit
from vibrapol.cli._options import add_isotopes_argument, add_kind_argument
from vibrapol.cli.symmetry import recorded_warnings
from vibrapol.errors import OptionError
from vibrapol.sources import read_modes


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol shifts``."""
    parser.add_argument("source", help="quantum-chemistry output file or vibrapol *.modes.json")
    add_kind_argument(parser)
    add_isotopes_argument(parser, "the isotopologue", "none, required")
    parser.add_argument(
        "--format",
        choices=("text", "csv", "json"),
        default="text",
        help="output format (default text)",
    )
    add_output_arguments(parser, "shift table")


def run(args: argparse.Namespace) -> int:
    """Read the source, build the isotopologue, pair the modes, print or write the table."""
    from vibrapol.isotopes import frequencies_only, isotope_shifts, isotopologue
    from vibrapol.output.isotopes import SHIFT_FORMATTERS

    if args.isotopes is None:
        raise OptionError("vibrapol shifts needs --isotopes SPEC (e.g. H=2.01410178)")
    check_output(args)
    with recorded_warnings() as texts:
        modes = read_modes(args.source, kind=args.kind)
        modes = frequencies_only(modes)  # the table shows wavenumbers only
        heavy = isotopologue(modes, args.isotopes)
        shifts = isotope_shifts(modes, heavy)
    emit(args, SHIFT_FORMATTERS[args.format](shifts, texts))
    return 0
