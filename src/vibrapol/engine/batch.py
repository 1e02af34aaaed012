"""Engine runs of one or many molecules whose every stage is a task on one backend.

Each molecule goes through its stages as jobs on the one backend (serial, process pool or
Dask), each stage sent as soon as the one it needs has finished:

    optimisation → (client: point group) → reference SCF, α, gradient
        → analytic Hessian ─┐ (client: harmonic analysis)
        → (client: route, task list) → derivative tasks → (client: ModeSet)

A requested Cartesian or field route is planned right after the SCF, so its tasks run beside
the Hessian; ``auto`` and the normal-mode route are planned after it
(:func:`~vibrapol.engine.prepare.plan_route`).  So M molecules run M optimisations, then M
SCFs and Hessians at once, and the client only schedules, checkpoints (every stage is stored
when it finishes) and assembles.  A molecule that fails (bad structure, SCF that does not
converge, a checkpoint that cannot be used) is reported in one line and the others go on.
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

from vibrapol.engine.checkpoint import CheckpointStore
from vibrapol.engine.estimate import estimate_cost
from vibrapol.engine.executors import Backend, choose_workers, open_backend
from vibrapol.engine.flow import STAGE_NAMES, Flow
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.prepare import Molecule
from vibrapol.engine.progress import Progress, want_progress
from vibrapol.engine.runner import TaskStats
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
        Counts and times of this molecule's derivative tasks: ``seconds_wall`` from the start
        of the first of them to the end of the last; ``peak_mb_worker`` over all its stages
        and tasks.
    route : str
        Route taken: ``cartesian``, ``normal-mode`` or ``field``.
    route_reason : str
        Why (``requested``, or the cost estimates of ``auto``).
    point_group : str
        Point group used (``C1`` when symmetry was off or absent).
    reused_optimization, reused_reference : bool
        Whether those stages came from the checkpoint (the reference: its SCF stage and, when
        the route needs one, its Hessian stage).
    seconds_optimize, seconds_scf, seconds_hessian, seconds_alpha, seconds_gradient : float
        Wall time of each stage when it ran (its recorded time when reused).
    seconds_wall : float
        Wall time of the whole call.
    reused_stages : tuple of str
        The stages found in the checkpoint, of ``optimisation``, ``reference SCF`` and
        ``Hessian``.
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
    reused_stages: tuple[str, ...] = ()

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


def _check_item(item: BatchItem, settings: EngineSettings) -> tuple[Molecule, float]:
    """The molecule of ``item``, checked before any work, and its estimated serial seconds."""
    structure = as_structure(item.atoms)
    z = structure.atomic_numbers
    mol = build_molecule(z, structure.coordinates_ang, settings.spec)  # errors before any work
    note = transition_metal_note(z, settings.spec)
    if note is not None:
        warnings.warn(f"{item.name}: {note}", AccuracyWarning, stacklevel=3)
    masses = default_masses(z) if item.masses_da is None else np.asarray(item.masses_da, float)
    if masses.shape != z.shape or np.any(masses <= 0):
        raise EngineInputError(f"masses_da must be {z.shape[0]} positive numbers")
    seconds = estimate_cost(len(z), mol.nao, settings.spec).seconds
    if settings.optimize:  # of the order of the rest again (more from a drawn start)
        seconds *= 2.0
    molecule = Molecule(
        item.name, z, structure.coordinates_ang, masses, item.masses_da is None, None
    )
    return molecule, seconds


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
    """Run every molecule of ``items``; all their stages and tasks share one backend.

    Parameters
    ----------
    items : sequence of BatchItem
    settings : EngineSettings
    workers, scheduler, fresh, progress
        As for :func:`vibrapol.engine.compute_modes`.  With ``workers=None`` the run is serial
        when the whole batch is estimated (:mod:`vibrapol.engine.estimate`) to take less than
        :data:`~vibrapol.engine.executors.SERIAL_BELOW_S`, else one worker per core.
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
    molecules: dict[int, Molecule] = {}
    with ExitStack() as stack:
        # A Dask scheduler is contacted at once so that a bad address fails before any work.
        backend = stack.enter_context(open_backend(scheduler=scheduler)) if scheduler else None
        estimate = 0.0
        for k, item in enumerate(items):
            try:
                molecules[k], seconds = _check_item(item, settings)
                if item.checkpoint is not None:
                    store = stack.enter_context(CheckpointStore(item.checkpoint, fresh=fresh))
                    molecules[k].store = store
                estimate += seconds
            except VibrapolError as exc:
                if raise_errors:
                    raise
                molecules.pop(k, None)
                errors[k] = str(exc)
                report.stage(f"{item.name}: failed: {exc}")
        if backend is None:
            backend = stack.enter_context(open_backend(choose_workers(workers, estimate)))
        report.stage(
            f"{len(molecules)} structure(s) on {backend.workers} worker(s) ({backend.name})"
        )
        flow = Flow(molecules, settings, backend, report, errors, raise_errors, len(items) > 1)
        try:
            flow.run()
        finally:
            flow.runner.close()
    outcomes = []
    for k, item in enumerate(items):
        if k in errors or k not in flow.modes:
            outcomes.append(BatchOutcome(item.name, None, errors.get(k, "not finished")))
            continue
        run = _engine_run(flow, k, backend, perf_counter() - t_start)
        outcomes.append(BatchOutcome(item.name, run))
    return outcomes


def _engine_run(flow: Flow, k: int, backend: Backend, seconds_wall: float) -> EngineRun:
    """The finished run of molecule ``k``."""
    m = flow.molecules[k]
    ref = m.reference
    assert ref is not None and m.choice is not None
    stages_reused = tuple(s for s in dict.fromkeys(STAGE_NAMES.values()) if s in m.reused)
    reference_reused = "reference SCF" in m.reused and (
        "Hessian" in m.reused or not m.needs_hessian
    )
    return EngineRun(
        modes=flow.modes[k],
        optimization=m.optimization,
        backend=backend.name,
        workers=backend.workers,
        tasks=flow.stats(k),
        route=m.choice.route,
        route_reason=m.choice.reason,
        point_group=m.point_group,
        reused_optimization="optimisation" in m.reused,
        reused_reference=reference_reused,
        seconds_optimize=m.seconds_optimize,
        seconds_scf=ref.seconds_scf,
        seconds_hessian=ref.seconds_hessian,
        seconds_alpha=ref.seconds_alpha,
        seconds_gradient=ref.seconds_gradient,
        seconds_wall=seconds_wall,
        reused_stages=stages_reused,
    )
