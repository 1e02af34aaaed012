"""Frames of one normal mode for a molecular viewer, and a small figure of its arrows.

Writes one period of mode N as a multi-frame XYZ file (-o NAME.xyz; any viewer that plays
multi-frame XYZ shows the motion as a loop) or an ASE trajectory (-o NAME.traj; ase gui plays
it).  The atom that moves most moves by --amplitude-ang at the turning points: an amplitude
chosen for the eye, not that of a real vibration; the comment line of every XYZ frame says
so.  --arrows FILE.png (or .svg, .pdf) also draws the displacement arrows of the mode.
"""

from __future__ import annotations

import argparse

from vibrapol.cli._common import check_output, write_outputs
from vibrapol.cli._options import add_isotopes_argument, add_kind_argument
from vibrapol.errors import VibrapolError
from vibrapol.sources import read_modes

#: Output kinds by suffix.
FRAME_SUFFIXES = (".xyz", ".traj")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol animate``."""
    from vibrapol.animation import DEFAULT_AMPLITUDE_ANG, DEFAULT_FRAMES

    parser.add_argument("source", help="quantum-chemistry output file or vibrapol *.modes.json")
    add_kind_argument(parser)
    parser.add_argument(
        "--mode", type=int, required=True, metavar="N",
        help="mode number, from 1 in order of wavenumber (the 'mode' column of vibrapol "
        "table; required, no default)",
    )  # fmt: skip
    parser.add_argument(
        "-o", "--output", metavar="FILE", required=True,
        help="frames file: .xyz (multi-frame XYZ) or .traj (ASE trajectory)",
    )  # fmt: skip
    parser.add_argument(
        "--amplitude-ang", type=float, default=DEFAULT_AMPLITUDE_ANG, metavar="A",
        help="displacement of the atom that moves most, Å (default "
        f"{DEFAULT_AMPLITUDE_ANG:g}; at most 2)",
    )  # fmt: skip
    parser.add_argument(
        "--frames", type=int, default=DEFAULT_FRAMES, metavar="N",
        help=f"frames per period (default {DEFAULT_FRAMES})",
    )  # fmt: skip
    parser.add_argument(
        "--arrows", metavar="FILE",
        help="also draw the mode's displacement arrows (.png, .svg or .pdf; default: none)",
    )  # fmt: skip
    add_isotopes_argument(parser, "animate this isotopologue's mode N")
    parser.add_argument("--force", action="store_true", help="overwrite existing output files")


def run(args: argparse.Namespace) -> int:
    """Read the source, build the frames (and arrows), write them all or none."""
    from vibrapol import animation
    from vibrapol.fileio import figure_format

    suffix = "." + args.output.rsplit(".", 1)[-1].lower() if "." in args.output else ""
    if suffix not in FRAME_SUFFIXES:
        raise VibrapolError(f"{args.output}: frames files must end in .xyz or .traj")
    arrow_format = figure_format(args.arrows) if args.arrows else None
    check_output(args, args.arrows)
    modes = read_modes(args.source, kind=args.kind)
    if args.isotopes is not None:
        from vibrapol.isotopes import frequencies_only, isotopologue

        modes = isotopologue(frequencies_only(modes), args.isotopes)
    index = args.mode - 1
    if suffix == ".xyz":
        data: str | bytes = animation.frames_xyz(modes, index, args.amplitude_ang, args.frames)
    else:
        data = animation.frames_trajectory(modes, index, args.amplitude_ang, args.frames)
    files: list[tuple[str | None, str | bytes]] = [(args.output, data)]
    if args.arrows and arrow_format:
        from vibrapol.plotting.arrows import mode_arrows_figure
        from vibrapol.plotting.style import figure_bytes

        files.append((args.arrows, figure_bytes(mode_arrows_figure(modes, [index]), arrow_format)))
    write_outputs(args, files)
    return 0
