"""Rank candidate structures (isomers, conformers, levels of theory) against one measurement.

Every SOURCE is one candidate; each --mixture adds a Boltzmann mixture of conformers as one
more candidate (populations from the sources' electronic energies at --temperature-k).  All
candidates are assigned to the same measured bands (see ``vibrapol match``) and printed best
first with their overall score.

Laser safety: recording the spectra means working with a laser, which can injure eyes and
skin; follow your institution's laser safety rules and local regulations.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from vibrapol.cli._common import print_stdout, write_outputs
from vibrapol.cli.match import (
    add_measurement_arguments,
    assign_options,
    check_isotopologue_options,
    check_outputs,
    check_scale_for,
    laser_nm,
    measure,
    with_measured_isotopologue,
)
from vibrapol.errors import VibrapolError
from vibrapol.sources import read_modes
from vibrapol.spectrum.quantities import DETECTOR_NOTES


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol rank``."""
    parser.add_argument(
        "sources",
        nargs="*",
        metavar="SOURCE",
        help="*.modes.json or QC outputs, one candidate each",
    )
    add_measurement_arguments(parser)
    parser.add_argument(
        "--mixture", action="append", default=[], metavar="A,B[,...]",
        help="comma-separated conformer sources forming one Boltzmann-mixture candidate "
        "(repeatable)",
    )  # fmt: skip
    parser.add_argument(
        "--degeneracy", action="append", default=[], metavar="SOURCE=G",
        help="number of equivalent copies of a conformer in a mixture (e.g. gauche.json=2)",
    )  # fmt: skip
    parser.add_argument(
        "-o",
        "--output",
        metavar="FILE",
        help="also write the ranking table here (default: standard output only)",
    )


def _degeneracies(items: list[str]) -> dict[str, float]:
    out = {}
    for item in items:
        name, sep, value = item.rpartition("=")
        try:
            g = float(value)
        except ValueError:
            g = -1.0
        if not sep or not 0 < g < math.inf:  # also refuses NaN
            raise VibrapolError(f"--degeneracy must be SOURCE=G with G > 0, got {item!r}")
        out[name] = g
    return out


def run(args: argparse.Namespace) -> int:
    """Build the candidates, rank them, print (and write) the table."""
    from vibrapol.compare import candidate_from_modes, mixture_candidate, rank
    from vibrapol.output.assignments import ranking_text

    if not args.sources and not args.mixture:
        raise VibrapolError("give at least one SOURCE or --mixture")
    check_outputs(args, [args.output] if args.output else [])
    opts = assign_options(args)
    check_isotopologue_options(args)
    if args.iso_vv is not None and args.mixture:
        raise VibrapolError("--iso-vv applies to single structures; it cannot go with --mixture")
    degeneracy = _degeneracies(args.degeneracy)
    common = dict(
        laser_nm=laser_nm(args),
        temperature_k=args.temperature_k,
        symmetry=not args.no_symmetry,
        detector=args.detector,
    )
    candidates = []
    for s in args.sources:
        modes = read_modes(s, kind=args.kind)
        check_scale_for(args, modes, s)
        cand = candidate_from_modes(modes, label=Path(s).name, **common)
        candidates.append(with_measured_isotopologue(args, cand, modes)[0])
    members = {f.strip() for group in args.mixture for f in group.split(",")}
    unused = sorted(set(degeneracy) - members)
    if unused:
        raise VibrapolError(
            f"--degeneracy names {', '.join(unused)}, which is in no --mixture; "
            "use the file name exactly as given to --mixture"
        )
    for group in args.mixture:
        files = [f.strip() for f in group.split(",") if f.strip()]
        if not files:
            raise VibrapolError("--mixture needs comma-separated source files")
        modesets = [read_modes(f, kind=args.kind) for f in files]
        for f, modes in zip(files, modesets, strict=True):
            check_scale_for(args, modes, f)
        candidates.append(
            mixture_candidate(
                modesets,
                degeneracies=[degeneracy.get(f, 1.0) for f in files],
                labels=[Path(f).name for f in files],
                label="mixture(" + "+".join(Path(f).name for f in files) + ")",
                **common,
            )
        )
    pair, bands = measure(args)
    if args.iso_vv is not None:
        opts["isotopologue_bands"] = measure(args, args.iso_vv, args.iso_vh)[1]
    ranking = rank(candidates, bands, pair=pair, **opts)
    text = ranking_text(ranking)
    text += f"computed intensities for a {DETECTOR_NOTES[args.detector]}\n"
    write_outputs(args, [(args.output, text)])
    print_stdout(text)
    return 0
