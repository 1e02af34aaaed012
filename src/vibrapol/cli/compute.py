"""Compute modes and polarizability derivatives of structures with the embedded engine.

Runs PySCF on each structure and writes its frequencies, normal modes and polarizability
derivatives as a *.modes.json file.  Several structures (files or directories of them) run in
one go: their tasks share one pool of workers or Dask cluster, each gets its own output, and a
structure that fails is reported without stopping the others.

Finished tasks go to a checkpoint file beside each output (NAME.modes.checkpoint.sqlite);
rerun the same command after an interruption (Ctrl-C, SIGTERM, a full disk) to resume, or pass
--fresh to start over.  One run at a time per output: a second run on the same output is
refused while the first holds its lock (NAME.modes.checkpoint.sqlite.lock).
"""

from __future__ import annotations

import argparse
import dataclasses
import re
import sys
from contextlib import ExitStack
from pathlib import Path

from vibrapol.cli._renamed import add_renamed
from vibrapol.engine.checkpoint import checkpoint_path_for
from vibrapol.engine.compute import (
    DEFAULT_FIELD_AU,
    DEFAULT_STEP_ANG,
    BatchItem,
    EngineSettings,
    as_structure,
    run_batch,
)
from vibrapol.engine.dynamic import PRE_RESONANCE_MARGIN_EV
from vibrapol.engine.estimate import (
    ANNOUNCE_ABOVE_S,
    CONFIRM_ABOVE_S,
    estimate_cost,
    format_duration,
)
from vibrapol.engine.executors import check_scheduler_address
from vibrapol.engine.optimize import DEFAULT_OPTIMIZER, OPTIMIZERS
from vibrapol.engine.prepare import SAME_GEOMETRY_ANG
from vibrapol.engine.runlock import run_lock, sigterm_as_interrupt
from vibrapol.engine.scf import (
    DEFAULT_BASIS,
    DEFAULT_METHOD,
    DENSITY_FIT_ACCURACY,
    build_molecule,
)
from vibrapol.errors import InputFormatError, OptionError, VibrapolError
from vibrapol.fileio import check_outputs, check_writable
from vibrapol.sources.modes_json import write_modes_json
from vibrapol.structure import read_structure

#: File endings taken from a directory given as a structure.
STRUCTURE_SUFFIXES = (".xyz", ".extxyz", ".pdb", ".cif", ".sdf", ".mol", ".traj")

