"""``compute_modes``: a bare structure in, a complete :class:`~vibrapol.modeset.ModeSet` out.

Steps: (optional) geometry optimisation → SCF, analytic Hessian and CPHF α at the reference
geometry → harmonic analysis (:mod:`vibrapol.vibrations`) → α at displaced geometries
(independent tasks) → ∂α by central differences.
"""

from __future__ import annotations

from collections.abc import Sequence
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path
from time import perf_counter
from typing import Any

import numpy as np

from vibrapol.engine import stages
from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.displacements import (
    ROUTES,
    DisplacementPlan,
    cartesian_plan,
    central_differences,
    check_step,
    normal_mode_plan,
)
from vibrapol.engine.evaluate import PolarizabilityJob
from vibrapol.engine.executors import choose_workers, open_backend
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.progress import Progress, want_progress
from vibrapol.engine.runner import TaskStats, run_polarizability_tasks
from vibrapol.engine.scf import (
    SCF_CONV_TOL,
    SCF_CONV_TOL_GRAD,
    EngineInputError,
    MethodSpec,
    build_molecule,
)
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance, default_masses
from vibrapol.structure import check_structure
from vibrapol.vibrations import harmonic_analysis

#: Default displacement (Å): activities change ≤ 3e-4 relative between 0.001 and 0.01 Å with
#: errors ∝ h², so 0.005 Å is far from both truncation and SCF noise.
DEFAULT_STEP_ANG = 0.005


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


def make_plan(
    route: str,
    coordinates_ang: np.ndarray,
    modes: np.ndarray,
    masses_da: np.ndarray,
    step_ang: float,
) -> DisplacementPlan:
    """The displacement plan of ``route`` (``"cartesian"`` or ``"normal-mode"``)."""
    if route == "cartesian":
        return cartesian_plan(coordinates_ang, step_ang)
    if route == "normal-mode":
        return normal_mode_plan(coordinates_ang, modes, masses_da, step_ang)
    raise EngineInputError(f"unknown route {route!r}; choose one of {', '.join(ROUTES)}")


@dataclass(frozen=True, eq=False)
class EngineRun:
    """A finished engine run: the :class:`ModeSet` and what it took.

    Attributes
    ----------
    modes : ModeSet
    optimization : OptimizationResult or None
        None when the geometry was used as given.
    backend : str
        ``"serial"``, ``"process pool"`` or ``"dask"``.
    workers : int
    tasks : TaskStats
        Counts (total, reused from the checkpoint, computed now) and times of the
        displaced-geometry tasks.
    reused_optimization, reused_reference : bool
        Whether those stages came from the checkpoint.
    seconds_optimize, seconds_scf, seconds_hessian, seconds_alpha : float
        Wall time of each stage when it ran (its recorded time when reused).
    seconds_wall : float
        Wall time of the whole call.
    """

    modes: ModeSet
    optimization: OptimizationResult | None
    backend: str
    workers: int
    tasks: TaskStats
    reused_optimization: bool
    reused_reference: bool
    seconds_optimize: float
    seconds_scf: float
    seconds_hessian: float
    seconds_alpha: float
    seconds_wall: float

    @property
    def n_qc_evaluations(self) -> int:
        """Single-point evaluations of the run: 1 reference + 1 per displaced geometry."""
        return 1 + self.tasks.n_tasks


