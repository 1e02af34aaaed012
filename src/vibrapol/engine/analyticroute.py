"""The ``analytic`` route: ∂α/∂x and ∂μ/∂x analytically (closed-shell RHF/RKS).

Normally computed in the Hessian stage itself (:class:`HessianTensorJob`): the Hessian keeps
its 3N nuclear orbital responses, and by the 2n+1 rule these, the three first-order field
responses and derivative integrals give ∂α/∂x with no second-order field equations and no
second SCF (docs/analytic-raman.md).  Measured on a quiet 2-core machine (6-31G*): 0.15 × the
Hessian's time for benzene and butan-2-ol (C1) at HF, 0.19 for benzene at B3LYP
(``bench/analytic.py``).  Where the plain Hessian is already in the checkpoint (another route
computed it, its responses were not kept), the route's own task (:class:`AnalyticJob`) solves
the three first-order and six second-order field equations instead (0.29 × the Hessian for
benzene B3LYP).
"""

from __future__ import annotations

from dataclasses import dataclass
from time import perf_counter
from typing import Any, ClassVar

import numpy as np

from vibrapol.engine.scf import MethodSpec, build_molecule

#: Time of the analytic ∂α/∂x after the Hessian over that of the Hessian, for ``auto``'s
#: estimate, HF.  Measured 0.15 (wall and CPU) for benzene and butan-2-ol at HF/6-31G* (2 cores,
#: load 0.3–1.9; docs/analytic-raman.md); priced with a margin.  It runs after the Hessian in
#: the same stage, so the model adds it to the Hessian's time.  (The second-order task that runs
#: when the Hessian comes from a checkpoint costs about twice as much; it is priced the same.)
ANALYTIC_TO_HESSIAN = 0.2
#: The same for Kohn–Sham DFT: measured 0.19 (wall and CPU) for benzene B3LYP/6-31G* (load 1–2),
#: where the response solves started cold; in the route they start from the reference stage's
#: ∂D/∂F.
ANALYTIC_TO_HESSIAN_DFT = 0.25


def analytic_unsupported(
    spec: MethodSpec, dynamic: bool = False, atomic_numbers: np.ndarray | None = None
) -> str | None:
    """Why the analytic route cannot run with ``spec`` (None: it can).

    Pseudopotentials depend on the atoms: with ``atomic_numbers`` they are looked for here,
    without them the task refuses them when it builds the molecule.
    """
    if spec.is_unrestricted:
        return "it is implemented for closed shells only"
    if not spec.is_hf:
        from vibrapol.engine.analytic_xc import functional_unsupported
        from vibrapol.engine.dispersion import split_dispersion

        why = functional_unsupported(split_dispersion(spec.method)[0])
        if why is not None:
            return why
    if spec.solvent is not None:
        return "it does not include a solvent model"
    if spec.density_fit:
        return "it does not use density fitting"
    if dynamic:
        return "it gives the static polarizability derivatives only"
    if atomic_numbers is not None:
        from vibrapol.engine.ecp import ecp_core_electrons

        if ecp_core_electrons(spec.basis, atomic_numbers):
            return "it does not handle effective core potentials"
    return None


@dataclass(frozen=True, eq=False)
class AnalyticPlan:
    """The analytic route's one task at the reference geometry."""

    coordinates_ang: np.ndarray
    route: ClassVar[str] = "analytic"
    labels: tuple[str, ...] = ("analytic dalpha/dx",)

    @property
    def n_tasks(self) -> int:
        """One task."""
        return 1


