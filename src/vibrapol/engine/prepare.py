"""One molecule's part of an engine run: the stages before its tasks and the ModeSet after.

:func:`prepare` optimises the geometry, finds and imposes its point group, runs the reference
calculation (SCF, analytic Hessian, CPHF α, gradient), picks the route and lists the tasks;
:func:`assemble` turns the tasks' results into a :class:`~vibrapol.modeset.ModeSet`.  Between
the two the tasks of any number of molecules can share one executor
(:mod:`vibrapol.engine.batch`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.engine import stages
from vibrapol.engine.autoroute import hessian_needed, pick_route
from vibrapol.engine.checkpoint import CheckpointStore
from vibrapol.engine.dipole import ir_intensities_km_mol, project_dmu
from vibrapol.engine.disproute import HESSIAN_NOTE, DisplacementRoutePlan
from vibrapol.engine.fieldplan import FieldPlan
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.progress import Progress
from vibrapol.engine.routes import (
    Plan,
    RouteChoice,
    derivatives,
    dipole_derivatives,
    hessian_from_tasks,
    make_jobs,
    route_name,
)
from vibrapol.engine.scf import (
    SCF_CONV_TOL,
    SCF_CONV_TOL_GRAD,
    transition_metal_note,
)
from vibrapol.engine.settings import EngineSettings
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance
from vibrapol.units import DEBYE2_PER_AMU_ANG2_TO_KM_MOL
from vibrapol.vibrations import SIGN_CONVENTION_NOTE, HarmonicModes, harmonic_analysis

#: How the engine's IR intensities are obtained (recorded in the provenance).
IR_NOTE = (
    "IR intensities (km/mol): double-harmonic, "
    f"{DEBYE2_PER_AMU_ANG2_TO_KM_MOL:.4f} × |dmu/dQ|² in D² Å⁻² amu⁻¹ "
    "(Wilson, Decius & Cross 1955); dipole about the fixed frame origin (centre-of-mass "
    "intensities for ions)"
)

#: A symmetrized geometry closer than this to the given one is taken as the given one, so that
#: a rerun on an already symmetric geometry finds its checkpointed stages.
SAME_GEOMETRY_ANG = 1e-10


@dataclass(frozen=True, eq=False)
class Prepared:
    """A molecule ready for its tasks."""

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    masses_da: np.ndarray
    default_masses: bool
    optimization: OptimizationResult | None
    reused_optimization: bool
    seconds_optimize: float
    reference: stages.ReferenceResult
    reused_reference: bool
    harmonic: HarmonicModes | None  # None on the displacement route (built in assemble)
    point_group: str
    symmetry_shift_ang: float
    choice: RouteChoice
    plan: Plan
    jobs: list
    keys: list[str]
    labels: tuple[str, ...]


def _impose_symmetry(z, coords, masses, report: Progress):  # noqa: ANN001, ANN202
    from vibrapol.symmetry import find_point_group, symmetrize_coordinates

    group = find_point_group(z, coords, masses)
    if group.order == 1:
        return group, coords, 0.0
    symmetric = symmetrize_coordinates(coords, group)
    shift = float(np.max(np.linalg.norm(symmetric - coords, axis=1)))
    if shift < SAME_GEOMETRY_ANG:  # already symmetric: keep the exact bytes (checkpoint keys)
        return group, coords, shift
    report.stage(f"point group {group.symbol}; geometry symmetrized (max shift {shift:.1e} Å)")
    return group, symmetric, shift


def prepare(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    masses_da: np.ndarray,
    default_masses: bool,
    settings: EngineSettings,
    store: CheckpointStore | None,
    report: Progress,
    workers: int = 1,
) -> Prepared:
    """Optimisation, symmetry, reference calculation, route choice and task list.

    ``workers`` is the number of tasks that will run at once (``auto`` weighs the analytic
    Hessian against the displacement route with it).
    """
    z, spec = atomic_numbers, settings.spec
    coords, opt, seconds_opt, reused_opt = coordinates_ang, None, 0.0, False
    if settings.optimize:
        report.stage(f"optimising the geometry ({spec.label()}, ASE BFGS)")
        opt, seconds_opt, reused_opt = stages.optimized(z, coords, spec, store)
        coords = opt.coordinates_ang
    group, shift = None, 0.0
    if settings.symmetry:
        group, coords, shift = _impose_symmetry(z, coords, masses_da, report)
    report.stage("reference SCF, polarizability and gradient")
    ref, reused_ref = stages.reference(z, coords, spec, store, with_hessian=False)
    family = hessian_needed(settings, coords, masses_da, group, ref, workers)
    harmonic = None
    if family.hessian:
        report.stage("analytic Hessian")
        ref, reused_hessian = stages.add_hessian(z, coords, spec, store, ref)
        reused_ref = reused_ref and reused_hessian
        harmonic = harmonic_analysis(ref.hessian_hartree_bohr2, masses_da, coords)
    modes = None if harmonic is None else harmonic.modes
    choice, plan = pick_route(settings, family, coords, masses_da, group, modes, ref, workers)
    jobs, keys, labels = make_jobs(plan, z, coords, spec, ref)
    return Prepared(
        atomic_numbers=z,
        coordinates_ang=coords,
        masses_da=masses_da,
        default_masses=default_masses,
        optimization=opt,
        reused_optimization=reused_opt,
        seconds_optimize=seconds_opt,
        reference=ref,
        reused_reference=reused_ref,
        harmonic=harmonic,
        point_group="C1" if group is None else group.symbol,
        symmetry_shift_ang=shift,
        choice=choice,
        plan=plan,
        jobs=jobs,
        keys=keys,
        labels=labels,
    )


def assemble(prep: Prepared, results: list[np.ndarray], settings: EngineSettings) -> ModeSet:
    """The ModeSet of a prepared molecule from its tasks' results."""
    deriv = derivatives(prep.plan, results, prep.reference)
    normal = route_name(prep.plan) == "normal-mode"
    ref = prep.reference
    harmonic, asymmetry = prep.harmonic, None
    if harmonic is None:  # displacement route: the Hessian from the tasks' gradients
        hessian, asymmetry = hessian_from_tasks(prep.plan, results)
        harmonic = harmonic_analysis(hessian, prep.masses_da, prep.coordinates_ang)
    dmu = dipole_derivatives(prep.plan, results, ref, settings.spec.charge)
    if not normal:
        dmu = project_dmu(dmu, harmonic.modes, prep.masses_da)
    return ModeSet(
        atomic_numbers=prep.atomic_numbers,
        coordinates_ang=prep.coordinates_ang,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=prep.masses_da,
        dalpha_dx=None if normal else deriv,
        dalpha_dq=deriv if normal else None,
        polarizability_ang3=ref.alpha_ang3,
        energy_hartree=ref.energy_hartree,
        ir_intensity_km_mol=ir_intensities_km_mol(dmu),
        provenance=_provenance(prep, settings, asymmetry),
    )