def run_engine(
    atoms: Any,
    method: str = "hf",
    basis: str = "sto-3g",
    *,
    charge: int = 0,
    multiplicity: int = 1,
    optimize: bool = True,
    step_ang: float = DEFAULT_STEP_ANG,
    route: str = "cartesian",
    masses_da: np.ndarray | None = None,
    cartesian_d: bool = False,
    workers: int | None = 1,
    scheduler: str | None = None,
    checkpoint: str | Path | None = None,
    fresh: bool = False,
    progress: bool | None = None,
) -> EngineRun:
    """:func:`compute_modes` with the run's statistics (see there for the parameters)."""
    t_start = perf_counter()
    structure = as_structure(atoms)
    spec = MethodSpec(method, basis, int(charge), int(multiplicity), bool(cartesian_d))
    if route not in ROUTES:
        raise EngineInputError(f"unknown route {route!r}; choose one of {', '.join(ROUTES)}")
    check_step(step_ang)
    z = structure.atomic_numbers
    build_molecule(z, structure.coordinates_ang, spec)  # every input error before any work
    masses = default_masses(z) if masses_da is None else np.asarray(masses_da, dtype=float)
    if masses.shape != z.shape or np.any(masses <= 0):
        raise EngineInputError(f"masses_da must be {z.shape[0]} positive numbers")
    if workers is not None and int(workers) < 1:
        raise EngineInputError(f"workers must be 1 or more, got {workers}")
    report = Progress(want_progress(progress))
    with ExitStack() as stack:
        # A Dask scheduler is contacted at once so that a bad address fails before any work.
        backend = stack.enter_context(open_backend(scheduler=scheduler)) if scheduler else None
        store = None
        if checkpoint is not None:
            store = stack.enter_context(CheckpointStore(checkpoint, fresh=fresh))
        coords, opt, seconds_opt, reused_opt = structure.coordinates_ang, None, 0.0, False
        if optimize:
            report.stage(f"optimising the geometry ({spec.label()}, ASE BFGS)")
            opt, seconds_opt, reused_opt = stages.optimized(z, coords, spec, store)
            coords = opt.coordinates_ang
        report.stage("reference SCF, analytic Hessian and polarizability")
        ref, reused_ref = stages.reference(z, coords, spec, store)
        harmonic = harmonic_analysis(ref.hessian_hartree_bohr2, masses, coords)
        plan = make_plan(route, coords, harmonic.modes, masses, step_ang)
        jobs = [PolarizabilityJob(z, x, spec, ref.density) for x in plan.coordinates_ang]
        keys = [task_key("alpha", z, x, spec) for x in plan.coordinates_ang]
        if backend is None:
            n = choose_workers(workers, plan.n_tasks * (ref.seconds_scf + ref.seconds_alpha))
            backend = stack.enter_context(open_backend(n))
        report.stage(
            f"{plan.n_tasks} displaced geometries on {backend.workers} worker(s) ({backend.name})"
        )
        alphas, task_stats = run_polarizability_tasks(
            jobs, keys, plan.labels, backend, store, report
        )
    deriv = central_differences(plan, alphas)
    modes = ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=masses,
        dalpha_dx=deriv if route == "cartesian" else None,
        dalpha_dq=deriv if route == "normal-mode" else None,
        polarizability_ang3=ref.alpha_ang3,
        energy_hartree=ref.energy_hartree,
        provenance=_provenance(spec, plan, opt, masses_da is None),
    )
    return EngineRun(
        modes=modes,
        optimization=opt,
        backend=backend.name,
        workers=backend.workers,
        tasks=task_stats,
        reused_optimization=reused_opt,
        reused_reference=reused_ref,
        seconds_optimize=seconds_opt,
        seconds_scf=ref.seconds_scf,
        seconds_hessian=ref.seconds_hessian,
        seconds_alpha=ref.seconds_alpha,
        seconds_wall=perf_counter() - t_start,
    )