#: Exit status after Ctrl-C or SIGTERM (as for any interrupted vibrapol command).
INTERRUPTED = 130


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol compute``."""
    parser.add_argument(
        "structures",
        nargs="+",
        metavar="STRUCTURE",
        help="structure files (any format ase.io.read reads: xyz, pdb, cif, …) or directories "
        f"of them ({', '.join(STRUCTURE_SUFFIXES)})",
    )
    parser.add_argument(
        "--method",
        metavar="METHOD",
        default=DEFAULT_METHOD,
        help=f"'hf' or a DFT functional such as b3lyp, pbe0, optionally with a dispersion "
        f"correction: b3lyp-d3bj, b3lyp-d3 (zero damping), b3lyp-d4 (default: {DEFAULT_METHOD})",
    )
    parser.add_argument(
        "--basis",
        metavar="BASIS",
        default=DEFAULT_BASIS,
        help="basis set name known to PySCF, e.g. 6-31g*, aug-cc-pvdz, def2-svp, def2-svpd; "
        "the ECP of a def2 (or other ECP) basis is used for the atoms it covers "
        f"(default: {DEFAULT_BASIS})",
    )
    parser.add_argument(
        "--charge", type=int, default=0, metavar="Q", help="total charge (default: 0)"
    )
    parser.add_argument(
        "--multiplicity",
        metavar="2S+1",
        type=int,
        default=1,
        help="spin multiplicity: 1 closed shell (RHF/RKS); 2, 3 … open shell (UHF/UKS), "
        "its <S^2> reported and refused when badly spin-contaminated (default: 1)",
    )
    parser.add_argument(
        "--optimize",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="optimise the geometry first (default: yes)",
    )
    parser.add_argument(
        "--optimizer",
        choices=OPTIMIZERS,
        default=None,
        help="internal: geomeTRIC in internal coordinates, few steps from rough starts; "
        "cartesian-bfgs: ASE BFGS in Cartesians, the optimiser of earlier versions "
        f"(default: {DEFAULT_OPTIMIZER})",
    )
    parser.add_argument(
        "--step-ang",
        metavar="ANG",
        type=float,
        default=None,
        help=f"finite-difference step in Å (default: {DEFAULT_STEP_ANG})",
    )
    parser.add_argument(
        "--route",
        choices=("auto", "cartesian", "normal", "field", "displacement", "analytic"),
        default="auto",
        help="how to get the polarizability derivatives: displaced Cartesians, displaced normal "
        "modes, analytic gradients in electric fields (these three after an analytic Hessian), "
        "displacement: gradient, dipole and polarizability at displaced Cartesians, the Hessian "
        "from their gradients (no analytic Hessian; scales with the workers), analytic: "
        "analytic derivatives computed with the analytic Hessian by the 2n+1 rule (closed-shell "
        "HF, or DFT with an LDA, GGA or global hybrid functional; gas phase), "
        "or auto: the "
        "fastest on the run's workers by a cost model measured on the molecule (default: auto)",
    )
    parser.add_argument(
        "--field-au",
        metavar="AU",
        type=float,
        default=None,
        help=f"field strength of the field route, atomic units (default: {DEFAULT_FIELD_AU})",
    )
    parser.add_argument(
        "--use-symmetry",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="impose the point group on the geometry and compute only symmetry-inequivalent "
        "tasks (default: yes)",
    )
    add_renamed(parser, "--symmetry", "--use-symmetry", "use_symmetry", const=True)
    add_renamed(parser, "--no-symmetry", "--no-use-symmetry", "use_symmetry", const=False)
    parser.add_argument(
        "--cartesian-d",
        action="store_true",
        help="Cartesian (6d) instead of spherical basis functions (default: spherical)",
    )
    parser.add_argument(
        "--solvent",
        metavar="NAME",
        help="implicit solvent (IEF-PCM) by name, e.g. water, methanol, acetonitrile, dmso, "
        "chloroform, ccl4, cyclohexane; static ε for the geometry and Hessian, optical ε∞ = n² "
        "for the polarizability (not with --route field; default: vacuum)",
    )
    parser.add_argument(
        "--epsilon",
        metavar="E",
        type=float,
        help="static dielectric constant of a solvent not named (needs --epsilon-optical; "
        "default: none, vacuum)",
    )
    parser.add_argument(
        "--epsilon-optical",
        metavar="E",
        type=float,
        help="optical dielectric constant ε∞ = n² of that solvent (with --epsilon; default: none)",
    )
    parser.add_argument(
        "--laser-nm",
        metavar="NM",
        type=float,
        help="laser wavelength in nm: compute the lowest excitation energies, warn within "
        f"{PRE_RESONANCE_MARGIN_EV:g} eV below the first and refuse at or above it (default: no "
        "check)",
    )
    parser.add_argument(
        "--dynamic",
        action="store_true",
        help="use the frequency-dependent polarizability at --laser-nm instead of the static "
        "one (cartesian and normal routes; auto leaves out the field route) (default: static)",
    )
    parser.add_argument(
        "--density-fit",
        action="store_true",
        help="density-fitted integrals in every SCF, gradient, Hessian and polarizability of "
        f"the run; {DENSITY_FIT_ACCURACY.replace('%', '%%')} (default: exact integrals)",
    )
    parser.add_argument(
        "--auxbasis",
        metavar="NAME",
        help="auxiliary basis of --density-fit, e.g. def2-universal-jkfit (default: PySCF's "
        "choice for the basis, cc-pvdz-jkfit for 6-31G*)",
    )
    parser.add_argument(
        "--workers",
        metavar="N",
        type=int,
        help="local worker processes (default: one per core; 1 for jobs of a few seconds)",
    )
    parser.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="send the tasks to this running Dask scheduler, tcp://HOST:PORT (default: a local "
        "process pool)",
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
        "-o",
        "--output",
        metavar="FILE",
        help="the NAME.modes.json file to write, for a single structure and not with "
        "--output-dir (default: STRUCTURE's name with .modes.json, beside it or in --output-dir)",
    )
    parser.add_argument(
        "--output-dir",
        metavar="DIR",
        help="write every NAME.modes.json into this directory (default: beside each structure)",
    )
    parser.add_argument("--force", action="store_true", help="overwrite an existing output file")
    parser.add_argument(
        "--yes",
        action="store_true",
        help="run even when the estimated cost of a structure exceeds "
        f"{format_duration(CONFIRM_ABOVE_S)} of serial time (the estimate is printed first)",
    )


def structure_files(paths: list[str]) -> list[Path]:
    """The structure files named, with each directory replaced by its structure files."""
    files: list[Path] = []
    for name in paths:
        p = Path(name)
        if p.is_dir():
            found = sorted(q for q in p.iterdir() if q.suffix.lower() in STRUCTURE_SUFFIXES)
            if not found:
                raise InputFormatError(
                    f"{p}: no structure files ({', '.join(STRUCTURE_SUFFIXES)}) in this directory"
                )
            files += found
        else:
            files.append(p)
    return files


def output_paths(files: list[Path], args: argparse.Namespace) -> list[Path]:
    """Where each structure's modes file goes, checked writable before any work."""
    if args.output and args.output_dir:
        raise VibrapolError(
            "give either -o/--output (one file) or --output-dir (a directory), not both"
        )
    if args.output and len(files) > 1:
        raise VibrapolError(
            f"-o/--output names one file but {len(files)} structures were given; "
            "use --output-dir DIR"
        )
    if args.output_dir and not Path(args.output_dir).is_dir():
        raise VibrapolError(f"{args.output_dir}: --output-dir must be an existing directory")
    outputs = []
    for f in files:
        if args.output:
            out = Path(args.output)
        else:
            stem = f.name[: -len(f.suffix)] if f.suffix else f.name
            out = (Path(args.output_dir) if args.output_dir else f.parent) / f"{stem}.modes.json"
        outputs.append(out)
    if len(set(outputs)) < len(outputs):
        raise VibrapolError("two structures would write the same modes file; rename one")
    return check_outputs(outputs, args.force, inputs=files)