def _provenance(
    prep: Prepared, settings: EngineSettings, asymmetry: float | None = None
) -> Provenance:
    import pyscf

    spec, plan, opt = settings.spec, prep.plan, prep.optimization
    if opt is None:
        notes = ["geometry used as given (not optimised)"]
    else:
        notes = [
            f"geometry optimised with ASE BFGS in {opt.n_steps} steps; "
            f"final max force {opt.max_force_hartree_bohr:.2e} hartree/bohr"
        ]
    if settings.symmetry:
        notes.append(
            f"point group {prep.point_group}"
            + (
                f"; geometry symmetrized (max shift {prep.symmetry_shift_ang:.1e} Å) and "
                "symmetry used to reduce the tasks"
                if prep.point_group != "C1"
                else ""
            )
        )
    route = route_name(plan)
    hessian = "analytic Hessian"
    if isinstance(plan, DisplacementRoutePlan):
        hessian = (
            f"{HESSIAN_NOTE}, step {plan.step_ang} Å (largest |H - H^T|/2 before: "
            f"{asymmetry:.1e} hartree/bohr²)"
        )
        how = (
            f"dalpha and dmu by central differences of CPHF alpha and the total dipole (PySCF "
            f"dip_moment, frame origin) at the same {plan.n_tasks} displaced geometries"
        )
    elif isinstance(plan, FieldPlan):
        how = (
            f"dalpha/dx from analytic gradients in uniform fields (field route), "
            f"F = {plan.field_au:g} au, {plan.n_tasks} field gradients; dmu/dx from their "
            "first field differences"
        )
    else:
        how = (
            f"dalpha by central differences, {route} route, step {plan.step_ang} Å, "
            f"{plan.n_tasks} displaced geometries; dmu from the total dipole (PySCF "
            "dip_moment, frame origin) at the same geometries"
        )
    notes.append(
        f"{hessian}; CPHF static polarizability; {how}; "
        f"SCF conv_tol {SCF_CONV_TOL:g}, conv_tol_grad {SCF_CONV_TOL_GRAD:g}"
    )
    notes.append(IR_NOTE)
    notes.append(f"route {route}, {prep.choice.n_tasks} tasks; reason: {prep.choice.reason}")
    if spec.cartesian_d:
        notes.append("Cartesian (6d) basis functions")
    metal = transition_metal_note(prep.atomic_numbers, spec)
    if metal is not None:
        notes.append(f"warning: {metal}")
    notes.append(SIGN_CONVENTION_NOTE)
    return Provenance(
        source_kind="engine",
        program="PySCF",
        program_version=pyscf.__version__,
        method="HF" if spec.is_hf else spec.method.upper(),
        basis=spec.basis,
        masses=DEFAULT_MASSES_NOTE if prep.default_masses else "given by the caller",
        notes=tuple(notes),
    )
