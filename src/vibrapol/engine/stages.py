"""The single-shot stages of a molecule's run, as picklable jobs for any backend.

* :class:`OptimizeJob`: optimisation of the input structure (:mod:`vibrapol.engine.optimize`);
* :class:`ScfJob`: at the final geometry, the SCF (tightened to the field route's settings),
  the CPHF α and the analytic gradient;
* :class:`HessianJob`: the analytic Hessian, from the orbitals of the SCF stage (no second SCF:
  the Hessian is bit for bit the one computed in the same process as the SCF).

Each job has ``run()`` (what a worker calls, through :func:`~vibrapol.engine.evaluate.timed_task`),
``kind``, ``label``, ``key()`` (its checkpoint key, :func:`~vibrapol.engine.checkpoint.task_key`)
and ``pack`` / ``unpack`` between its result and the arrays of a checkpoint row, so that the
runner (:mod:`vibrapol.engine.runner`) treats stages and derivative tasks alike: each result is
stored as soon as it arrives and found again by key on a rerun.
"""

from __future__ import annotations

from dataclasses import dataclass
from time import perf_counter
from typing import Any, ClassVar, Self

import numpy as np

from vibrapol.engine.analyticroute import AnalyticJob
from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.evaluate import ReferenceResult, threads_limited
from vibrapol.engine.field_response import ANALYTIC_RESPONSE_TOL
from vibrapol.engine.fieldgrad import FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD
from vibrapol.engine.optimize import (
    DEFAULT_OPTIMIZER,
    OptimizationResult,
    optimize_geometry,
    optimizer_key,
)
from vibrapol.engine.scf import SCF_CONV_TOL, SCF_CONV_TOL_GRAD, MethodSpec, build_molecule

#: Residual of the reference α's equations after an optimisation: a third of the analytic
#: route's (its first-order equations then start solved).  α is variational: benzene
#: B3LYP/6-31G* moved by 1.4e-13 au from a residual of 1e-10, in 10.6 s instead of 11.7–12.6 s.
REFERENCE_ALPHA_TOL = ANALYTIC_RESPONSE_TOL / 3.0

#: The convergence settings of the reference SCF enter the keys of both reference stages:
#: with the zero-field gradient, the field route's tight criteria (that gradient is one of its
#: points) …
REFERENCE_KEY = {
    "reference_conv": [FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD],
    "grid_response": True,
}
#: … and without it, the engine's usual criteria, as a frequency-only run would use.  Measured
#: against the tight SCF (6-31G*, from a density 2e-3 Å away): α within 5e-9, ∂α/∂x (analytic)
#: 2.5e-8, ∂μ/∂x 4.8e-8 and the Hessian 4.3e-9 of their largest elements (ethanol B3LYP and HF,
#: water B3LYP); 2.6 s of 9.0 s saved on benzene B3LYP (docs/engine-routes.md).  Its α is
#: solved to :data:`REFERENCE_ALPHA_TOL`.
REFERENCE_KEY_NO_GRADIENT = {
    "reference_conv": [SCF_CONV_TOL, SCF_CONV_TOL_GRAD],
    "zero_field_gradient": False,
    "alpha_conv": [REFERENCE_ALPHA_TOL],
}


def reference_key(tight: bool) -> dict[str, Any]:
    """The reference SCF's part of a stage key: tight with the gradient, or the usual one."""
    return REFERENCE_KEY if tight else REFERENCE_KEY_NO_GRADIENT


