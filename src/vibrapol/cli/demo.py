"""Run the whole job once, on the embedded engine, in a scenario of our own.

A teaching lab wants to know which bands of its solvent, dichloromethane, can check the
polarizer and analyser, and whether the bottle really holds dichloromethane rather than
chloroform.  The demo computes both molecules (HF/6-31G*, a few minutes on 2 cores; the results
are checkpointed in the output folder, so a rerun takes seconds), writes the per-mode Raman
table with symmetry species, the computed VV/VH spectra and figures, assigns a bundled VV/VH
pair (INVENTED data built from published band positions) to the computed modes, ranks the two
molecules against it, and prints where every file went.

Files already in the output folder are not overwritten without --force.
"""

from __future__ import annotations

import argparse
import sys

from vibrapol.cli._options import LASER_CAUTION
from vibrapol.demo import (
    CAUTION,
    DEFAULT_OUTPUT_DIR,
    DEFAULT_SCENARIO,
    planned_files,
    prepare_output_dir,
    run_demo,
)
from vibrapol.errors import VibrapolError

EPILOG = LASER_CAUTION  # shown once, below the options


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol demo``."""
    parser.add_argument(
        "--output-dir",
        default=DEFAULT_OUTPUT_DIR,
        metavar="DIR",
        help=f"folder for every file of the demo (default: ./{DEFAULT_OUTPUT_DIR}; created)",
    )
    parser.add_argument(
        "--force", action="store_true", help="overwrite the demo's files from an earlier run"
    )
    parser.add_argument(
        "--workers",
        metavar="N",
        type=int,
        help="engine worker processes (default: one per core)",
    )
    parser.add_argument(
        "--progress",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="engine progress bar on stderr (default: only on a terminal)",
    )
    # Hidden: a cheaper level (e.g. hf/sto-3g) for quick trials and tests; the story's
    # numbers in the summary then no longer mean much.
    parser.add_argument("--level", metavar="METHOD/BASIS", help=argparse.SUPPRESS)


def scenario_from_args(args: argparse.Namespace):  # noqa: ANN201
    """The default scenario, at ``--level`` when given."""
    import dataclasses

    if not args.level:
        return DEFAULT_SCENARIO
    method, sep, basis = args.level.partition("/")
    if not sep or not method or not basis:
        raise VibrapolError(f"--level must be METHOD/BASIS, e.g. hf/sto-3g, got {args.level!r}")
    return dataclasses.replace(DEFAULT_SCENARIO, method=method, basis=basis)


def run(args: argparse.Namespace) -> int:
    """Print the caution, run the demo, print the summary."""
    scenario = scenario_from_args(args)
    if args.workers is not None and args.workers < 1:
        raise VibrapolError(f"--workers must be 1 or more, got {args.workers}")
    names = [name for name, _ in planned_files(scenario)]
    prepare_output_dir(args.output_dir, names, args.force)  # refuse before the caution and work
    print(CAUTION, end="\n\n", flush=True)
    result = run_demo(
        args.output_dir,
        force=args.force,
        scenario=scenario,
        workers=args.workers,
        progress=args.progress,
    )
    sys.stdout.write(result.summary)
    print(f"\n(demo finished in {result.seconds_wall:.0f} s)")
    return 0