def _provenance(
    spec: MethodSpec, plan: DisplacementPlan, opt: OptimizationResult | None, default_mass: bool
) -> Provenance:
    import pyscf

    if opt is None:
        notes = ["geometry used as given (not optimised)"]
    else:
        notes = [
            f"geometry optimised with ASE BFGS in {opt.n_steps} steps; "
            f"final max force {opt.max_force_hartree_bohr:.2e} hartree/bohr"
        ]
    notes.append(
        f"analytic Hessian; CPHF static polarizability; dalpha by central differences, "
        f"{plan.route} route, step {plan.step_ang} Å, {plan.n_tasks} displaced geometries; "
        f"SCF conv_tol {SCF_CONV_TOL:g}, conv_tol_grad {SCF_CONV_TOL_GRAD:g}"
    )
    if spec.cartesian_d:
        notes.append("Cartesian (6d) basis functions")
    return Provenance(
        source_kind="engine",
        program="PySCF",
        program_version=pyscf.__version__,
        method="HF" if spec.is_hf else spec.method.upper(),
        basis=spec.basis,
        masses=DEFAULT_MASSES_NOTE if default_mass else "given by the caller",
        notes=tuple(notes),
    )


def compute_modes(
    atoms: Any,
    method: str = "hf",
    basis: str = "sto-3g",
    *,
    charge: int = 0,
    multiplicity: int = 1,
    optimize: bool = True,
    step_ang: float = DEFAULT_STEP_ANG,
    route: str = "cartesian",
    masses_da: np.ndarray | None = None,
    cartesian_d: bool = False,
    workers: int | None = 1,
    scheduler: str | None = None,
    checkpoint: str | Path | None = None,
    fresh: bool = False,
    progress: bool | None = None,
) -> ModeSet:
    """Frequencies, normal modes and polarizability derivatives of a molecule, from scratch.

    Parameters
    ----------
    atoms : ase.Atoms or (atomic_numbers, coordinates_ang)
        The structure; coordinates in Å.
    method : str
        ``"hf"`` or a DFT functional name (``"b3lyp"``, ``"pbe0"`` …); closed shell only.
    basis : str
        Basis-set name PySCF knows.
    charge, multiplicity : int
        Total charge; multiplicity must be 1.
    optimize : bool
        Minimise the energy first (ASE BFGS, see :mod:`vibrapol.engine.optimize`).
    step_ang : float
        Central-difference step h in Å.
    route : {"cartesian", "normal-mode"}
        Displace each Cartesian coordinate (6N tasks; gives ∂α/∂x) or follow each normal mode
        (2·n_modes tasks; gives ∂α/∂Q only).
    masses_da : ndarray (N,), optional
        Atomic masses in Da; default: most abundant isotopes.
    cartesian_d : bool
        Cartesian (6d) instead of spherical basis functions.
    workers : int or None
        Local worker processes for the displaced geometries; 1 (the default here) runs them in
        this process.  None (the command line's default) chooses: one per core, unless the
        displacements are estimated to take less than
        :data:`~vibrapol.engine.executors.SERIAL_BELOW_S` serially, when starting a pool would
        cost more than it saves.  Scripts that use more than one need the
        ``if __name__ == "__main__":`` guard.
    scheduler : str, optional
        Address of a running Dask distributed scheduler; overrides ``workers``.
    checkpoint : str or Path, optional
        SQLite file of finished tasks; a rerun with the same file computes only what is
        missing.
    fresh : bool
        Delete the checkpoint file first.
    progress : bool or None
        Progress on stderr; None: only when stderr is a terminal.

    Returns
    -------
    ModeSet
        With frequencies, modes, ``dalpha_dx`` (Cartesian route) or ``dalpha_dq``
        (normal-mode route), α at the reference geometry, the SCF energy and provenance.

    Raises
    ------
    EngineInputError
        Unknown method, basis, element, route, or an electron count that is not closed-shell.
    EngineConvergenceError
        An SCF or the optimisation did not converge.
    """
    return run_engine(
        atoms,
        method,
        basis,
        charge=charge,
        multiplicity=multiplicity,
        optimize=optimize,
        step_ang=step_ang,
        route=route,
        masses_da=masses_da,
        cartesian_d=cartesian_d,
        workers=workers,
        scheduler=scheduler,
        checkpoint=checkpoint,
        fresh=fresh,
        progress=progress,
    ).modes