@dataclass(frozen=True, eq=False)
class OptimizeJob:
    """Optimise a structure (``threads``: BLAS/OpenMP threads inside the job, None: as set)."""

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    threads: int | None = None
    optimizer: str = DEFAULT_OPTIMIZER

    kind: ClassVar[str] = "optimize"
    label: ClassVar[str] = "optimisation"

    def key(self) -> str:
        """Checkpoint key; the optimiser is part of it, so results of two never mix."""
        return task_key(
            "optimize",
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            **optimizer_key(self.optimizer),
        )

    def run(self) -> OptimizationResult:
        """The optimised geometry (raises EngineConvergenceError when it does not converge)."""
        with threads_limited(self.threads):
            return optimize_geometry(
                self.atomic_numbers, self.coordinates_ang, self.spec, optimizer=self.optimizer
            )

    @staticmethod
    def pack(result: OptimizationResult) -> dict[str, Any]:
        """The arrays stored in the checkpoint."""
        arrays: dict[str, Any] = {
            "coordinates_ang": result.coordinates_ang,
            "energy_hartree": result.energy_hartree,
            "max_force_hartree_bohr": result.max_force_hartree_bohr,
            "n_steps": result.n_steps,
            "n_gradients": result.n_gradients,
            "n_loose": result.n_loose,
        }
        for name in ("density", "seconds_gradient"):  # not known in every result
            if getattr(result, name) is not None:
                arrays[name] = getattr(result, name)
        return arrays

    def unpack(self, stored: dict[str, np.ndarray]) -> OptimizationResult | None:
        """The result from a checkpoint row (None when a field is missing)."""
        try:
            return OptimizationResult(
                coordinates_ang=stored["coordinates_ang"],
                energy_hartree=float(stored["energy_hartree"]),
                max_force_hartree_bohr=float(stored["max_force_hartree_bohr"]),
                n_steps=int(stored["n_steps"]),
                n_gradients=int(stored["n_gradients"]),
                optimizer=self.optimizer,
                n_loose=int(stored.get("n_loose", 0)),
                density=stored.get("density"),
                seconds_gradient=(
                    float(stored["seconds_gradient"]) if "seconds_gradient" in stored else None
                ),
            )
        except KeyError:
            return None


@dataclass(frozen=True, eq=False)
class ScfResult:
    """The SCF stage: the reference quantities (Hessian not yet known) and the orbitals.

    Attributes
    ----------
    reference : ReferenceResult
        With ``hessian_hartree_bohr2`` None and ``seconds_hessian`` 0.
    mo_coeff, mo_occ, mo_energy : ndarray
        The converged orbitals, the input of the Hessian stage.
    tight : bool
        Converged to the field route's tight criteria (with the zero-field gradient), else to
        the engine's usual ones (:func:`reference_key`).
    """

    reference: ReferenceResult
    mo_coeff: np.ndarray
    mo_occ: np.ndarray
    mo_energy: np.ndarray
    tight: bool = True


_SCF_ARRAYS = ("alpha_ang3", "density")
_SCF_TIMES = ("seconds_scf", "seconds_alpha", "seconds_gradient")
_ORBITALS = ("mo_coeff", "mo_occ", "mo_energy")


