"""Engine runs of one or many molecules whose tasks share one executor and one progress bar.

Each molecule is first prepared in this process (optimisation, symmetry, reference
calculation with all threads, route choice); then the tasks of every molecule go to the one
backend together, so a pool or a Dask cluster stays busy across molecules; then each molecule's
:class:`~vibrapol.modeset.ModeSet` is assembled.  A molecule that fails (bad structure, SCF that
does not converge, a checkpoint that cannot be used) is reported and the others go on.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path
from time import perf_counter
from typing import Any

import numpy as np

from vibrapol.engine.checkpoint import CheckpointStore, StoreRouter
from vibrapol.engine.executors import available_cores, choose_workers, open_backend
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.prepare import Prepared, assemble, prepare
from vibrapol.engine.progress import Progress, want_progress
from vibrapol.engine.routes import task_seconds
from vibrapol.engine.runner import TaskStats, run_tasks
from vibrapol.engine.scf import EngineInputError, build_molecule, transition_metal_note
from vibrapol.engine.settings import EngineSettings
from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.modeset import ModeSet, default_masses
from vibrapol.structure import check_structure


@dataclass(frozen=True)
class Structure:
    """Atomic numbers and coordinates (Å) of a molecule."""

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray


def as_structure(atoms: Any) -> Structure:
    """An ``ase.Atoms``, a ``(numbers, coordinates_ang)`` pair or a :class:`Structure`."""
    if isinstance(atoms, Structure):
        return atoms
    if hasattr(atoms, "get_atomic_numbers") and hasattr(atoms, "get_positions"):
        z, xyz = atoms.get_atomic_numbers(), atoms.get_positions()
    elif isinstance(atoms, Sequence) and len(atoms) == 2:
        z, xyz = atoms
    else:
        raise EngineInputError("give an ase.Atoms or a pair (atomic_numbers, coordinates_ang)")
    z = np.asarray(z, dtype=int)
    xyz = np.asarray(xyz, dtype=float)
    if z.ndim != 1 or xyz.shape != (z.shape[0], 3):
        raise EngineInputError(
            f"need N atomic numbers and (N, 3) coordinates, got {z.shape} and {xyz.shape}"
        )
    check_structure(z, xyz)  # one atom, overlapping atoms, NaN: refused before any SCF
    return Structure(z, xyz)


@dataclass(frozen=True, eq=False)
class EngineRun:
    """A finished engine run of one molecule: the :class:`ModeSet` and what it took.

    Attributes
    ----------
    modes : ModeSet
    optimization : OptimizationResult or None
        None when the geometry was used as given.
    backend : str
        ``"serial"``, ``"process pool"`` or ``"dask"``.
    workers : int
    tasks : TaskStats
        Counts and times of this molecule's tasks (in a batch: the batch's wall time).
    route : str
        Route taken: ``cartesian``, ``normal-mode``, ``field`` or ``displacement``.
    route_reason : str
        Why (``requested``, or the cost estimates of ``auto``).
    point_group : str
        Point group used (``C1`` when symmetry was off or absent).
    reused_optimization, reused_reference : bool
        Whether those stages came from the checkpoint.
    seconds_optimize, seconds_scf, seconds_hessian, seconds_alpha, seconds_gradient : float
        Wall time of each stage when it ran (its recorded time when reused).
    seconds_wall : float
        Wall time of the whole call.
    """

    modes: ModeSet
    optimization: OptimizationResult | None
    backend: str
    workers: int
    tasks: TaskStats
    route: str
    route_reason: str
    point_group: str
    reused_optimization: bool
    reused_reference: bool
    seconds_optimize: float
    seconds_scf: float
    seconds_hessian: float
    seconds_alpha: float
    seconds_gradient: float
    seconds_wall: float

    @property
    def n_qc_evaluations(self) -> int:
        """Single-point evaluations of the run: 1 reference + 1 per task."""
        return 1 + self.tasks.n_tasks


@dataclass(frozen=True)
class BatchItem:
    """One molecule of a batch.

    Attributes
    ----------
    atoms : ase.Atoms, (numbers, coordinates_ang) or Structure
    name : str
        How messages name it (usually the structure file).
    checkpoint : str or Path, optional
        Its own checkpoint file.
    masses_da : ndarray (N,), optional
    """

    atoms: Any
    name: str = "structure"
    checkpoint: str | Path | None = None
    masses_da: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class BatchOutcome:
    """The run of one molecule of a batch, or the one-line reason it failed."""

    name: str
    run: EngineRun | None
    error: str | None = None


def _check_item(item: BatchItem, settings: EngineSettings) -> tuple[Structure, np.ndarray, bool]:
    structure = as_structure(item.atoms)
    z = structure.atomic_numbers
    build_molecule(z, structure.coordinates_ang, settings.spec)  # input errors before any work
    note = transition_metal_note(z, settings.spec)
    if note is not None:
        warnings.warn(f"{item.name}: {note}", AccuracyWarning, stacklevel=3)
    masses = default_masses(z) if item.masses_da is None else np.asarray(item.masses_da, float)
    if masses.shape != z.shape or np.any(masses <= 0):
        raise EngineInputError(f"masses_da must be {z.shape[0]} positive numbers")
    return structure, masses, item.masses_da is None


def run_batch(
    items: Sequence[BatchItem],
    settings: EngineSettings,
    *,
    workers: int | None = 1,
    scheduler: str | None = None,
    fresh: bool = False,
    progress: bool | None = None,
    raise_errors: bool = False,
) -> list[BatchOutcome]:
    """Run every molecule of ``items``; their tasks share one backend.

    Parameters
    ----------
    items : sequence of BatchItem
    settings : EngineSettings
    workers, scheduler, fresh, progress
        As for :func:`vibrapol.engine.compute_modes`.
    raise_errors : bool
        Raise the first error instead of reporting it (a single-molecule run).

    Returns
    -------
    list of BatchOutcome
        In the order of ``items``.
    """
    t_start = perf_counter()
    if workers is not None and int(workers) < 1:
        raise EngineInputError(f"workers must be 1 or more, got {workers}")
    report = Progress(want_progress(progress))
    errors: dict[int, str] = {}
    prepared: dict[int, Prepared] = {}
    router = StoreRouter()
    with ExitStack() as stack:
        # A Dask scheduler is contacted at once so that a bad address fails before any work.
        backend = stack.enter_context(open_backend(scheduler=scheduler)) if scheduler else None
        # The tasks that will run at once, for --route auto's cost model (workers=None: a long
        # job gets one worker per core, choose_workers).
        route_workers = backend.workers if backend else (workers or available_cores())
        for k, item in enumerate(items):
            try:
                structure, masses, default = _check_item(item, settings)
                store = None
                if item.checkpoint is not None:
                    store = stack.enter_context(CheckpointStore(item.checkpoint, fresh=fresh))
                if len(items) > 1:
                    report.stage(f"[{k + 1}/{len(items)}] {item.name}")
                prepared[k] = prep = prepare(
                    structure.atomic_numbers,
                    structure.coordinates_ang,
                    masses,
                    default,
                    settings,
                    store,
                    report,
                    workers=route_workers,
                )
                router.assign(prep.keys, store)
            except VibrapolError as exc:
                if raise_errors:
                    raise
                errors[k] = str(exc)
                report.stage(f"{item.name}: failed: {exc}")
        owner = [k for k, p in prepared.items() for _ in p.jobs]
        jobs = [j for p in prepared.values() for j in p.jobs]
        keys = [key for p in prepared.values() for key in p.keys]
        labels = [lab for p in prepared.values() for lab in p.labels]
        if backend is None:
            estimate = sum(
                len(p.jobs) * task_seconds(p.choice.route, p.reference) for p in prepared.values()
            )
            backend = stack.enter_context(open_backend(choose_workers(workers, estimate)))
        routes = ", ".join(f"{p.choice.route} {p.choice.n_tasks}" for p in prepared.values())
        report.stage(
            f"{len(jobs)} tasks ({routes}) on {backend.workers} worker(s) ({backend.name})"
        )

        def failed(i: int, exc: Exception) -> None:
            if raise_errors:
                raise exc
            k = owner[i]
            if k not in errors:
                errors[k] = str(exc)
                report.stage(f"{items[k].name}: failed: {exc}")

        results, stats = run_tasks(
            jobs, keys, labels, backend, router, report, desc="tasks", on_error=failed
        )
    outcomes = []
    start = 0
    for k, item in enumerate(items):
        ready = prepared.get(k)
        if ready is None:
            outcomes.append(BatchOutcome(item.name, None, errors[k]))
            continue
        mine = results[start : start + len(ready.jobs)]
        start += len(ready.jobs)
        if k in errors:
            outcomes.append(BatchOutcome(item.name, None, errors[k]))
            continue
        values = [r for r in mine if r is not None]
        assert len(values) == len(mine)  # a failed task put its molecule in errors
        own = stats.subset(start - len(mine), start)
        run = _engine_run(ready, assemble(ready, values, settings), backend, own, stats, t_start)
        outcomes.append(BatchOutcome(item.name, run))
    return outcomes


def _engine_run(prep, modes, backend, own, stats, t_start) -> EngineRun:  # noqa: ANN001
    ref = prep.reference
    return EngineRun(
        modes=modes,
        optimization=prep.optimization,
        backend=backend.name,
        workers=backend.workers,
        tasks=own,
        route=prep.choice.route,
        route_reason=prep.choice.reason,
        point_group=prep.point_group,
        reused_optimization=prep.reused_optimization,
        reused_reference=prep.reused_reference,
        seconds_optimize=prep.seconds_optimize,
        seconds_scf=ref.seconds_scf,
        seconds_hessian=ref.seconds_hessian,
        seconds_alpha=ref.seconds_alpha,
        seconds_gradient=ref.seconds_gradient,
        seconds_wall=perf_counter() - t_start,
    )
