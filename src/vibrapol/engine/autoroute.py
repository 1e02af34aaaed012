"""``--route auto``, first step: the analytic Hessian, or the displacement route.

The Hessian routes (``cartesian``, ``normal-mode``, ``field``) need the analytic Hessian,
which runs as one calculation before their tasks; the displacement route
(:mod:`vibrapol.engine.disproute`) needs none but has more tasks (the Cartesian displaced
geometries, each an SCF + gradient + dipole + CPHF).  With W workers the model is

    wall(Hessian routes)  ≈ T_hessian + ceil(n_tasks / W) · t_task   (best of the three)
    wall(displacement)    ≈ ceil(n_tasks / W) · t_task

with t_task from the reference stage's measured SCF, CPHF and gradient times
(:func:`vibrapol.engine.routes.task_seconds`).  T_hessian must be known before it is computed
(else choosing the displacement route would save nothing), so it is estimated from the same
measured times:

    T_hessian ≈ a · n^p · (T_scf + T_cphf + T_gradient),

n the number of basis functions (the analytic Hessian solves 3N coupled-perturbed equations
where the polarizability solves 3, and its second-derivative integrals weigh more with larger
and heavier atoms: the number of atoms alone missed CCl4 by 2.4×).  The factors come from
``bench/hessian_cost.py`` (see :data:`HESSIAN_RATIO`).  When the Hessian is already at
hand (from a checkpoint) its cost is taken as zero.  Ties go to the Hessian routes.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.engine.evaluate import ReferenceResult
from vibrapol.engine.fieldplan import FieldPlan, with_zero_field_task
from vibrapol.engine.routes import (
    HESSIAN_ROUTES,
    Plan,
    RouteChoice,
    build_plan,
    cheapest_route,
    choose_route,
    parallel_seconds,
    task_seconds,
)

if TYPE_CHECKING:
    from vibrapol.engine.settings import EngineSettings
    from vibrapol.symmetry import PointGroup

#: (a, p) of T_hessian / (T_scf + T_cphf + T_gradient) ≈ a · n^p, n basis functions, for HF
#: and for DFT: least-squares fits in log–log to our own measurements with
#: ``bench/hessian_cost.py`` (PySCF 2.14, 6-31G*, 2 threads on the project's shared, heavily
#: loaded 2-core machine, 2026-12-05; ASE geometries): HF ratios 1.2 (H2O, 18 functions),
#: 5.0 (CH3OH, 36), 8.8 (CH3CH2OH, 54), 16.8 (C6H6, 96), 10.1 (CCl4, 86), fit within
#: 0.79–1.36 of each; B3LYP 3.0 (H2O), 2.8 (CH3OH), 4.3 (CH3CH2OH), 3.1 (C6H6), fit within
#: 0.77–1.15 (with B3LYP the grid work of the SCF and CPHF grows as fast as the Hessian).
#: Table in docs/engine-routes.md.
HESSIAN_RATIO = {"hf": (0.0231, 1.43), "dft": (2.39, 0.082)}


def estimated_hessian_seconds(ref: ReferenceResult, is_hf: bool) -> float:
    """Estimated wall time of the analytic Hessian from the reference stage's measured times.

    The number of basis functions is that of the reference density.
    """
    a, p = HESSIAN_RATIO["hf" if is_hf else "dft"]
    point = ref.seconds_scf + ref.seconds_alpha + ref.seconds_gradient
    return a * float(np.shape(ref.density)[0]) ** p * point


def normal_mode_tasks(coordinates_ang: np.ndarray) -> int:
    """Tasks of the normal-mode route, 2 (3N − 6), or 2 (3N − 5) for a linear molecule."""
    x = np.asarray(coordinates_ang, dtype=float)
    centred = x - x.mean(axis=0)
    linear = np.linalg.matrix_rank(centred, tol=1e-3) <= 1
    return 2 * (3 * len(x) - (5 if linear else 6))


@dataclass(frozen=True)
class FamilyChoice:
    """Whether the analytic Hessian is computed, and why.

    Attributes
    ----------
    hessian : bool
        True: a Hessian route; False: the displacement route.
    reason : str
    estimates_s : dict
        Estimated wall seconds: ``hessian`` (the analytic Hessian alone), each Hessian route
        with the Hessian included, and ``displacement``.
    """

    hessian: bool
    reason: str
    estimates_s: dict


def choose_family(
    plans: dict[str, Plan],
    n_normal_tasks: int,
    ref: ReferenceResult,
    is_hf: bool,
    workers: int,
) -> FamilyChoice:
    """Analytic Hessian + the best Hessian route, or the displacement route (module notes).

    ``plans`` holds the ``cartesian``, ``field`` and ``displacement`` plans (they need no
    Hessian); the normal-mode route enters with its task count ``n_normal_tasks``.
    """
    w = max(int(workers), 1)
    have = ref.hessian_hartree_bohr2 is not None
    t_hess = 0.0 if have else estimated_hessian_seconds(ref, is_hf)
    counts: dict[str, int] = {
        r: plans[r].n_tasks for r in ("cartesian", "field", "analytic") if r in plans
    }
    counts["normal-mode"] = n_normal_tasks
    walls = {
        r: t_hess + parallel_seconds(n, w, task_seconds(r, ref, is_hf)) for r, n in counts.items()
    }
    n_disp = plans["displacement"].n_tasks
    disp = parallel_seconds(n_disp, w, task_seconds("displacement", ref))
    best = min(walls, key=lambda r: walls[r])
    use_hessian = walls[best] <= disp
    if have:
        hess_text = "analytic Hessian already computed (checkpoint), cost 0"
    else:
        a, p = HESSIAN_RATIO["hf" if is_hf else "dft"]
        hess_text = (
            f"analytic Hessian estimated {t_hess:.1f} s = {a:g} × n^{p:g} × (SCF + CPHF + "
            f"gradient), n = {np.shape(ref.density)[0]} basis functions"
        )
    reason = (
        f"auto on {w} worker(s): wall ≈ T_hessian + ceil(tasks/W)·t_task for the Hessian "
        f"routes vs ceil(tasks/W)·t_task for the displacement route; {hess_text}; best "
        f"Hessian route {best} {counts[best]} tasks ≈ {walls[best]:.1f} s in all; displacement "
        f"{n_disp} tasks ≈ {disp:.1f} s; "
        + ("the Hessian routes are not slower" if use_hessian else "displacement is faster")
    )
    estimates: dict[str, float] = {"hessian": t_hess, **walls, "displacement": disp}
    return FamilyChoice(use_hessian, reason, estimates)


def combined_choice(family: FamilyChoice, route: RouteChoice) -> RouteChoice:
    """The final :class:`RouteChoice` of ``auto``: the family's reason, then the route's."""
    return RouteChoice(
        route.route,
        route.n_tasks,
        f"{family.reason}; then {route.reason}",
        {**family.estimates_s, **{f"{r} tasks": s for r, s in route.estimates_s.items()}},
    )


def hessian_routes_allowed(
    settings: EngineSettings, atomic_numbers: np.ndarray | None = None
) -> tuple[str, ...]:
    """The Hessian routes ``auto`` may take.

    No field route in a solvent or with α(ω); the analytic route only where it is implemented
    (:func:`~vibrapol.engine.analyticroute.analytic_unsupported`; with ``atomic_numbers``, not
    when the basis set puts an ECP on one of them).
    """
    from vibrapol.engine.analyticroute import analytic_unsupported
    from vibrapol.engine.solvent import allowed_routes

    routes = allowed_routes(HESSIAN_ROUTES, settings.spec.solvent)
    if settings.dynamic:  # the field route gives the static α only
        routes = tuple(r for r in routes if r != "field")
    if analytic_unsupported(settings.spec, settings.dynamic, atomic_numbers) is not None:
        routes = tuple(r for r in routes if r != "analytic")
    return routes


def displacement_excluded(settings: EngineSettings) -> str | None:
    """Why ``auto`` must not take the displacement route here (None: it may)."""
    if settings.dynamic:
        return "its tasks compute the static polarizability only (--dynamic asked for α(ω))"
    if settings.spec.solvent is not None:
        return "it is not checked in a solvent"
    return None


def hessian_needed(
    settings: EngineSettings,
    coordinates_ang: np.ndarray,
    masses_da: np.ndarray,
    group: PointGroup | None,
    ref: ReferenceResult,
    workers: int,
    atomic_numbers: np.ndarray | None = None,
) -> FamilyChoice:
    """Whether the run computes the analytic Hessian: requested, or :func:`choose_family`."""
    if settings.route != "auto":
        return FamilyChoice(settings.route in HESSIAN_ROUTES, "requested", {})
    excluded = displacement_excluded(settings)
    if excluded is not None:
        return FamilyChoice(True, f"auto: displacement route not considered: {excluded}", {})
    routes = hessian_routes_allowed(settings, atomic_numbers)
    plans = {
        r: _plan(r, settings, coordinates_ang, masses_da, group, None, ref)
        for r in (*(r for r in routes if r != "normal-mode"), "displacement")
    }
    n_normal = normal_mode_tasks(coordinates_ang)
    return choose_family(plans, n_normal, ref, settings.spec.is_hf, workers)


def normal_mode_estimate(
    coordinates_ang: np.ndarray, ref: ReferenceResult, workers: int
) -> tuple[int, float]:
    """Tasks and estimated wall seconds of the normal-mode route, known before the Hessian.

    Its plan has two tasks per vibrational mode whatever the modes turn out to be, so the
    estimate is the one :func:`~vibrapol.engine.routes.choose_route` makes after the Hessian.
    """
    n = normal_mode_tasks(coordinates_ang)
    return n, parallel_seconds(n, workers, task_seconds("normal-mode", ref))


def modes_needed_to_choose(
    settings: EngineSettings,
    coordinates_ang: np.ndarray,
    masses_da: np.ndarray,
    group: PointGroup | None,
    ref: ReferenceResult,
    workers: int,
    atomic_numbers: np.ndarray | None = None,
) -> bool:
    """Whether ``auto`` must wait for the Hessian's modes before it lists its tasks.

    Only when the normal-mode route (which displaces along the modes) would be the cheapest of
    the Hessian routes.  Otherwise the choice made now is the one that would be made after the
    Hessian (same estimates, same ties), and its tasks can run beside the Hessian.
    """
    routes = hessian_routes_allowed(settings, atomic_numbers)
    if "normal-mode" not in routes:
        return False
    w = max(int(workers), 1)
    estimates = {
        r: parallel_seconds(
            _plan(r, settings, coordinates_ang, masses_da, group, None, ref).n_tasks,
            w,
            task_seconds(r, ref, settings.spec.is_hf),
        )
        for r in routes
        if r != "normal-mode"
    }
    estimates["normal-mode"] = normal_mode_estimate(coordinates_ang, ref, w)[1]
    return cheapest_route(estimates) == "normal-mode"


def pick_route(
    settings: EngineSettings,
    family: FamilyChoice,
    coordinates_ang: np.ndarray,
    masses_da: np.ndarray,
    group: PointGroup | None,
    modes: np.ndarray | None,
    ref: ReferenceResult,
    workers: int,
    atomic_numbers: np.ndarray | None = None,
) -> tuple[RouteChoice, Plan]:
    """The route and its plan once the Hessian question is settled (``modes``: its modes)."""
    if not family.hessian:
        plan = _plan("displacement", settings, coordinates_ang, masses_da, group, None, ref)
        estimates = family.estimates_s
        return RouteChoice("displacement", plan.n_tasks, family.reason, estimates), plan
    allowed = hessian_routes_allowed(settings, atomic_numbers)
    wanted = allowed if settings.route == "auto" else (settings.route,)
    if modes is None:  # before the Hessian: only the routes that need no modes
        wanted = tuple(r for r in wanted if r != "normal-mode")
    plans = {r: _plan(r, settings, coordinates_ang, masses_da, group, modes, ref) for r in wanted}
    choice, plan = choose_route(settings.route, plans, ref, workers, settings.spec.is_hf)
    if settings.route == "auto" and modes is None and "normal-mode" in allowed:
        n, t = normal_mode_estimate(coordinates_ang, ref, workers)
        note = (
            f"; normal-mode {n} tasks ≈ {t:.1f} s is not cheaper, so the tasks were listed "
            "before the Hessian and run beside it"
        )
        choice = RouteChoice(choice.route, choice.n_tasks, choice.reason + note, choice.estimates_s)
    if settings.route == "auto":
        choice = combined_choice(family, choice)
    return choice, plan


def _plan(route, settings, coords, masses, group, modes, ref):  # noqa: ANN001, ANN202
    plan = build_plan(
        route,
        coords,
        modes,
        masses,
        settings.step_ang,
        settings.field_au,
        group,
        # PCM surfaces are Lebedev spheres fixed to the axes, like the DFT grid
        grid_free=settings.spec.is_hf and settings.spec.solvent is None,
    )
    if isinstance(plan, FieldPlan) and ref.gradient_hartree_bohr is None:
        return with_zero_field_task(plan)  # the reference stage computed no gradient
    return plan
