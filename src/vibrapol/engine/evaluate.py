"""The engine's units of work: reference calculation, displaced-geometry α, gradient in a field.

Jobs are picklable frozen dataclasses with a ``run()`` method, so they can run in another
process or on a Dask worker.  α is returned in the package units (Å³); gradients stay in
hartree/bohr (they are only intermediate results of the field route).
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from vibrapol.engine.polarizability import cphf_polarizability
from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf
from vibrapol.units import BOHR3_TO_ANG3, BOHR_ANG


@dataclass(frozen=True, eq=False)
class PolarizabilityJob:
    """One displaced geometry to evaluate.

    Attributes
    ----------
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
    spec : MethodSpec
    dm0 : ndarray (nao, nao), optional
        Starting density (the reference geometry's); speeds up the SCF a little.
    threads : int, optional
        BLAS/OpenMP threads to use inside the job (None: leave as they are).
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    dm0: np.ndarray | None = None
    threads: int | None = None

    kind: ClassVar[str] = "alpha"
    result_name: ClassVar[str] = "alpha_ang3"

    def result_shape(self) -> tuple[int, ...]:
        """Shape of the result array."""
        return (3, 3)

    def run(self) -> np.ndarray:
        """α in Å³ (see :func:`evaluate_polarizability`)."""
        return evaluate_polarizability(self)


@dataclass(frozen=True, eq=False)
class PolarizabilityDipoleJob(PolarizabilityJob):
    """A displaced geometry whose α and total dipole are both wanted (the engine's routes).

    The result stacks α (Å³, rows 0–2) over the dipole (e·Å, row 3): one (4, 3) array, so
    that it is stored and checkpointed like every other task result.
    """

    #: The checkpoint's kind stays that of a displaced-geometry task; the key differs
    #: (``routes.make_jobs``), so α-only results of older checkpoints are not taken for these.
    kind: ClassVar[str] = "alpha"
    result_name: ClassVar[str] = "alpha_ang3_dipole_e_ang"

    def result_shape(self) -> tuple[int, ...]:
        """Shape of the result array."""
        return (4, 3)

    def run(self) -> np.ndarray:
        """α in Å³ over μ in e·Å (see :func:`evaluate_polarizability_dipole`)."""
        return evaluate_polarizability_dipole(self)


@dataclass(frozen=True, eq=False)
class FieldGradientJob:
    """One analytic nuclear gradient in a uniform field, at a fixed geometry.

    Attributes
    ----------
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
    spec : MethodSpec
    field_au : ndarray (3,)
        Field vector in atomic units (input frame).
    dm0 : ndarray (nao, nao), optional
        Starting density: the zero-field reference extrapolated to the field with its CPHF
        density response (:func:`~vibrapol.engine.fieldgrad.field_start_density`), or the
        reference density itself.
    threads : int, optional
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    field_au: np.ndarray
    dm0: np.ndarray | None = None
    threads: int | None = None

    kind: ClassVar[str] = "field-gradient"
    result_name: ClassVar[str] = "gradient_hartree_bohr"

    def result_shape(self) -> tuple[int, ...]:
        """Shape of the result array."""
        return (len(self.atomic_numbers), 3)

    def run(self) -> np.ndarray:
        """dE(F)/dR in hartree/bohr, shape (N, 3)."""
        from vibrapol.engine.fieldgrad import field_gradient, field_scf

        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = field_scf(mol, self.spec, self.field_au, dm0=self.dm0)
            return field_gradient(mf, self.field_au)


@dataclass(frozen=True, eq=False)
class ReferenceResult:
    """SCF energy, Hessian, α and density at the reference (usually optimised) geometry.

    Attributes
    ----------
    energy_hartree : float
    hessian_hartree_bohr2 : ndarray (3N, 3N) or None
        None until the Hessian stage has run (and on the displacement route, which builds the
        Hessian from its tasks instead).
    alpha_ang3 : ndarray (3, 3)
    density : ndarray (nao, nao)
        Converged AO density matrix, used as the start of every displaced SCF.
    gradient_hartree_bohr : ndarray (N, 3) or None
        Analytic gradient (with the DFT grid response), from the SCF converged to the field
        route's tolerance: the zero-field point of that route.  None when the reference stage
        did not compute it (after an optimisation, which measured a gradient's cost): the field
        route then computes it as one of its tasks.
    seconds_scf, seconds_hessian, seconds_alpha, seconds_gradient : float
        Wall time of each step; ``seconds_gradient`` (the cost model's) is the optimisation's
        last gradient when the reference stage computed none.
    density_response : ndarray (3, nao, nao), optional
        ∂D/∂F from the CPHF of α: the field tasks start from D + Σ_a F_a ∂D/∂F_a (None in
        checkpoints written before it was kept: they start from D).
    """

    energy_hartree: float
    hessian_hartree_bohr2: np.ndarray | None
    alpha_ang3: np.ndarray
    density: np.ndarray
    gradient_hartree_bohr: np.ndarray | None
    seconds_scf: float = 0.0
    seconds_hessian: float = 0.0
    seconds_alpha: float = 0.0
    seconds_gradient: float = 0.0
    density_response: np.ndarray | None = None


def limit_threads(threads: int | None) -> None:
    """Set PySCF's OpenMP threads and the BLAS threads of this process to ``threads``."""
    if threads is None:
        return
    from pyscf import lib
    from threadpoolctl import threadpool_limits

    lib.num_threads(int(threads))
    threadpool_limits(int(threads))


@contextmanager
def threads_limited(threads: int | None) -> Iterator[None]:
    """Like :func:`limit_threads` for the duration of a block, then restore the old limits.

    A task may run inside the caller's own process (Dask with ``processes=False``); it must not
    leave that process with fewer threads than it had.
    """
    if threads is None:
        yield
        return
    from pyscf import lib
    from threadpoolctl import threadpool_limits

    previous = lib.num_threads()
    limits = threadpool_limits(int(threads))
    lib.num_threads(int(threads))
    try:
        yield
    finally:
        lib.num_threads(previous)
        limits.restore_original_limits()


def evaluate_polarizability(job: PolarizabilityJob) -> np.ndarray:
    """α (Å³, shape (3, 3)) at one displaced geometry: tight SCF from ``dm0``, then CPHF."""
    with threads_limited(job.threads):
        mol = build_molecule(job.atomic_numbers, job.coordinates_ang, job.spec)
        mf = run_scf(mol, job.spec, dm0=job.dm0, where="displaced geometry")
        return cphf_polarizability(mf) * BOHR3_TO_ANG3


def evaluate_polarizability_dipole(job: PolarizabilityJob) -> np.ndarray:
    """α (Å³) over the total dipole (e·Å) at one displaced geometry, shape (4, 3).

    The dipole is PySCF's ``dip_moment(unit="AU")``: electrons and nuclei about the frame
    origin (see :mod:`vibrapol.engine.dipole` for why the origin does not matter).
    """
    with threads_limited(job.threads):
        mol = build_molecule(job.atomic_numbers, job.coordinates_ang, job.spec)
        mf = run_scf(mol, job.spec, dm0=job.dm0, where="displaced geometry")
        alpha = cphf_polarizability(mf) * BOHR3_TO_ANG3
        dipole = mf.dip_moment(unit="AU", origin=(0.0, 0.0, 0.0), verbose=0) * BOHR_ANG
        return np.vstack([alpha, dipole[None, :]])


def reference_calculation(
    atomic_numbers: np.ndarray, coordinates_ang: np.ndarray, spec: MethodSpec
) -> ReferenceResult:
    """SCF, CPHF α, gradient and analytic Hessian at one geometry, in this process.

    The engine's reference and Hessian stages run one after the other
    (:class:`~vibrapol.engine.stages.ScfJob`, :class:`~vibrapol.engine.stages.HessianJob`),
    for scripts and tests that want the whole reference at once.
    """
    from time import perf_counter

    from vibrapol.engine import stages

    scf = stages.ScfJob(atomic_numbers, coordinates_ang, spec).run()
    t0 = perf_counter()
    hessian = stages.HessianJob.after(scf, atomic_numbers, coordinates_ang, spec).run()
    return stages.with_hessian(scf.reference, hessian, perf_counter() - t0)


def peak_memory_mb() -> float:
    """Peak resident memory of this process in MB (Linux VmHWM; else ``ru_maxrss``)."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return float(line.split()[1]) / 1024.0
    except OSError:
        pass
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def timed_task(job: Any) -> tuple[Any, float, float]:
    """``job.run()``, its wall time (s) and the worker's peak memory (MB)."""
    from time import perf_counter

    t0 = perf_counter()
    result = job.run()
    return result, perf_counter() - t0, peak_memory_mb()


#: The name the engine's first version used.
timed_polarizability = timed_task