#: Options whose value only one kind of run uses: (option, attribute, default).  Given
#: explicitly for a run that ignores them they are refused: the number would be
#: silently unused.
_UNUSED_OPTIONS = (
    ("--optimizer", "optimizer", DEFAULT_OPTIMIZER),
    ("--step-ang", "step_ang", DEFAULT_STEP_ANG),
    ("--field-au", "field_au", DEFAULT_FIELD_AU),
)


def check_unused_options(args: argparse.Namespace) -> None:
    """Refuse an option given for a run that would ignore it; then fill in the defaults."""
    ignored = {
        "optimizer": None if args.optimize else "with --no-optimize (no optimisation is run)",
        "step_ang": {
            "field": "on the field route (it differentiates in fields of --field-au)",
            "analytic": "on the analytic route (it takes no finite differences)",
        }.get(args.route),
        "field_au": {
            "cartesian": "on the cartesian route (it displaces atoms by --step-ang)",
            "normal": "on the normal route (it displaces atoms by --step-ang)",
            "displacement": "on the displacement route (it displaces atoms by --step-ang)",
            "analytic": "on the analytic route (it takes no finite differences)",
        }.get(args.route),
    }
    for option, name, default in _UNUSED_OPTIONS:
        if getattr(args, name) is None:
            setattr(args, name, default)
        elif ignored[name]:
            raise OptionError(f"{option} has no effect {ignored[name]}: drop it or change the run")


def settings_from_args(args: argparse.Namespace) -> EngineSettings:
    """The engine settings from the options named as its fields (``--use-symmetry``: symmetry)."""
    check_unused_options(args)
    options = {f.name: f.name for f in dataclasses.fields(EngineSettings) if f.init}
    options["symmetry"] = "use_symmetry"
    return EngineSettings(**{field: getattr(args, option) for field, option in options.items()})


