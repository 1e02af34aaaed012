"""Compute modes and polarizability derivatives of a structure with the embedded engine.

Runs PySCF on the structure and writes frequencies, normal modes and polarizability
derivatives as a *.modes.json file.

Finished tasks go to a checkpoint file beside the output (NAME.modes.checkpoint.sqlite); rerun
the same command after an interruption to resume, or pass --fresh to start over.
"""

from __future__ import annotations

import argparse
import sys

from vibrapol.engine.checkpoint import checkpoint_path_for
from vibrapol.engine.compute import DEFAULT_STEP_ANG, run_engine
from vibrapol.engine.displacements import ROUTES
from vibrapol.fileio import check_writable
from vibrapol.sources.modes_json import write_modes_json
from vibrapol.structure import read_structure

HELP = "compute modes and Raman tensors of a structure with the embedded PySCF engine"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol compute``."""
    parser.add_argument(
        "structure", help="structure file (any format ase.io.read reads: xyz, pdb, cif, …)"
    )
    parser.add_argument(
        "--method", default="hf", help="'hf' or a DFT functional such as b3lyp, pbe0 (default: hf)"
    )
    parser.add_argument(
        "--basis", default="6-31g*", help="basis set name known to PySCF (default: 6-31g*)"
    )
    parser.add_argument("--charge", type=int, default=0, help="total charge (default: 0)")
    parser.add_argument(
        "--multiplicity",
        type=int,
        default=1,
        help="spin multiplicity; only 1 (closed shell) is supported",
    )
    parser.add_argument(
        "--optimize",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="optimise the geometry first (default: yes)",
    )
    parser.add_argument(
        "--step-ang",
        type=float,
        default=DEFAULT_STEP_ANG,
        help=f"finite-difference step in Å (default: {DEFAULT_STEP_ANG})",
    )
    parser.add_argument(
        "--route",
        choices=ROUTES,
        default="cartesian",
        help="displace Cartesians or follow normal modes",
    )
    parser.add_argument(
        "--cartesian-d",
        action="store_true",
        help="Cartesian (6d) instead of spherical basis functions",
    )
    parser.add_argument(
        "--workers",
        type=int,
        help="local worker processes (default: one per core; 1 for jobs of a few seconds)",
    )
    parser.add_argument(
        "--scheduler", metavar="ADDRESS", help="send the tasks to this running Dask scheduler"
    )
    parser.add_argument(
        "--fresh", action="store_true", help="ignore and replace the checkpoint file"
    )
    parser.add_argument(
        "--progress",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="progress bar on stderr (default: only on a terminal)",
    )
    parser.add_argument(
        "-o", "--output", required=True, metavar="NAME.modes.json", help="file to write"
    )
    parser.add_argument("--force", action="store_true", help="overwrite an existing output file")


def run(args: argparse.Namespace) -> int:
    """Read the structure, run the engine, write the modes file atomically."""
    output = check_writable(args.output, args.force)
    atoms = read_structure(args.structure)
    checkpoint = checkpoint_path_for(output)
    result = run_engine(
        atoms,
        args.method,
        args.basis,
        charge=args.charge,
        multiplicity=args.multiplicity,
        optimize=args.optimize,
        step_ang=args.step_ang,
        route=args.route,
        cartesian_d=args.cartesian_d,
        workers=args.workers,
        scheduler=args.scheduler,
        checkpoint=checkpoint,
        fresh=args.fresh,
        progress=args.progress,
    )
    write_modes_json(result.modes, output, force=args.force)
    say = lambda text: print(f"vibrapol compute: {text}", file=sys.stderr)  # noqa: E731
    if result.optimization is not None:
        say(
            f"geometry optimised in {result.optimization.n_steps} steps, "
            f"final max force {result.optimization.max_force_hartree_bohr:.2e} hartree/bohr"
        )
    t = result.tasks
    say(
        f"{t.n_tasks} displaced geometries: {t.n_computed} computed, "
        f"{t.n_reused} reused from {checkpoint} "
        f"({result.backend}, {result.workers} worker(s), {result.seconds_wall:.1f} s)"
    )
    n_imag = int((result.modes.freqs_cm1 < 0).sum())
    if n_imag:
        say(f"warning: {n_imag} imaginary mode(s) (not a minimum)")
    say(f"wrote {output}")
    return 0
