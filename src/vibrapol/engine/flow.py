"""The client's schedule of one run: each molecule's stages sent as their inputs are ready.

:class:`Flow` sends every molecule's first stage, and in each stage's callback does the cheap
client step that follows and sends the next stage (:mod:`vibrapol.engine.batch` describes the
order).  Jobs run on a :class:`~vibrapol.engine.runner.TaskRunner`, which stores each result
when it arrives; a :class:`~vibrapol.errors.VibrapolError` of one molecule's stage or client
step fails that molecule only (one line) unless the run raises its errors.
"""

from __future__ import annotations

import warnings
from dataclasses import replace
from time import perf_counter

import numpy as np

from vibrapol.engine import stages
from vibrapol.engine.analyticroute import AnalyticPlan
from vibrapol.engine.dynamic import PreResonanceWarning
from vibrapol.engine.executors import Backend
from vibrapol.engine.laser import LaserJob, LaserReference
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.prepare import (
    Molecule,
    assemble,
    check_open_shell_symmetry,
    check_spin,
    impose_symmetry,
    plan_route,
)
from vibrapol.engine.progress import Progress
from vibrapol.engine.runner import TaskRunner, TaskStats
from vibrapol.engine.settings import EngineSettings
from vibrapol.errors import OpenShellWarning, VibrapolError
from vibrapol.modeset import ModeSet

#: The names of the stages (by their jobs' checkpoint kinds) in EngineRun.reused_stages.
STAGE_NAMES = {
    "optimize": "optimisation",
    "laser-reference": "excitation energies",
    "reference-scf": "reference SCF",
    "hessian": "Hessian",
    "hessian-dalpha": "Hessian",
}


class Flow:
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
            job = stages.OptimizeJob(
                m.atomic_numbers,
                m.coordinates_ang,
                self.settings.spec,
                optimizer=self.settings.optimizer,
            )
            self._stage(k, job, self._optimized)
        else:
            self._reference(k)

    def _optimized(self, k: int, result: OptimizationResult, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        m.optimization, m.seconds_optimize = result, seconds
        m.coordinates_ang = result.coordinates_ang
        self._reference(k)

    def _reference(self, k: int) -> None:
        m, settings = self.molecules[k], self.settings
        if settings.symmetry:
            impose_symmetry(m, self.report, f"{m.name}: " if self.named else "")
        if settings.laser_nm is None:
            self._scf(k)
            return
        # The laser stage first: a laser in resonance is refused before the expensive stages.
        job = LaserJob(
            m.atomic_numbers, m.coordinates_ang, settings.spec, settings.laser_nm, settings.dynamic
        )
        self._stage(k, job, self._laser_done)

    def _laser_done(self, k: int, laser: LaserReference, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        m.laser = laser
        if laser.warning is not None:  # said on every run, reused or not
            prefix = f"{m.name}: " if self.named else ""
            warnings.warn(prefix + laser.warning, PreResonanceWarning, stacklevel=2)
        self._scf(k)

    def _scf(self, k: int) -> None:
        m, spec = self.molecules[k], self.settings.spec
        old = stages.legacy_reference(m.atomic_numbers, m.coordinates_ang, spec, m.store)
        if old is not None:  # one row of an earlier vibrapol: SCF and Hessian together
            m.reused |= {"reference SCF", "Hessian"}
            m.earlier_hessian = True
            self._say(k, "reference SCF, Hessian and polarizability: taken from the checkpoint")
            m.reference = old
            self._spin(k)
            m.add_hessian(old)
            check_open_shell_symmetry(m, self.settings)
            plan_route(m, self.settings, self.runner.backend.workers)
            self._tasks(k)
            return
        opt = m.optimization
        job = stages.ScfJob(
            m.atomic_numbers,
            m.coordinates_ang,
            spec,
            dm0=None if opt is None else opt.density,
            seconds_gradient=None if opt is None else opt.seconds_gradient,
        )
        self._stage(k, job, self._scf_done)

    def _scf_done(self, k: int, scf: stages.ScfResult, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        m.reference = scf.reference
        self._spin(k)
        planned = plan_route(m, self.settings, self.runner.backend.workers)
        if m.needs_hessian:  # sent first: on a busy pool the longest stage starts first
            job = stages.HessianJob.after(
                scf, m.atomic_numbers, m.coordinates_ang, self.settings.spec
            )
            if planned and self._tensor_with_hessian(k, scf, job):
                return
            self._stage(k, job, self._hessian_done)
        if planned:
            self._tasks(k)

    def _tensor_with_hessian(self, k: int, scf: stages.ScfResult, hessian_job) -> bool:  # noqa: ANN001
        """The analytic route's ∂α/∂x in the Hessian stage (2n+1 rule); False: not here.

        Not when the route is another, nor when the plain Hessian is already in the checkpoint
        (then the route's own task, which solves the second-order field equations, runs).
        """
        m = self.molecules[k]
        if not isinstance(m.plan, AnalyticPlan):
            return False
        if m.store is not None and m.store.get(hessian_job.key()) is not None:
            return False
        job = replace(
            stages.HessianTensorJob.after(
                scf, m.atomic_numbers, m.coordinates_ang, self.settings.spec
            ),
            density_response=m.reference.density_response if m.reference else None,
        )
        m.tensor_with_hessian = True
        self._open_tasks(k)
        self._stage(k, job, self._hessian_tensor_done)
        return True

    def _hessian_tensor_done(
        self, k: int, value: stages.HessianAndTensor, seconds: float, reused: bool
    ) -> None:
        self._hessian_done(k, value.hessian_hartree_bohr2, seconds - value.seconds_tensor, reused)
        self._task_done(k, 0, value.tensor, value.seconds_tensor, 0.0, reused)

    def _hessian_done(self, k: int, hessian: np.ndarray, seconds: float, reused: bool) -> None:
        m = self.molecules[k]
        assert m.reference is not None
        m.add_hessian(stages.with_hessian(m.reference, hessian, seconds))
        check_open_shell_symmetry(m, self.settings)
        if m.plan is None:
            plan_route(m, self.settings, self.runner.backend.workers)
            self._tasks(k)
        else:
            self._assemble_when_ready(k)

    def _spin(self, k: int) -> None:
        """⟨S²⟩ of an open-shell reference: refused when meaningless, else announced."""
        note = check_spin(self.molecules[k], self.settings)
        if note is not None:
            warnings.warn(f"{self.molecules[k].name}: {note}", OpenShellWarning, stacklevel=2)

    def _open_tasks(self, k: int) -> None:
        """Empty results for molecule ``k``'s tasks, and the line that announces them."""
        m = self.molecules[k]
        assert m.choice is not None
        n = len(m.jobs)
        self.results[k] = [None] * n
        self.reused[k], self.seconds[k] = [False] * n, [0.0] * n
        self.window[k] = [np.inf, -np.inf]
        if m.tensor_with_hessian:
            self._say(k, f"{m.choice.route} route: dalpha/dx computed with the Hessian (2n+1)")
        else:
            self._say(k, f"{m.choice.route} route: {n} tasks")

    def _tasks(self, k: int) -> None:
        m = self.molecules[k]
        self._open_tasks(k)
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
        # From the earliest start (its finish less its own time) to the last finish: on a
        # serial backend the Hessian sent before the tasks is not counted.
        now = perf_counter()
        self.window[k] = [min(self.window[k][0], now - self.seconds[k][i]), now]
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
        start = min(start, stop)
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