def run(args: argparse.Namespace) -> int:
    """Read the structures, run the engine on them together, write each modes file atomically.

    Returns 0 when every structure succeeded, 2 when any failed (each failure one line), 130
    when interrupted (Ctrl-C or SIGTERM; finished tasks stay in the checkpoints).
    """
    settings = settings_from_args(args)
    if args.scheduler:
        check_scheduler_address(args.scheduler)
    files = structure_files(args.structures)
    outputs = output_paths(files, args)
    say = lambda text: print(f"vibrapol compute: {text}", file=sys.stderr)  # noqa: E731
    single = len(files) == 1
    items, failures, estimates = [], [], []
    for f, out in zip(files, outputs, strict=True):
        try:
            atoms = read_structure(str(f))
            estimate = _check_cost(atoms, settings, str(f), args.yes)
        except VibrapolError as exc:
            if single:
                raise
            failures.append(str(exc) if str(f) in str(exc) else f"{f}: {exc}")
            continue
        items.append((BatchItem(atoms, str(f), checkpoint_path_for(out)), out))
        if estimate is not None:
            estimates.append(estimate)
    with ExitStack() as locks, sigterm_as_interrupt() as term:
        try:
            for _, out in items:
                locks.enter_context(run_lock(checkpoint_path_for(out), str(out)))
                check_writable(out, args.force)  # again: another run may have written it
            for line in estimates:
                say(line)
            outcomes = run_batch(
                [item for item, _ in items],
                settings,
                workers=args.workers,
                scheduler=args.scheduler,
                fresh=args.fresh,
                progress=args.progress,
                raise_errors=single,
            )
            term.check()  # a SIGTERM swallowed by a destructor still stops the run here
            for (item, out), outcome in zip(items, outcomes, strict=True):
                if outcome.run is None:
                    failures.append(f"{item.name}: {outcome.error}")
                    continue
                _report(outcome.run, item, out, say, args.force)
        except KeyboardInterrupt:
            where = ", ".join(str(item.checkpoint) for item, _ in items) or "the checkpoint"
            say(
                f"interrupted; finished tasks are kept in {where}: rerun the same command to resume"
            )
            return INTERRUPTED
    for message in failures:
        print(f"vibrapol compute: error: {message}", file=sys.stderr)
    if failures and not single:
        say(f"{len(files) - len(failures)} of {len(files)} structures done, {len(failures)} failed")
    return 2 if failures else 0


def _check_cost(atoms, settings, name: str, yes: bool) -> str | None:  # noqa: ANN001
    """The line announcing a long estimated cost (refused above the threshold without --yes)."""
    structure = as_structure(atoms)
    mol = build_molecule(structure.atomic_numbers, structure.coordinates_ang, settings.spec)
    cost = estimate_cost(len(structure.atomic_numbers), mol.nao, settings.spec)
    if cost.seconds > CONFIRM_ABOVE_S and not yes:
        raise VibrapolError(
            f"{name}: estimated cost {cost.describe()}, more than "
            f"{format_duration(CONFIRM_ABOVE_S)}: pass --yes to run it anyway"
        )
    if cost.seconds < ANNOUNCE_ABOVE_S:
        return None
    return f"{name}: estimated cost {cost.describe()}, an order of magnitude"


def symmetrization_shift_ang(notes: tuple[str, ...]) -> float:
    """The largest atom shift of the engine's symmetrization recorded in ``notes`` (0 if none)."""
    for note in notes:
        found = _SHIFT_NOTE.search(note)
        if found:
            return float(found.group(1))
    return 0.0


#: How the engine's provenance records the symmetrization (vibrapol.engine.prepare).
_SHIFT_NOTE = re.compile(r"geometry symmetrized \(max shift ([0-9.]+e[+-]\d+) Å\)")


def _report(result, item: BatchItem, output: Path, say, force: bool) -> None:  # noqa: ANN001
    try:
        write_modes_json(result.modes, output, force=force)
    except OSError as exc:
        raise VibrapolError(
            f"cannot write {output} ({exc.strerror or exc}); every task is kept in "
            f"{item.checkpoint}: fix that and rerun the same command to write it without "
            "computing again"
        ) from exc
    prefix = f"{item.name}: " if item.name else ""
    opt = result.optimization
    shift = symmetrization_shift_ang(result.modes.provenance.notes)
    if opt is None and shift >= SAME_GEOMETRY_ANG:
        say(
            f"{prefix}warning: geometry not optimised but symmetrized to {result.point_group}: "
            f"atoms moved by up to {shift:.1e} Å (--no-use-symmetry keeps it as given)"
        )
    if opt is not None:
        say(
            f"{prefix}geometry optimised ({opt.optimizer}) in {opt.n_steps} steps, "
            f"{opt.n_gradients} gradients, final max force "
            f"{opt.max_force_hartree_bohr:.2e} hartree/bohr"
        )
    t = result.tasks
    say(
        f"{prefix}point group {result.point_group}, {result.route} route, "
        f"{t.n_tasks} tasks: {t.n_computed} computed, {t.n_reused} reused "
        f"from {item.checkpoint} ({result.backend}, {result.workers} worker(s), "
        f"{result.seconds_wall:.1f} s)"
    )
    n_imag = int((result.modes.freqs_cm1 < 0).sum())
    if n_imag:
        say(f"{prefix}warning: {n_imag} imaginary mode(s) (not a minimum)")
    say(f"wrote {output}")
