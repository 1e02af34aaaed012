"""Polarized Raman spectra (VV, VH and other channels) of one molecule or a conformer mixture.

Writes the broadened spectrum as CSV (``#`` lines with the conditions, then columns shift_cm1,
vv, vh and any other channels) or JSON, optionally a stick table and figures (SVG, PDF or 300 dpi
PNG).  Several sources are conformers combined as a Boltzmann-weighted mixture (same
composition and level of theory, else refused), or, with --overlay, any molecules drawn side
by side (one column per source and channel).

Laser safety: the laser line chosen here is only a number in a calculation, but the real one
can injure eyes and skin; follow your institution's laser safety rules and local regulations.
Computed spectra are predictions, not a substitute for measurement.
"""

from __future__ import annotations

import argparse
import math
from typing import Any

from vibrapol.cli._common import add_output_arguments, check_output, print_stdout, write_outputs
from vibrapol.cli._options import (
    add_degeneracy_argument,
    add_figure_width_argument,
    add_kind_argument,
    add_temperature_argument,
    figure_width,
)
from vibrapol.cli._renamed import add_renamed
from vibrapol.errors import VibrapolError
from vibrapol.fileio import figure_format
from vibrapol.sources import read_modes
from vibrapol.spectrum import StickSpectrum, broaden, stick_spectrum
from vibrapol.spectrum.channels import GEOMETRIES
from vibrapol.spectrum.lineshapes import SHAPES, LineShape
from vibrapol.spectrum.quantities import DETECTORS, QUANTITY_UNITS
from vibrapol.spectrum.scaling import NO_SCALE, FrequencyScale


def parse_range(text: str) -> tuple[float, float]:
    """``"100:3600"`` → (100.0, 3600.0)."""
    try:
        lo, hi = (float(t) for t in text.split(":"))
    except ValueError:
        raise VibrapolError(
            f"range must be LOW:HIGH in cm-1, e.g. 100:3600, got {text!r}"
        ) from None
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise VibrapolError(f"range must have finite bounds in cm-1, got {text!r}")
    if not hi > lo:
        raise VibrapolError(f"range must run from low to high, got {text!r}")
    return lo, hi


def parse_floats(text: str, what: str) -> list[float]:
    """Comma-separated finite numbers."""
    try:
        values = [float(t) for t in text.split(",") if t.strip()]
    except ValueError:
        raise VibrapolError(f"{what} must be comma-separated numbers, got {text!r}") from None
    if not all(math.isfinite(v) for v in values):
        raise VibrapolError(f"{what} must be finite numbers, got {text!r}")
    return values


def add_scale_arguments(parser: argparse.ArgumentParser) -> None:
    """``--scale``/``--scale-for`` and the two-region ``--scale-high``/``--split-cm1``."""
    scale = parser.add_mutually_exclusive_group()
    scale.add_argument(
        "--scale",
        type=float,
        metavar="F",
        help="multiply all harmonic wavenumbers by F (a deliberate choice: not checked against "
        "the source's method; default: no scaling)",
    )
    scale.add_argument(
        "--scale-for",
        metavar="METHOD/BASIS[@SOURCE]",
        help="published factor for fundamentals, e.g. B3LYP/6-31G* or B3LYP/6-31G*@SR96 "
        "(default source: MMR07, then SR96, CCCBDB, K17, IJK05, TDB; MP2 needs MP2(FC) or "
        "MP2(AE)); refused when the source was computed with another method or basis "
        "(docs/concepts.md#frequency-scale-factors)",
    )
    parser.add_argument(
        "--scale-high",
        type=float,
        metavar="F",
        help="second factor for harmonic wavenumbers at and above --split-cm1 (default: the "
        "same factor everywhere)",
    )
    parser.add_argument(
        "--split-cm1",
        type=float,
        metavar="CM1",
        help="harmonic wavenumber in cm-1 where --scale-high starts (default: none)",
    )


def add_physics_arguments(parser: argparse.ArgumentParser) -> None:
    """Options shared by ``spectrum`` and ``sweep``: source kind, conditions, scaling."""
    add_kind_argument(parser)
    parser.add_argument(
        "--laser-nm",
        type=float,
        default=532.0,
        metavar="NM",
        help="excitation wavelength in nm (default 532)",
    )
    add_temperature_argument(parser)
    parser.add_argument(
        "--quantity",
        choices=sorted(QUANTITY_UNITS),
        default="intensity",
        help="stick height: Raman activity, relative intensity at the laser and temperature "
        "(default), or absolute differential cross section in cm^2/sr (energy based by "
        "definition, whatever --detector says)",
    )
    parser.add_argument(
        "--detector",
        choices=DETECTORS,
        default="photon",
        help="detector convention of relative intensities: photon (counting detectors such as "
        "CCD and InGaAs arrays, I ∝ ν0(ν0-ν)^3; default) or energy (I ∝ (ν0-ν)^4)",
    )
    add_scale_arguments(parser)
    add_degeneracy_argument(parser)