@dataclass(frozen=True, eq=False)
class ScfJob:
    """Reference SCF, CPHF α and (unless its cost is known) the zero-field gradient.

    ``dm0``: a starting density (the optimisation's last one), or None for PySCF's guess; the
    SCF is converged to the same criteria either way (which ones: ``seconds_gradient``).

    ``seconds_gradient``: the measured wall time of one analytic gradient at (nearly) this
    geometry, the optimisation's last.  Given, the zero-field gradient is not computed: only
    the field route needs it, and computes it as one of its tasks (benzene B3LYP/6-31G*: 6 s
    that every other route would have paid); the route choice takes this time as the
    gradient's cost, and the SCF is converged to the engine's usual criteria, not the field
    route's tighter ones (:data:`REFERENCE_KEY_NO_GRADIENT`).  None: tight SCF, the gradient
    computed here and its time measured.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    threads: int | None = None
    dm0: np.ndarray | None = None
    seconds_gradient: float | None = None

    kind: ClassVar[str] = "reference-scf"

    @property
    def tight(self) -> bool:
        """Whether the stage computes the zero-field gradient, and so the tight SCF."""
        return self.seconds_gradient is None

    @property
    def label(self) -> str:
        """What the stage computes, for the progress lines."""
        if self.tight:
            return "reference SCF, polarizability and gradient"
        return "reference SCF and polarizability"

    def key(self) -> str:
        """Checkpoint key (a stage without the gradient has a key of its own)."""
        return task_key(
            "reference-scf",
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            **reference_key(self.tight),
        )

    def run(self) -> ScfResult:
        """SCF, α (Å³) and, unless its cost is given, the gradient, each timed."""
        from vibrapol.engine.fieldgrad import field_gradient, run_tight_scf
        from vibrapol.engine.polarizability import cphf_polarizability_response
        from vibrapol.engine.scf import run_scf
        from vibrapol.units import BOHR3_TO_ANG3

        tight = self.tight
        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            t0 = perf_counter()
            mf = (
                run_tight_scf(mol, self.spec, self.dm0)
                if tight
                else run_scf(mol, self.spec, self.dm0)
            )
            t1 = perf_counter()
            # The three equations in one shared subspace, below the analytic route's residual:
            # ∂D/∂F is also where its first-order equations start (then solved already).
            # Benzene B3LYP/6-31G*: 11.2 s (residual 1e-10) against 8.8 s for PySCF's Krylov
            # solver, whose α is 1.7e-7 au off (bench numbers in docs/analytic-raman.md).
            alpha_bohr3, density_response = cphf_polarizability_response(
                mf, solver="block", tol=None if tight else REFERENCE_ALPHA_TOL
            )
            alpha = alpha_bohr3 * BOHR3_TO_ANG3
            t2 = perf_counter()
            gradient = None
            if tight:
                gradient = field_gradient(mf, np.zeros(3))  # the field route's zero-field point
            t3 = perf_counter()
        reference = ReferenceResult(
            energy_hartree=float(mf.e_tot),
            hessian_hartree_bohr2=None,
            alpha_ang3=alpha,
            density=np.asarray(mf.make_rdm1()),
            gradient_hartree_bohr=gradient,
            seconds_scf=t1 - t0,
            seconds_alpha=t2 - t1,
            seconds_gradient=t3 - t2 if self.seconds_gradient is None else self.seconds_gradient,
            density_response=density_response,
        )
        return ScfResult(
            reference,
            np.asarray(mf.mo_coeff),
            np.asarray(mf.mo_occ),
            np.asarray(mf.mo_energy),
            tight,
        )

    @staticmethod
    def pack(result: ScfResult) -> dict[str, Any]:
        """The arrays stored in the checkpoint."""
        ref = result.reference
        arrays: dict[str, Any] = {k: getattr(ref, k) for k in (*_SCF_ARRAYS, *_SCF_TIMES)}
        arrays["energy_hartree"] = ref.energy_hartree
        arrays["tight_scf"] = result.tight
        if ref.gradient_hartree_bohr is not None:
            arrays["gradient_hartree_bohr"] = ref.gradient_hartree_bohr
        arrays.update({k: getattr(result, k) for k in _ORBITALS})
        if ref.density_response is not None:  # ∂D/∂F: the start of the field tasks
            arrays["density_response"] = ref.density_response
        return arrays

    @staticmethod
    def unpack(stored: dict[str, np.ndarray]) -> ScfResult | None:
        """The result from a checkpoint row (None when a field is missing)."""
        if not all(k in stored for k in (*_SCF_ARRAYS, *_SCF_TIMES, *_ORBITALS, "energy_hartree")):
            return None
        reference = ReferenceResult(
            energy_hartree=float(stored["energy_hartree"]),
            hessian_hartree_bohr2=None,
            alpha_ang3=stored["alpha_ang3"],
            density=stored["density"],
            gradient_hartree_bohr=stored.get("gradient_hartree_bohr"),
            seconds_scf=float(stored["seconds_scf"]),
            seconds_alpha=float(stored["seconds_alpha"]),
            seconds_gradient=float(stored["seconds_gradient"]),
            density_response=stored.get("density_response"),
        )
        tight = bool(stored.get("tight_scf", True))  # earlier rows were all tight
        mo_coeff, mo_occ, mo_energy = (stored[k] for k in _ORBITALS)
        return ScfResult(reference, mo_coeff, mo_occ, mo_energy, tight=tight)


@dataclass(frozen=True, eq=False)
class HessianJob:
    """The analytic Hessian from the converged orbitals of the SCF stage."""

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    mo_coeff: np.ndarray
    mo_occ: np.ndarray
    mo_energy: np.ndarray
    threads: int | None = None
    tight_reference: bool = True

    kind: ClassVar[str] = "hessian"
    label: ClassVar[str] = "analytic Hessian"

    @classmethod
    def after(cls, scf: ScfResult, atomic_numbers, coordinates_ang, spec) -> Self:  # noqa: ANN001
        """The Hessian job that follows an SCF stage."""
        return cls(
            atomic_numbers,
            coordinates_ang,
            spec,
            scf.mo_coeff,
            scf.mo_occ,
            scf.mo_energy,
            tight_reference=scf.tight,
        )

    def key(self) -> str:
        """Checkpoint key (the orbitals are determined by the SCF stage's own key)."""
        from vibrapol.engine.hessian import hessian_key

        return task_key(
            "hessian",
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            **reference_key(self.tight_reference),
            **hessian_key(self.spec),
        )

    def scf_object(self):  # noqa: ANN201
        """The SCF object at the job's geometry with the SCF stage's orbitals (no new SCF)."""
        from vibrapol.engine.scf import build_scf

        mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
        mf = build_scf(mol, self.spec)
        mf.mo_coeff, mf.mo_occ, mf.mo_energy = self.mo_coeff, self.mo_occ, self.mo_energy
        mf.converged = True
        return mf

    def run(self) -> np.ndarray:
        """The (3N, 3N) Hessian in hartree/bohr² (PySCF analytic second derivatives)."""
        from vibrapol.engine.hessian import analytic_hessian

        with threads_limited(self.threads):
            return analytic_hessian(self.scf_object())

    @staticmethod
    def pack(result: np.ndarray) -> dict[str, Any]:
        """The arrays stored in the checkpoint."""
        return {"hessian_hartree_bohr2": result}

    @staticmethod
    def unpack(stored: dict[str, np.ndarray]) -> np.ndarray | None:
        """The result from a checkpoint row (None when missing)."""
        return stored.get("hessian_hartree_bohr2")


@dataclass(frozen=True)
class HessianAndTensor:
    """Result of :class:`HessianTensorJob`.

    Attributes
    ----------
    hessian_hartree_bohr2 : ndarray (3N, 3N)
        The analytic Hessian, as the Hessian stage's.
    tensor : ndarray (3N, 4, 3)
        ∂α/∂x (Å²) over ∂μ/∂x (e), as the analytic route's task result
        (:class:`~vibrapol.engine.analyticroute.AnalyticJob`).
    seconds_tensor : float
        The part of the stage's time spent on ``tensor`` (after the Hessian).
    """

    hessian_hartree_bohr2: np.ndarray
    tensor: np.ndarray
    seconds_tensor: float


@dataclass(frozen=True, eq=False)
class HessianTensorJob(HessianJob):
    """The analytic Hessian, then ∂α/∂x and ∂μ/∂x from its nuclear responses (2n+1 rule).

    The Hessian stage of the analytic route: the Hessian is computed as by
    :class:`HessianJob` (the same steps, the same result), its 3N orbital responses to the
    nuclei are kept (:func:`vibrapol.engine.hessian.analytic_hessian_parts`), and the six
    second-order field equations of the route's own task
    (:class:`~vibrapol.engine.analyticroute.AnalyticJob`) are replaced by their contraction
    with them (:func:`vibrapol.engine.field_response.field_density_derivatives`).  No second
    SCF.  ``density_response``: the SCF stage's ∂D/∂F, where the first-order field equations
    start.
    """

    density_response: np.ndarray | None = None

    kind: ClassVar[str] = "hessian-dalpha"
    label: ClassVar[str] = "analytic Hessian and dalpha/dx"

    def key(self) -> str:
        """Checkpoint key (the orbitals are determined by the SCF stage's own key)."""
        from vibrapol.engine.hessian import hessian_key

        return task_key(
            self.kind,
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            analytic_conv=[ANALYTIC_RESPONSE_TOL],
            **reference_key(self.tight_reference),
            **hessian_key(self.spec),
        )

    def run(self) -> HessianAndTensor:  # type: ignore[override]
        """The Hessian and the stacked derivatives (EngineInputError where not implemented)."""
        from vibrapol.engine.analytic import analytic_polarizability_derivatives, check_supported
        from vibrapol.engine.hessian import analytic_hessian_parts

        with threads_limited(self.threads):
            mf = self.scf_object()
            check_supported(mf)  # refused before the Hessian, not after
            hessian, nuclear = analytic_hessian_parts(mf)
            start = perf_counter()
            result = analytic_polarizability_derivatives(mf, self.density_response, nuclear)
        return HessianAndTensor(hessian, result.stacked(), perf_counter() - start)

    @staticmethod
    def pack(result: HessianAndTensor) -> dict[str, Any]:  # type: ignore[override]
        """The arrays stored in the checkpoint."""
        return {
            "hessian_hartree_bohr2": result.hessian_hartree_bohr2,
            AnalyticJob.result_name: result.tensor,
            "seconds_tensor": result.seconds_tensor,
        }

    def unpack(self, stored: dict[str, np.ndarray]) -> HessianAndTensor | None:  # type: ignore[override]
        """The result from a checkpoint row (None when a field is missing or misshapen)."""
        n = 3 * len(self.atomic_numbers)
        hessian = stored.get("hessian_hartree_bohr2")
        tensor = stored.get(AnalyticJob.result_name)
        if hessian is None or tensor is None or tensor.shape != (n, 4, 3):
            return None
        return HessianAndTensor(hessian, tensor, float(stored.get("seconds_tensor", 0.0)))


def with_hessian(
    reference: ReferenceResult, hessian: np.ndarray, seconds: float
) -> ReferenceResult:
    """The reference result completed by the Hessian stage."""
    from dataclasses import replace

    return replace(reference, hessian_hartree_bohr2=hessian, seconds_hessian=seconds)


_LEGACY_FIELDS = ("hessian_hartree_bohr2", *_SCF_ARRAYS, "gradient_hartree_bohr", "energy_hartree")
_LEGACY_TIMES = ("seconds_scf", "seconds_hessian", "seconds_alpha", "seconds_gradient")


def legacy_reference(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    store: CheckpointStore | None,
) -> ReferenceResult | None:
    """A reference calculation stored by an earlier vibrapol as one row (SCF, Hessian, α).

    Those versions ran the reference as one stage under the key kind ``reference``; a
    checkpoint they left is still used, so that upgrading in the middle of a run loses nothing.
    """
    if store is None:
        return None
    key = task_key("reference", atomic_numbers, coordinates_ang, spec, **REFERENCE_KEY)
    stored = store.get(key)
    if stored is None or not all(k in stored for k in (*_LEGACY_FIELDS, *_LEGACY_TIMES)):
        return None
    return ReferenceResult(
        energy_hartree=float(stored["energy_hartree"]),
        hessian_hartree_bohr2=stored["hessian_hartree_bohr2"],
        alpha_ang3=stored["alpha_ang3"],
        density=stored["density"],
        gradient_hartree_bohr=stored["gradient_hartree_bohr"],
        seconds_scf=float(stored["seconds_scf"]),
        seconds_hessian=float(stored["seconds_hessian"]),
        seconds_alpha=float(stored["seconds_alpha"]),
        seconds_gradient=float(stored["seconds_gradient"]),
        density_response=stored.get("density_response"),
    )
