"""Polar sweep: intensity of chosen bands versus polarizer angle, analyzer parallel and crossed.

The sample is isotropic, fixed in one orientation, aligned along an axis, or uniaxially
distributed about a director (surfaces, stretched films).  Laboratory frame: the incident beam
travels along +z, V is y and H is x; the polarizer angle runs from V towards H.  Molecular axes
are given in the frame of the source's coordinates.

Laser safety: laser radiation can injure eyes and skin; follow your institution's laser safety
rules and local regulations.
"""

from __future__ import annotations

import argparse
import math

import numpy as np

from vibrapol.cli._common import add_output_arguments, check_output, print_stdout, write_outputs
from vibrapol.cli._options import add_figure_width_argument, figure_width
from vibrapol.cli.spectrum import (
    add_physics_arguments,
    parse_floats,
    scale_from_args,
)
from vibrapol.errors import VibrapolError
from vibrapol.fileio import figure_format
from vibrapol.sources import read_modes
from vibrapol.spectrum import orientation as orient
from vibrapol.spectrum.channels import GEOMETRIES
from vibrapol.spectrum.sweep import polar_sweep

ORIENTATIONS = ("isotropic", "fixed", "aligned", "uniaxial")

#: Most polarizer angles in one sweep (0.01° steps over a full turn).
MAX_ANGLES = 36_001