def scale_from_args(args: argparse.Namespace) -> FrequencyScale:
    """The FrequencyScale the options ask for."""
    if args.scale_for:
        base = FrequencyScale.published(args.scale_for)
    elif args.scale is not None:
        base = FrequencyScale(args.scale, note="given with --scale")
    else:
        base = NO_SCALE
    if args.scale_high is not None or args.split_cm1 is not None:
        note = base.note or "given with --scale-high and --split-cm1"
        return FrequencyScale(base.factor, args.scale_high, args.split_cm1, note, base.entry)
    return base


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol spectrum``."""
    parser.add_argument(
        "sources", nargs="+", metavar="SOURCE", help="*.modes.json or quantum-chemistry output(s)"
    )
    add_physics_arguments(parser)
    parser.add_argument(
        "--geometry",
        type=int,
        choices=GEOMETRIES,
        default=90,
        help="scattering angle in degrees (default 90, the usual geometry for liquids and "
        "solutions)",
    )
    parser.add_argument(
        "--channels",
        default="",
        metavar="CODE[,CODE...]",
        help="extra channels besides vv and vh, comma-separated. A code is two letters, incident "
        "then analyzer: v (vertical), h (horizontal), n (natural, unpolarized incident light), "
        "u (no analyzer); e.g. nv, nh, vu. Any polarizer/analyzer pair is p<deg>a<deg>, angles "
        "from vertical towards horizontal, e.g. p45a-45 (default: none)",
    )
    parser.add_argument(
        "--anti-stokes", action="store_true", help="add anti-Stokes bands at negative shifts"
    )
    parser.add_argument(
        "--shape", choices=SHAPES, default="lorentzian", help="line shape (default lorentzian)"
    )
    parser.add_argument(
        "--fwhm-cm1",
        type=float,
        default=8.0,
        metavar="CM1",
        help="full width at half maximum in cm-1 (default 8)",
    )
    parser.add_argument(
        "--fwhm-slope",
        type=float,
        metavar="F",
        default=0.0,
        help="FWHM grows by this times the shift (default 0)",
    )
    parser.add_argument(
        "--lorentzian-share",
        type=float,
        default=0.5,
        metavar="F",
        help="Voigt: Lorentzian share, 0 to 1 (default 0.5)",
    )
    parser.add_argument(
        "--range-cm1",
        default=None,
        metavar="LOW:HIGH",
        help="Raman-shift range in cm-1 (default: every Raman-active band with 5 line widths "
        "to spare, rounded to 50; a range that leaves out a band above 5 %% of the strongest "
        "is warned)",
    )
    parser.add_argument(
        "--step-cm1", type=float, default=0.5, metavar="CM1", help="grid step in cm-1 (default 0.5)"
    )
    parser.add_argument(
        "--energies-kjmol",
        metavar="E1,E2[,...]",
        help="relative energies of the sources in kJ/mol, comma-separated, one per SOURCE "
        "(default: their electronic energies)",
    )
    parser.add_argument(
        "--overlay",
        action="store_true",
        help="several SOURCEs side by side, each at weight 1 (one CSV column per source and "
        "channel, named CHANNEL:SOURCE) instead of a Boltzmann mixture of conformers",
    )
    parser.add_argument(
        "--zero-point",
        action="store_true",
        help="add harmonic zero-point energies to source energies",
    )
    parser.add_argument(
        "--format", choices=("csv", "json"), default="csv", help="output format (default csv)"
    )
    add_output_arguments(parser, "spectrum")
    parser.add_argument("--sticks", metavar="FILE", help="also write the stick table (CSV) here")
    parser.add_argument(
        "--figure",
        metavar="FILE",
        action="append",
        default=[],
        help="spectrum figure (.svg, .pdf or .png); repeat for several formats",
    )
    parser.add_argument(
        "--rho-figure",
        metavar="FILE",
        action="append",
        default=[],
        help="depolarization-ratio figure (.svg, .pdf or .png); repeat for several formats",
    )
    parser.add_argument(
        "--layout",
        choices=("shared", "stacked"),
        default="shared",
        help="VV and VH on one axes or stacked (default shared)",
    )
    add_figure_width_argument(parser, "single")
    parser.add_argument(
        "--top",
        type=int,
        default=6,
        metavar="N",
        help="the N strongest bands are labelled in the figure (default 6)",
    )
    add_renamed(parser, "--labels", "--top", "top", type=int)
    parser.add_argument(
        "--label-descriptions",
        action="store_true",
        help="add what each labelled band's mode does (the bond stretch, bend, wag or torsion "
        "carrying most of its potential energy) under its label; one source only",
    )


def build_sticks(
    args: argparse.Namespace,
    channels: list[str],
    geometry: int,
    read: list[Any] | None = None,
    **extra: Any,
) -> StickSpectrum:
    """Read the sources and compute their (mixture) stick spectrum.

    ``read``, when given, receives the ModeSets read.
    """
    if len(args.sources) == 1:
        for option, given in (
            ("--energies-kjmol", getattr(args, "energies_kjmol", None)),
            ("--zero-point", getattr(args, "zero_point", False)),
        ):
            if given:
                raise VibrapolError(
                    f"{option} needs two or more sources (a conformer mixture); got one"
                )
    overlaid = getattr(args, "overlay", False)
    if overlaid and (getattr(args, "energies_kjmol", None) or getattr(args, "zero_point", False)):
        raise VibrapolError(
            "--overlay draws sources at weight 1: drop --energies-kjmol/--zero-point"
        )
    modesets = [read_modes(s, kind=args.kind) for s in args.sources]
    if read is not None:
        read.extend(modesets)
    options = dict(
        channels=channels,
        quantity=args.quantity,
        laser_nm=args.laser_nm,
        geometry_deg=geometry,
        scale=scale_from_args(args),
        detector=args.detector,
        degeneracy_tol_cm1=args.degeneracy_tol_cm1,
        **extra,
    )
    if len(modesets) == 1:
        return stick_spectrum(modesets[0], temperature_k=args.temperature_k, **options)
    from vibrapol.spectrum.conformers import conformer_spectrum, overlay

    if overlaid:
        return overlay(
            [
                stick_spectrum(m, temperature_k=args.temperature_k, label=src, **options)
                for m, src in zip(modesets, args.sources, strict=True)
            ]
        )

    energies = getattr(args, "energies_kjmol", None)
    return conformer_spectrum(
        modesets,
        relative_energies_kjmol=parse_floats(energies, "--energies-kjmol") if energies else None,
        temperature_k=args.temperature_k,
        include_zero_point=getattr(args, "zero_point", False),
        **options,
    )


def run(args: argparse.Namespace) -> int:
    """Compute the spectrum and write every requested output (all or nothing)."""
    check_output(args, args.sticks, *args.figure, *args.rho_figure)
    for path in [*args.figure, *args.rho_figure]:
        figure_format(path)
    if args.top < 0:
        raise VibrapolError(f"--top must be 0 or more, got {args.top}")
    lineshape = LineShape(args.shape, args.fwhm_cm1, args.fwhm_slope, args.lorentzian_share)
    span = parse_range(args.range_cm1) if args.range_cm1 else None
    channels = [c for c in args.channels.split(",") if c.strip()]
    if args.label_descriptions and len(args.sources) > 1:
        raise VibrapolError("--label-descriptions needs one source, not a mixture or overlay")
    read: list[Any] = []
    sticks = build_sticks(
        args, channels, args.geometry, read, side="both" if args.anti_stokes else "stokes"
    )
    words = None
    if args.label_descriptions and args.figure:
        from vibrapol.describe import describe_modes

        words = [d.short for d in describe_modes(read[0])]
    if span is None:
        from vibrapol.spectrum import default_range

        span = default_range(sticks, lineshape)
    overlaid = args.overlay and len(args.sources) > 1
    if overlaid:
        from vibrapol.spectrum.conformers import overlay_grid

        grid = overlay_grid(sticks, lineshape, range_cm1=span, step_cm1=args.step_cm1)
    else:
        grid = broaden(sticks, lineshape, range_cm1=span, step_cm1=args.step_cm1)

    from vibrapol.output import spectra as spectrum_io

    outputs: list[tuple[str, str | bytes]] = []
    if args.sticks:
        outputs.append((args.sticks, spectrum_io.sticks_csv(sticks)))
    if args.figure or args.rho_figure:
        from vibrapol import plotting

        if args.figure:
            fig = plotting.spectrum_figure(
                grid,
                channels=grid.channels,
                layout=args.layout,
                width=figure_width(args.width),
                label_count=0 if overlaid else args.top,
                sticks=not overlaid,
                mode_words=words,
            )
            outputs += [(p, plotting.figure_bytes(fig, figure_format(p))) for p in args.figure]
        if args.rho_figure:
            fig = plotting.depolarization_figure(
                sticks, width=figure_width(args.width), xlim_cm1=span
            )
            outputs += [(p, plotting.figure_bytes(fig, figure_format(p))) for p in args.rho_figure]
    text = spectrum_io.grid_csv(grid) if args.format == "csv" else spectrum_io.grid_json(grid)
    write_outputs(args, [*outputs, (args.output, text)])  # all or nothing
    if not args.output:
        print_stdout(text)
    return 0