@dataclass(frozen=True, eq=False)
class AnalyticJob:
    """∂α/∂x (Å²) over ∂μ/∂x (e) at one geometry: one (3N, 4, 3) array.

    Rows 0–2 of each coordinate are ∂α/∂x, row 3 is ∂μ/∂x, so that the result is stored and
    checkpointed like every other task result.  ``dm0`` and ``density_response`` (the
    reference stage's density and ∂D/∂F) are starting points only: the SCF and the responses
    are converged to their own tolerances from them.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    dm0: np.ndarray | None = None
    threads: int | None = None
    density_response: np.ndarray | None = None

    kind: ClassVar[str] = "analytic-dalpha"
    result_name: ClassVar[str] = "dalpha_dx_ang2_dmu_dx_e"

    def result_shape(self) -> tuple[int, ...]:
        """Shape of the result array."""
        return (3 * len(self.atomic_numbers), 4, 3)

    def run(self) -> np.ndarray:
        """The stacked derivatives (raises EngineInputError where not implemented)."""
        from vibrapol.engine.analytic import analytic_polarizability_derivatives
        from vibrapol.engine.evaluate import threads_limited
        from vibrapol.engine.fieldgrad import run_tight_scf

        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = run_tight_scf(mol, self.spec, self.dm0)
            result = analytic_polarizability_derivatives(mf, self.density_response)
        out = np.empty(self.result_shape())
        out[:, :3, :] = result.dalpha_dx_ang2
        out[:, 3, :] = result.dmu_dx_e
        return out


@dataclass(frozen=True)
class HessianAndTensor:
    """Result of :class:`HessianTensorJob`.

    Attributes
    ----------
    hessian_hartree_bohr2 : ndarray (3N, 3N)
        The analytic Hessian, as the Hessian stage's.
    tensor : ndarray (3N, 4, 3)
        ∂α/∂x (Å²) over ∂μ/∂x (e), as :class:`AnalyticJob`'s result.
    seconds_tensor : float
        The part of the stage's time spent on ``tensor`` (after the Hessian).
    """

    hessian_hartree_bohr2: np.ndarray
    tensor: np.ndarray
    seconds_tensor: float


@dataclass(frozen=True, eq=False)
class HessianTensorJob:
    """The analytic Hessian, then ∂α/∂x and ∂μ/∂x from its nuclear responses (2n+1 rule).

    The Hessian stage of the analytic route: the Hessian is computed as by
    :class:`~vibrapol.engine.stages.HessianJob` (the same steps, the same result), its 3N
    orbital responses to the nuclei are kept
    (:func:`vibrapol.engine.hessian.analytic_hessian_parts`), and the six second-order field
    equations of :class:`AnalyticJob` are replaced by their contraction with them
    (:func:`vibrapol.engine.field_response.field_density_derivatives`).
    No second SCF.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    mo_coeff: np.ndarray
    mo_occ: np.ndarray
    mo_energy: np.ndarray
    density_response: np.ndarray | None = None
    threads: int | None = None

    kind: ClassVar[str] = "hessian-dalpha"
    label: ClassVar[str] = "analytic Hessian and dalpha/dx"

    def key(self) -> str:
        """Checkpoint key (the orbitals are determined by the SCF stage's own key)."""
        from vibrapol.engine.checkpoint import task_key
        from vibrapol.engine.field_response import ANALYTIC_RESPONSE_TOL
        from vibrapol.engine.stages import REFERENCE_KEY

        return task_key(
            self.kind,
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            analytic_conv=[ANALYTIC_RESPONSE_TOL],
            **REFERENCE_KEY,
        )

    def run(self) -> HessianAndTensor:
        """The Hessian and the stacked derivatives (EngineInputError where not implemented)."""
        from vibrapol.engine.analytic import analytic_polarizability_derivatives, check_supported
        from vibrapol.engine.evaluate import threads_limited
        from vibrapol.engine.hessian import analytic_hessian_parts
        from vibrapol.engine.scf import build_scf

        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = build_scf(mol, self.spec)
            mf.mo_coeff, mf.mo_occ, mf.mo_energy = self.mo_coeff, self.mo_occ, self.mo_energy
            mf.converged = True
            check_supported(mf)  # refused before the Hessian, not after
            hessian, u = analytic_hessian_parts(mf)
            start = perf_counter()
            result = analytic_polarizability_derivatives(mf, self.density_response, u)
        tensor = np.empty((3 * len(self.atomic_numbers), 4, 3))
        tensor[:, :3, :] = result.dalpha_dx_ang2
        tensor[:, 3, :] = result.dmu_dx_e
        return HessianAndTensor(hessian, tensor, perf_counter() - start)

    @staticmethod
    def pack(result: HessianAndTensor) -> dict[str, Any]:
        """The arrays stored in the checkpoint."""
        return {
            "hessian_hartree_bohr2": result.hessian_hartree_bohr2,
            AnalyticJob.result_name: result.tensor,
            "seconds_tensor": result.seconds_tensor,
        }

    def unpack(self, stored: dict[str, np.ndarray]) -> HessianAndTensor | None:
        """The result from a checkpoint row (None when a field is missing or misshapen)."""
        n = 3 * len(self.atomic_numbers)
        hessian = stored.get("hessian_hartree_bohr2")
        tensor = stored.get(AnalyticJob.result_name)
        if hessian is None or tensor is None or tensor.shape != (n, 4, 3):
            return None
        return HessianAndTensor(hessian, tensor, float(stored.get("seconds_tensor", 0.0)))
