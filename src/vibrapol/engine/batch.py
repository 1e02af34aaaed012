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

from vibrapol.engine import stages
from vibrapol.engine.checkpoint import CheckpointStore
from vibrapol.engine.estimate import estimate_cost
from vibrapol.engine.executors import Backend, choose_workers, open_backend
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.prepare import Molecule, assemble, impose_symmetry, plan_route
from vibrapol.engine.progress import Progress, want_progress
from vibrapol.engine.runner import TaskRunner, TaskStats
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
        Counts and times of this molecule's derivative tasks; ``seconds_wall`` from the first
        of them sent to the last finished, ``peak_mb_worker`` over all its stages and tasks.
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
        flow = _Flow(molecules, settings, backend, report, errors, raise_errors, len(items) > 1)
        try:
            flow.run()
        finally:
            flow.runner.close()
    outcomes = []
    for k, item in enumerate(items):
        if k in errors or k not in flow.modes:
            outcomes.append(BatchOutcome(item.name, None, errors.get(k, "not finished")))
            continue
        run = flow.engine_run(k, backend, perf_counter() - t_start)
        outcomes.append(BatchOutcome(item.name, run))
    return outcomes


class _Flow:
    """The stages of every molecule, each sent when the one it needs has finished."""

    def __init__(
        self,
        molecules: dict[int, Molecule],
        settings: EngineSettings,
        backend: Backend,
        report: Progress,
        errors: dict[int, str],
        raise_errors: bool,
        named: bool,
    ) -> None:
        self.molecules, self.settings, self.report = molecules, settings, report
        self.errors, self.raise_errors, self.named = errors, raise_errors, named
        self.runner = TaskRunner(backend, report, "tasks")
        self.results: dict[int, list] = {}
        self.reused: dict[int, list[bool]] = {}
        self.seconds: dict[int, list[float]] = {}
        self.peak_mb: dict[int, float] = {}
        self.window: dict[int, list[float]] = {}
        self.modes: dict[int, ModeSet] = {}

    def run(self) -> None:
        """Send every molecule's first stage and run until all have finished or failed."""
        for k in self.molecules:
            self._guard(k, self._begin, k)
        self.runner.run()

    # -- plumbing -------------------------------------------------------------------------

    def _say(self, k: int, message: str) -> None:
        prefix = f"{self.molecules[k].name}: " if self.named else ""
        self.report.stage(prefix + message)

    def _guard(self, k: int, step, *args) -> None:  # noqa: ANN001
        """Run a client step of molecule ``k``; its VibrapolError fails only that molecule."""
        try:
            step(*args)
        except VibrapolError as exc:
            self._fail(k, exc)

    def _fail(self, k: int, exc: Exception) -> None:
        if self.raise_errors:
            raise exc
        if k not in self.errors:
            self.errors[k] = str(exc)
            self.report.stage(f"{self.molecules[k].name}: failed: {exc}")
            self.runner.drop(k)

    def _stage(self, k: int, job, then) -> None:  # noqa: ANN001
        """Send one stage job of molecule ``k``; ``then(k, result, seconds, reused)`` follows."""

        def done(value, seconds: float, memory_mb: float, reused: bool) -> None:  # noqa: ANN001
            self.peak_mb[k] = max(self.peak_mb.get(k, 0.0), memory_mb)
            if reused:
                self.molecules[k].reused.add(STAGE_NAMES[job.kind])
                self._say(k, f"{job.label}: taken from the checkpoint")
            else:
                self._say(k, f"{job.label}: done in {seconds:.1f} s")
            self._guard(k, then, k, value, seconds, reused)

        found = self.runner.submit(
            job, job.key(), job.label, self.molecules[k].store, done, lambda e: self._fail(k, e), k
        )
        if not found:
            self._say(k, f"{job.label} …")

    # -- the stages -----------------------------------------------------------------------

    def _begin(self, k: int) -> None:
        m = self.molecules[k]
        if self.settings.optimize:
            job = stages.OptimizeJob(m.atomic_numbers, m.coordinates_ang, self.settings.spec)
            self._stage(k, job, self._optimized)
        else:
            self._reference(k)

    def _optimized(self, k: int, result: OptimizationResult, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        m.optimization, m.seconds_optimize = result, seconds
        m.coordinates_ang = result.coordinates_ang
        self._reference(k)

    def _reference(self, k: int) -> None:
        m, spec = self.molecules[k], self.settings.spec
        if self.settings.symmetry:
            impose_symmetry(m, self.report, f"{m.name}: " if self.named else "")
        old = stages.legacy_reference(m.atomic_numbers, m.coordinates_ang, spec, m.store)
        if old is not None:  # one row of an earlier vibrapol: SCF and Hessian together
            m.reused |= {"reference SCF", "Hessian"}
            self._say(k, "reference SCF, Hessian and polarizability: taken from the checkpoint")
            m.reference = old
            m.add_hessian(old)
            plan_route(m, self.settings)
            self._tasks(k)
            return
        self._stage(k, stages.ScfJob(m.atomic_numbers, m.coordinates_ang, spec), self._scf_done)

    def _scf_done(self, k: int, scf: stages.ScfResult, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        m.reference = scf.reference
        planned = plan_route(m, self.settings)
        if m.needs_hessian:  # sent first: on a busy pool the longest stage starts first
            job = stages.HessianJob.after(
                scf, m.atomic_numbers, m.coordinates_ang, self.settings.spec
            )
            self._stage(k, job, self._hessian_done)
        if planned:
            self._tasks(k)

    def _hessian_done(self, k: int, hessian: np.ndarray, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        assert m.reference is not None
        m.add_hessian(stages.with_hessian(m.reference, hessian, seconds))
        if m.plan is None:
            plan_route(m, self.settings)
            self._tasks(k)
        else:
            self._assemble_when_ready(k)

    def _tasks(self, k: int) -> None:
        m = self.molecules[k]
        assert m.choice is not None
        n = len(m.jobs)
        self.results[k] = [None] * n
        self.reused[k], self.seconds[k] = [False] * n, [0.0] * n
        self.window[k] = [perf_counter(), perf_counter()]
        self._say(k, f"{m.choice.route} route: {n} tasks")
        for i, job in enumerate(m.jobs):

            def done(value, seconds, memory_mb, reused, i=i) -> None:  # noqa: ANN001
                self._task_done(k, i, value, seconds, memory_mb, reused)

            self.runner.submit(
                job, m.keys[i], m.labels[i], m.store, done, lambda e: self._fail(k, e), k
            )

    def _task_done(self, k: int, i: int, value, seconds, memory_mb, reused) -> None:  # noqa: ANN001
        self.results[k][i], self.reused[k][i] = value, reused
        self.seconds[k][i] = 0.0 if reused else seconds
        self.peak_mb[k] = max(self.peak_mb.get(k, 0.0), memory_mb)
        self.window[k][1] = perf_counter()
        self._guard(k, self._assemble_when_ready, k)

    def _assemble_when_ready(self, k: int) -> None:
        m = self.molecules[k]
        results = self.results.get(k)
        if results is None or any(r is None for r in results):
            return
        if m.needs_hessian and m.harmonic is None:
            return
        self.modes[k] = assemble(m, results, self.settings)
        n_reused = sum(self.reused[k])
        self._say(k, f"done ({len(results) - n_reused} tasks computed, {n_reused} reused)")

    def stats(self, k: int) -> TaskStats:
        """The counts and times of molecule ``k``'s derivative tasks."""
        reused, seconds = self.reused[k], self.seconds[k]
        start, stop = self.window[k]
        return TaskStats(
            len(reused),
            sum(reused),
            len(reused) - sum(reused),
            stop - start,
            float(sum(seconds)),
            self.peak_mb.get(k, 0.0),
            tuple(reused),
            tuple(seconds),
        )

    def engine_run(self, k: int, backend: Backend, seconds_wall: float) -> EngineRun:
        """The finished run of molecule ``k``."""
        m = self.molecules[k]
        ref = m.reference
        assert ref is not None and m.choice is not None
        stages_reused = tuple(s for s in STAGE_NAMES.values() if s in m.reused)
        reference_reused = "reference SCF" in m.reused and (
            "Hessian" in m.reused or not m.needs_hessian
        )
        return EngineRun(
            modes=self.modes[k],
            optimization=m.optimization,
            backend=backend.name,
            workers=backend.workers,
            tasks=self.stats(k),
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


#: The names of the stages (by their jobs' checkpoint kinds) in EngineRun.reused_stages.
STAGE_NAMES = {"optimize": "optimisation", "reference-scf": "reference SCF", "hessian": "Hessian"}
