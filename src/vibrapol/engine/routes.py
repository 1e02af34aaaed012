"""The four ways to ∂α, their task lists, and the automatic choice by a measured cost model.

* ``cartesian``: α at ±h along Cartesian displacements (symmetry-reduced when the molecule has
  symmetry, :mod:`vibrapol.engine.symdisplace`); one SCF + one CPHF per task.
* ``normal-mode``: α at ±h along each normal mode; one SCF + one CPHF per task; gives ∂α/∂Q
  only.
* ``field``: analytic gradients in a few uniform fields (:mod:`vibrapol.engine.fieldplan`);
  one tight SCF + one gradient per task; gives the full ∂α/∂x with a number of tasks that does
  not grow with the molecule.
* ``displacement``: SCF, analytic gradient, dipole and CPHF α at the Cartesian displaced
  geometries (:mod:`vibrapol.engine.disproute`); the Hessian comes from the gradients, so the
  route needs no analytic Hessian.

The first three need the analytic Hessian (the "Hessian routes").  Among them ``auto``
estimates the cost of each as ceil(tasks / workers) × (cost of one task), with the costs of an
SCF, a CPHF α and a gradient measured at the reference geometry of the molecule itself (the
gradient's at the optimisation's last step when there was one; times the factors below),
and takes the cheapest; whether to compute the Hessian at all (against the displacement route)
is decided before, by :func:`vibrapol.engine.autoroute.choose_family`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from vibrapol.engine.analyticroute import (
    ANALYTIC_TO_HESSIAN,
    ANALYTIC_TO_HESSIAN_DFT,
    AnalyticJob,
    AnalyticPlan,
)
from vibrapol.engine.checkpoint import task_key
from vibrapol.engine.dipole import dmu_dx_from_gradients, dmu_from_displacements, rebuild_dmu_dx
from vibrapol.engine.displacements import (
    DisplacementPlan,
    cartesian_plan,
    central_differences,
    normal_mode_plan,
)
from vibrapol.engine.disproute import (
    DisplacementRoutePlan,
    GradientDipoleAlphaJob,
    hessian_from_gradients,
    split_results,
)
from vibrapol.engine.evaluate import FieldGradientJob, PolarizabilityDipoleJob, ReferenceResult
from vibrapol.engine.field_response import ANALYTIC_RESPONSE_TOL
from vibrapol.engine.fieldgrad import (
    FIELD_SCF_CONV_TOL,
    FIELD_SCF_CONV_TOL_GRAD,
    field_start_density,
)
from vibrapol.engine.fieldplan import FieldPlan, dalpha_dx_from_gradients, field_plan
from vibrapol.engine.scf import EngineInputError, MethodSpec
from vibrapol.engine.symdisplace import SymmetricPlan, rebuild_dalpha_dx, symmetric_cartesian_plan
from vibrapol.symmetry import PointGroup

#: Route names; ``normal`` is accepted for ``normal-mode``.
ROUTES = ("auto", "cartesian", "normal-mode", "field", "displacement", "analytic")

#: The routes that need the analytic Hessian at the reference geometry.
HESSIAN_ROUTES = ("cartesian", "normal-mode", "field", "analytic")

#: A field task (tight SCF from the reference density + gradient, one thread) costs this many
#: times the reference SCF + gradient (all threads).  Measured here, HF/6-31G* on 2 shared
#: cores (bench/engine.py --compare-routes): CCl4 1.15, benzene 1.56; the larger is used.
FIELD_TASK_FACTOR = 1.5

#: A displaced-geometry task (SCF from the reference density + CPHF, one thread) costs this many
#: times the reference SCF + CPHF.  Measured as above: CCl4 0.65–1.1, benzene 0.73–1.14.
DISPLACED_TASK_FACTOR = 1.0

#: A displacement-route task (SCF from the reference density + gradient + dipole + CPHF, one
#: thread) costs this many times the reference SCF + CPHF + gradient (all threads).  Measured
#: here, HF/6-31G*, 2 workers on 2 loaded cores (2026-12-05): CH3OH 2.3, CH3CH2OH 1.6 (the
#: Cartesian route's tasks 0.8 and 1.1 in the same runs, the field route's 1.8 and 1.8).
DISPLACEMENT_TASK_FACTOR = 2.0


def normalize_route(route: str) -> str:
    """The canonical route name; raises :class:`EngineInputError` for an unknown one."""
    name = "normal-mode" if route == "normal" else route
    if name not in ROUTES:
        raise EngineInputError(
            f"unknown route {route!r}; choose one of auto, cartesian, normal, field, "
            "displacement, analytic"
        )
    return name


Plan = DisplacementPlan | SymmetricPlan | FieldPlan | DisplacementRoutePlan | AnalyticPlan


def build_plan(
    route: str,
    coordinates_ang: np.ndarray,
    modes: np.ndarray,
    masses_da: np.ndarray,
    step_ang: float,
    field_au: float,
    group: PointGroup | None,
    grid_free: bool = True,
) -> Plan:
    """The task plan of a concrete route (not ``auto``); ``group`` None means no symmetry.

    ``modes`` (the Hessian's normal modes) is used by the normal-mode route only; the others
    accept None.

    ``grid_free`` is False for DFT: the symmetry-using routes then use only the operations
    that map the integration grid onto itself (:func:`grid_operations`).
    """
    if route == "normal-mode":
        return normal_mode_plan(coordinates_ang, modes, masses_da, step_ang)
    if route == "analytic":
        return AnalyticPlan(coordinates_ang)
    if route == "displacement":
        geometries = build_plan(
            "cartesian", coordinates_ang, modes, masses_da, step_ang, field_au, group, grid_free
        )
        assert isinstance(geometries, DisplacementPlan | SymmetricPlan)
        return DisplacementRoutePlan(geometries)
    if route not in ("cartesian", "field"):
        raise EngineInputError(f"no plan for route {route!r}")
    if group is None or group.order == 1:
        if route == "cartesian":
            return cartesian_plan(coordinates_ang, step_ang)
        return field_plan(field_au, n_atoms=len(coordinates_ang))
    ops, perms = group.operations, group.permutations
    if not grid_free:
        ops, perms = grid_operations(ops, perms)
    if route == "field":
        return field_plan(field_au, ops, perms, group.axes)
    if len(ops) == 1:
        return cartesian_plan(coordinates_ang, step_ang)
    return symmetric_cartesian_plan(
        coordinates_ang, step_ang, ops, perms, group.centre_ang, group.axes
    )


def grid_operations(
    operations: np.ndarray, permutations: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The operations that are signed permutations of the Cartesian axes (a subgroup).

    PySCF's DFT grids are Lebedev spheres fixed to the Cartesian axes, invariant under exactly
    these operations (those of the cube).  An operation outside them (the C6 of benzene in its
    usual frame) maps the grid of one task onto a different grid, and the field route, which
    divides gradient differences by F² ≈ 1e-6, turns that grid error (≈ 1e-6 hartree/bohr) into
    errors of order one in ∂α/∂x; measured: benzene B3LYP/6-31G* activities off by 100×.
    """
    ops = np.asarray(operations, dtype=float)
    rounded = np.rint(ops)
    keep = [
        k
        for k, m in enumerate(ops)
        if np.abs(m - rounded[k]).max() < 1e-8 and np.all(np.abs(rounded[k]).sum(axis=1) == 1)
    ]
    return ops[keep], np.asarray(permutations)[keep]


def make_jobs(
    plan: Plan,
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    ref: ReferenceResult,
    omega_au: float | None = None,
) -> tuple[list, list[str], tuple[str, ...]]:
    """Jobs, checkpoint keys and labels of every task of ``plan``.

    ``omega_au`` (hartree) asks for α(−ω; ω) instead of the static α (not on the field route).
    """
    z = atomic_numbers
    jobs: list[FieldGradientJob] | list[PolarizabilityDipoleJob] | list[Any]
    if isinstance(plan, AnalyticPlan):
        x = plan.coordinates_ang
        jobs = [AnalyticJob(z, x, spec, ref.density, density_response=ref.density_response)]
        keys = [task_key("analytic-dalpha", z, x, spec, analytic_conv=[ANALYTIC_RESPONSE_TOL])]
        return jobs, keys, plan.labels
    if isinstance(plan, DisplacementRoutePlan):
        jobs = [GradientDipoleAlphaJob(z, x, spec, ref.density) for x in plan.coordinates_ang]
        keys = [task_key("gradient-dipole-alpha", z, x, spec) for x in plan.coordinates_ang]
        return jobs, keys, plan.labels
    if isinstance(plan, FieldPlan):
        fields = plan.task_fields_au
        jobs = [
            FieldGradientJob(
                z,
                coordinates_ang,
                spec,
                f,
                field_start_density(ref.density, ref.density_response, f),
            )
            for f in fields
        ]
        keys = [
            task_key(
                "field-gradient",
                z,
                coordinates_ang,
                spec,
                field_au=f.tolist(),
                field_conv=[FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD],
            )
            for f in fields
        ]
        return jobs, keys, plan.labels
    if omega_au is not None:
        from vibrapol.engine.dynamic import DynamicPolarizabilityDipoleJob

        points = plan.coordinates_ang
        jobs = [
            DynamicPolarizabilityDipoleJob(z, x, spec, ref.density, omega_au=omega_au)
            for x in points
        ]
        keys = [task_key("alpha-omega-dipole", z, x, spec, omega_au=omega_au) for x in points]
        return jobs, keys, plan.labels
    jobs = [PolarizabilityDipoleJob(z, x, spec, ref.density) for x in plan.coordinates_ang]
    keys = [task_key("alpha-dipole", z, x, spec) for x in plan.coordinates_ang]
    return jobs, keys, plan.labels


def derivatives(plan: Plan, results: list[np.ndarray], ref: ReferenceResult) -> np.ndarray:
    """∂α/∂x (Å², Cartesian and field routes) or ∂α/∂Q (Å² Da⁻¹ᐟ², normal-mode route)."""
    if isinstance(plan, AnalyticPlan):
        return np.asarray(results[0])[:, :3, :]
    if isinstance(plan, FieldPlan):
        return dalpha_dx_from_gradients(plan, field_gradients(plan, results, ref))
    if isinstance(plan, DisplacementRoutePlan):
        return derivatives(plan.geometries, [r[:4] for r in results], ref)
    stacked = np.array(results)[:, :3]  # α over the dipole (PolarizabilityDipoleJob)
    if isinstance(plan, SymmetricPlan):
        return rebuild_dalpha_dx(plan, stacked)
    return central_differences(plan, stacked)


def field_gradients(plan: FieldPlan, results: list[np.ndarray], ref: ReferenceResult) -> np.ndarray:
    """The gradients of every point of ``plan``, the zero-field one first (n_points, N, 3).

    From the tasks alone when the zero field is one of them, else the reference stage's
    gradient first.
    """
    if plan.zero_field_task:
        return np.array(results)
    if ref.gradient_hartree_bohr is None:
        raise EngineInputError("the field route needs the zero-field gradient: none was computed")
    return np.array([ref.gradient_hartree_bohr, *results])


def dipole_derivatives(
    plan: Plan, results: list[np.ndarray], ref: ReferenceResult, charge: int = 0
) -> np.ndarray:
    """∂μ/∂x (3N, 3) in e (Cartesian and field routes) or ∂μ/∂Q (n_modes, 3) in e Da⁻¹ᐟ².

    From the same task results as :func:`derivatives` (:mod:`vibrapol.engine.dipole`);
    ``charge`` is the molecule's total charge (the symmetry rebuild needs it).
    """
    if isinstance(plan, AnalyticPlan):
        return np.asarray(results[0])[:, 3, :]
    if isinstance(plan, FieldPlan):
        return dmu_dx_from_gradients(plan, field_gradients(plan, results, ref))
    if isinstance(plan, DisplacementRoutePlan):
        return dipole_derivatives(plan.geometries, [r[:4] for r in results], ref, charge)
    dipoles = np.array(results)[:, 3]
    if isinstance(plan, SymmetricPlan):
        return rebuild_dmu_dx(plan, dipoles, charge)
    return dmu_from_displacements(plan, dipoles)


def hessian_from_tasks(plan: Plan, results: list[np.ndarray]) -> tuple[np.ndarray, float]:
    """The displacement route's Hessian (3N, 3N) in hartree/bohr² and its largest asymmetry.

    See :func:`vibrapol.engine.disproute.hessian_from_gradients`.
    """
    if not isinstance(plan, DisplacementRoutePlan):
        raise EngineInputError(f"the {route_name(plan)} route does not build a Hessian")
    return hessian_from_gradients(plan, split_results(results)[2])


def route_name(plan: Plan) -> str:
    """``cartesian``, ``normal-mode``, ``field`` or ``displacement``."""
    return "field" if isinstance(plan, FieldPlan) else plan.route


@dataclass(frozen=True)
class RouteChoice:
    """The route taken and why.

    Attributes
    ----------
    route : str
    n_tasks : int
    reason : str
        One sentence for the provenance: requested, or the cost estimate of every route.
    estimates_s : dict
        Estimated seconds of each route on the run's workers (empty when the route was
        requested); for ``auto`` with the displacement route in the running, the Hessian
        routes' estimates include the estimated analytic Hessian.
    """

    route: str
    n_tasks: int
    reason: str
    estimates_s: dict


def task_seconds(route: str, ref: ReferenceResult, is_hf: bool = True) -> float:
    """Estimated serial seconds of one task of ``route`` from the reference timings.

    ``is_hf`` selects the Hessian model and the analytic route's fraction of it (HF or DFT).
    """
    if route == "field":
        return FIELD_TASK_FACTOR * (ref.seconds_scf + ref.seconds_gradient)
    if route == "analytic":  # a fraction of the analytic Hessian (estimated as ``auto`` does)
        from vibrapol.engine.autoroute import estimated_hessian_seconds

        fraction = ANALYTIC_TO_HESSIAN if is_hf else ANALYTIC_TO_HESSIAN_DFT
        return fraction * estimated_hessian_seconds(ref, is_hf)
    if route == "displacement":
        return DISPLACEMENT_TASK_FACTOR * (
            ref.seconds_scf + ref.seconds_alpha + ref.seconds_gradient
        )
    return DISPLACED_TASK_FACTOR * (ref.seconds_scf + ref.seconds_alpha)


def parallel_seconds(n_tasks: int, workers: int, seconds_task: float) -> float:
    """Wall time of ``n_tasks`` equal tasks on ``workers`` workers: ceil(n/W) × t."""
    return math.ceil(n_tasks / max(int(workers), 1)) * seconds_task


#: Order in which ``auto`` breaks ties between equal estimates: the Cartesian route first (it
#: needs no field-strength choice), then the field route (it gives ∂α/∂x, the normal-mode route
#: only ∂α/∂Q).
ROUTE_PREFERENCE = ("cartesian", "field", "normal-mode", "analytic")


def cheapest_route(estimates: dict[str, float]) -> str:
    """The route of least estimated seconds, ties broken by :data:`ROUTE_PREFERENCE`."""
    order = tuple(r for r in ROUTE_PREFERENCE if r in estimates)
    return min(order, key=lambda r: (round(estimates[r], 6), order.index(r)))


def choose_route(
    requested: str,
    plans: dict[str, Plan],
    ref: ReferenceResult,
    workers: int = 1,
    is_hf: bool = True,
) -> tuple[RouteChoice, Plan]:
    """The requested route, or for ``auto`` the one of ``plans`` with the least estimated time.

    The estimate of a route is ceil(tasks / ``workers``) × (one task's estimated time); ties
    are broken by :data:`ROUTE_PREFERENCE`.
    """
    if requested != "auto":
        plan = plans[requested]
        return RouteChoice(requested, plan.n_tasks, "requested", {}), plan
    estimates = {
        r: parallel_seconds(p.n_tasks, workers, task_seconds(r, ref, is_hf))
        for r, p in plans.items()
    }
    order = tuple(r for r in ROUTE_PREFERENCE if r in plans)
    best = cheapest_route(estimates)
    costs = ", ".join(
        f"{r} {plans[r].n_tasks} tasks ≈ {estimates[r]:.1f} s" for r in order if r in plans
    )
    when = "serial time" if workers <= 1 else f"time on {workers} workers"
    reason = (
        f"auto: least estimated {when} ({costs}; from SCF {ref.seconds_scf:.2f} s, "
        f"CPHF {ref.seconds_alpha:.2f} s measured at the reference geometry, gradient "
        f"{ref.seconds_gradient:.2f} s measured "
        f"{'in the optimisation' if ref.gradient_hartree_bohr is None else 'there too'})"
    )
    return RouteChoice(best, plans[best].n_tasks, reason, estimates), plans[best]