#: A band asked for with --bands must have a computed band this close (cm⁻¹): positions read off
#: a measured spectrum differ from scaled computed ones by a few tens of cm⁻¹ at most.
BAND_SEARCH_CM1 = 50.0


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol sweep``."""
    parser.add_argument(
        "source", help="*.modes.json or quantum-chemistry output (needs polarizability derivatives)"
    )
    parser.add_argument(
        "--orientation", choices=ORIENTATIONS, required=True, help="how the molecules are oriented"
    )
    parser.add_argument(
        "--euler-deg",
        metavar="A,B,C",
        help="fixed: z-y-z Euler angles in degrees of the rotation molecule -> laboratory "
        "(needed with --orientation fixed; no default)",
    )
    parser.add_argument(
        "--mol-axis",
        default="z",
        metavar="AXIS",
        help="molecular axis: x, y, z or three numbers X,Y,Z (default z)",
    )
    parser.add_argument(
        "--director",
        default="y",
        metavar="AXIS",
        help="laboratory axis the molecular axis aligns to: x, y, z or X,Y,Z (default y = V)",
    )
    parser.add_argument(
        "--tilt-deg",
        type=float,
        default=0.0,
        metavar="DEG",
        help="uniaxial: most probable tilt in degrees (default 0)",
    )
    parser.add_argument(
        "--tilt-spread-deg",
        type=float,
        default=0.0,
        metavar="DEG",
        help="uniaxial: Gaussian spread of the tilt in degrees (default 0; inf = none)",
    )
    parser.add_argument(
        "--twist-deg",
        type=float,
        metavar="DEG",
        help="uniaxial: fixed twist about the molecular axis in degrees (default: uniform)",
    )
    parser.add_argument(
        "--angles-deg",
        default="0:360:5",
        metavar="START:STOP:STEP",
        help="polarizer angles in degrees (default 0:360:5)",
    )
    parser.add_argument(
        "--bands",
        metavar="CM1[,CM1...]",
        help="Raman shifts of the bands to sweep, comma-separated; each takes the nearest "
        f"computed band, which must lie within {BAND_SEARCH_CM1:g} cm⁻¹ (default: strongest)",
    )
    parser.add_argument(
        "--top",
        type=int,
        default=4,
        metavar="N",
        help="the N strongest bands are swept when --bands is not given (default 4)",
    )
    parser.add_argument(
        "--geometry",
        type=int,
        choices=GEOMETRIES,
        default=180,
        help="scattering angle in degrees (default 180: oriented samples such as films, "
        "surfaces and crystals are usually measured in back-scattering through a microscope; "
        "spectrum's default is 90, the usual geometry for liquids)",
    )
    add_physics_arguments(parser)
    parser.add_argument(
        "--format", choices=("csv", "json"), default="csv", help="output format (default csv)"
    )
    add_output_arguments(parser, "sweep")
    parser.add_argument(
        "--figure",
        metavar="FILE",
        action="append",
        default=[],
        help="polar figure (.svg, .pdf or .png); repeat for several formats",
    )
    add_figure_width_argument(parser, "double")


def orientation_from_args(args: argparse.Namespace) -> orient.Orientation:
    """The Orientation the options describe."""
    if args.orientation == "isotropic":
        return orient.isotropic()
    if args.orientation == "fixed":
        if not args.euler_deg:
            raise VibrapolError("--orientation fixed needs --euler-deg A,B,C")
        angles = parse_floats(args.euler_deg, "--euler-deg")
        if len(angles) != 3:
            raise VibrapolError(f"--euler-deg needs three angles, got {args.euler_deg!r}")
        return orient.fixed(orient.euler_zyz(*angles), f"fixed, Euler z-y-z {args.euler_deg} deg")
    if args.orientation == "aligned":
        return orient.aligned(args.mol_axis, args.director)
    return orient.uniaxial(
        args.mol_axis,
        args.director,
        tilt_deg=args.tilt_deg,
        tilt_spread_deg=args.tilt_spread_deg,
        twist_deg=args.twist_deg,
    )


def parse_angles(text: str) -> np.ndarray:
    """``"0:360:5"`` → 0, 5, …, 360."""
    parts = parse_floats(text.replace(":", ","), "--angles-deg")
    if len(parts) != 3 or parts[2] <= 0 or parts[1] < parts[0]:
        raise VibrapolError(f"--angles-deg must be START:STOP:STEP with STEP > 0, got {text!r}")
    start, stop, step = parts
    count = math.floor((stop - start) / step + 1e-9) + 1
    if count > MAX_ANGLES:
        raise VibrapolError(
            f"--angles-deg {text!r} gives {count:.3g} angles, more than {MAX_ANGLES}; "
            "use a larger step"
        )
    return start + step * np.arange(count)


def check_bands_found(wanted_cm1: list[float], found_cm1: np.ndarray) -> None:
    """Refuse a ``--bands`` position with no computed band within :data:`BAND_SEARCH_CM1`."""
    found = np.asarray(found_cm1, dtype=float)
    for band in wanted_cm1:
        nearest = float(found[np.argmin(np.abs(found - band))])
        if abs(nearest - band) > BAND_SEARCH_CM1:
            raise VibrapolError(
                f"--bands {band:g}: no computed band within {BAND_SEARCH_CM1:g} cm⁻¹ "
                f"(the nearest is at {nearest:.1f} cm⁻¹); give positions of computed bands"
            )


def run(args: argparse.Namespace) -> int:
    """Compute the sweep and write the table (and the figure)."""
    check_output(args, *args.figure)
    formats = [figure_format(path) for path in args.figure]
    orientation = orientation_from_args(args)
    angles = parse_angles(args.angles_deg)
    modes = read_modes(args.source, kind=args.kind)
    sweep = polar_sweep(
        modes,
        angles_deg=angles,
        bands_cm1=parse_floats(args.bands, "--bands") if args.bands else None,
        top=args.top,
        geometry_deg=args.geometry,
        orientation=orientation,
        quantity=args.quantity,
        laser_nm=args.laser_nm,
        temperature_k=args.temperature_k,
        scale=scale_from_args(args),
        detector=args.detector,
        degeneracy_tol_cm1=args.degeneracy_tol_cm1,
    )
    if args.bands:
        check_bands_found(parse_floats(args.bands, "--bands"), sweep.positions_cm1)
    from vibrapol.output import spectra as spectrum_io

    figures: list[tuple[str | None, str | bytes]] = []
    text = spectrum_io.sweep_csv(sweep) if args.format == "csv" else spectrum_io.sweep_json(sweep)
    if args.figure:
        from vibrapol import plotting

        fig = plotting.polar_figure(sweep, width=figure_width(args.width))
        figures = [
            (p, plotting.figure_bytes(fig, f)) for p, f in zip(args.figure, formats, strict=True)
        ]
    write_outputs(args, [*figures, (args.output, text)])  # all or nothing
    if not args.output:
        print_stdout(text)
    return 0
