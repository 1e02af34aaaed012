"""The ``analytic`` route: ∂α/∂x and ∂μ/∂x in one task, analytically (closed-shell RHF/RKS).

The task converges the SCF at the reference geometry again (from the reference density, to the
field route's tight tolerances) and calls
:func:`vibrapol.engine.analytic.analytic_polarizability_derivatives`: three first-order and six
second-order field responses contracted with derivative integrals, whatever the molecule's
size or symmetry (docs/analytic-raman.md).  It needs no normal modes, so it runs beside the
Hessian stage.  Measured (benzene 6-31G*, 2 shared cores): HF 0.23 × the analytic Hessian's
wall time (0.18 × its CPU time); B3LYP 0.33 (0.41 CPU), where the response solves, each step a
grid contraction of the XC kernel, take most of the time (docs/analytic-raman.md).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from vibrapol.engine.scf import MethodSpec

#: Wall time of the analytic ∂α/∂x over that of the analytic Hessian, for ``auto``'s estimate
#: (measured: benzene HF/6-31G*, 0.23; docs/analytic-raman.md).
ANALYTIC_TO_HESSIAN = 0.25
#: The same for Kohn–Sham DFT.  Measured alone: benzene B3LYP/6-31G*, 0.33 wall, 0.41 CPU (load
#: 3–4 on 2 cores, responses solved to 1e-8).  Priced higher because beside the Hessian it
#: competes with it for the cores: at 0.4 ``auto`` took it for benzene over three field tasks,
#: and the whole job then cost 1.33 × the frequency-only job in CPU against 1.21 with the field
#: route (bench/engine_scale.py, docs/engine-routes.md); at 0.5 benzene keeps the field route
#: and molecules without symmetry (12 field tasks) still get the analytic one.
ANALYTIC_TO_HESSIAN_DFT = 0.5


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
        from vibrapol.engine.scf import build_molecule

        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = run_tight_scf(mol, self.spec, self.dm0)
            result = analytic_polarizability_derivatives(mf, self.density_response)
        out = np.empty(self.result_shape())
        out[:, :3, :] = result.dalpha_dx_ang2
        out[:, 3, :] = result.dmu_dx_e
        return out
