"""The ``analytic`` route: ∂α/∂x and ∂μ/∂x analytically (closed-shell RHF/RKS).

Normally computed in the Hessian stage itself
(:class:`~vibrapol.engine.stages.HessianTensorJob`): the Hessian keeps its 3N nuclear orbital
responses, and by the 2n+1 rule these, the three first-order field responses and derivative
integrals give ∂α/∂x with no second-order field equations and no
second SCF (docs/analytic-raman.md).  Measured on a quiet 2-core machine (6-31G*): 0.15 × the
Hessian's time for benzene and butan-2-ol (C1) at HF, 0.19 for benzene at B3LYP
(``bench/analytic.py``).  Where the plain Hessian is already in the checkpoint (another route
computed it, its responses were not kept), the route's own task (:class:`AnalyticJob`) solves
the three first-order and six second-order field equations instead (0.29 × the Hessian for
benzene B3LYP).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

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
        return result.stacked()
