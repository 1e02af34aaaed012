"""One molecule's run in the client: its state between stages, route choice, its ModeSet.

The stages themselves (optimisation, reference SCF, Hessian, derivative tasks) run as jobs on
the backend (:mod:`vibrapol.engine.stages`, :mod:`vibrapol.engine.batch`); between them the
client does the cheap steps kept here: it imposes the point group on the geometry, chooses the
route and lists its tasks (:func:`plan_route`), and turns the results into a
:class:`~vibrapol.modeset.ModeSet` (:func:`assemble`).

When the route is chosen: a requested route whose tasks do not need the normal modes
(:data:`ROUTES_WITHOUT_MODES`) is fixed right after the reference SCF, so its tasks run
alongside the Hessian, and so is ``auto``'s choice unless the normal-mode route (which needs the
modes) would be its cheapest; the normal-mode route waits for the Hessian.  A route in
:data:`HESSIAN_FREE_ROUTES` (the displacement route) skips the Hessian stage altogether.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.engine.analyticroute import AnalyticPlan
from vibrapol.engine.autoroute import (
    FamilyChoice,
    hessian_needed,
    modes_needed_to_choose,
    pick_route,
)
from vibrapol.engine.checkpoint import CheckpointStore
from vibrapol.engine.dipole import ir_intensities_km_mol, project_dmu
from vibrapol.engine.disproute import HESSIAN_NOTE, DisplacementRoutePlan
from vibrapol.engine.evaluate import ReferenceResult
from vibrapol.engine.field_response import ANALYTIC_RESPONSE_TOL
from vibrapol.engine.fieldgrad import FIELD_SCF_CONV_TOL, FIELD_SCF_CONV_TOL_GRAD
from vibrapol.engine.fieldplan import FieldPlan
from vibrapol.engine.hessian import nuclear_solver_note
from vibrapol.engine.laser import LaserReference
from vibrapol.engine.openshell import check_symmetric_solution, reference_spin_note
from vibrapol.engine.optimize import OptimizationResult
from vibrapol.engine.polarizability import CPHF_TOL
from vibrapol.engine.progress import Progress
from vibrapol.engine.routes import (
    Plan,
    RouteChoice,
    derivatives,
    dipole_derivatives,
    grid_operations,
    hessian_from_tasks,
    make_jobs,
    route_name,
)
from vibrapol.engine.scf import (
    SCF_CONV_TOL,
    SCF_CONV_TOL_GRAD,
    build_molecule,
    integral_notes,
    transition_metal_note,
)
from vibrapol.engine.settings import EngineSettings
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance
from vibrapol.units import DEBYE2_PER_AMU_ANG2_TO_KM_MOL
from vibrapol.vibrations import SIGN_CONVENTION_NOTE, HarmonicModes, harmonic_analysis

if TYPE_CHECKING:
    from vibrapol.symmetry import PointGroup

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

#: Requested routes whose task list needs no normal modes: chosen after the reference SCF.
ROUTES_WITHOUT_MODES = frozenset({"cartesian", "field", "analytic"})

#: Routes whose own tasks give the Hessian: their molecules skip the Hessian stage.
HESSIAN_FREE_ROUTES: frozenset[str] = frozenset({"displacement"})


@dataclass(eq=False)
class Molecule:
    """One molecule of a run, filled in as its stages finish.

    Attributes
    ----------
    name : str
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
        The input geometry; after the optimisation the optimised one; after symmetry the
        symmetrized one (the geometry of every later stage).
    masses_da : ndarray (N,)
    default_masses : bool
    store : CheckpointStore or None
    optimization : OptimizationResult or None
    seconds_optimize : float
    reused : set of str
        Stages found in the checkpoint (``optimisation``, ``reference SCF``, ``Hessian``).
    group : PointGroup or None
    point_group : str
    symmetry_shift_ang : float
    reference : ReferenceResult or None
        After the SCF stage; its Hessian after the Hessian stage.
    harmonic : HarmonicModes or None
    choice, plan
        The route, once chosen.
    jobs, keys, labels
        Its derivative tasks.
    tensor_with_hessian : bool
        The analytic route's derivatives come from the Hessian stage (2n+1 rule), not from
        its own task.
    earlier_hessian : bool
        The Hessian was taken from an earlier vibrapol's one-row reference checkpoint.
    """

    name: str
    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    masses_da: np.ndarray
    default_masses: bool
    store: CheckpointStore | None
    optimization: OptimizationResult | None = None
    seconds_optimize: float = 0.0
    reused: set[str] = field(default_factory=set)
    group: PointGroup | None = None
    point_group: str = "C1"
    symmetry_shift_ang: float = 0.0
    reference: ReferenceResult | None = None
    harmonic: HarmonicModes | None = None
    choice: RouteChoice | None = None
    plan: Plan | None = None
    jobs: list = field(default_factory=list)
    keys: list[str] = field(default_factory=list)
    labels: tuple[str, ...] = ()
    tensor_with_hessian: bool = False
    earlier_hessian: bool = False
    spin_note: str | None = None
    laser: LaserReference | None = None
    family: FamilyChoice | None = None

    def add_hessian(self, reference: ReferenceResult) -> None:
        """Take the completed reference and do the harmonic analysis."""
        assert reference.hessian_hartree_bohr2 is not None
        self.reference = reference
        self.harmonic = harmonic_analysis(
            reference.hessian_hartree_bohr2, self.masses_da, self.coordinates_ang
        )

    @property
    def needs_hessian(self) -> bool:
        """False when the chosen route gives the Hessian itself."""
        return self.choice is None or self.choice.route not in HESSIAN_FREE_ROUTES


def impose_symmetry(m: Molecule, report: Progress, prefix: str = "") -> None:
    """Find the point group of ``m``'s geometry and make the geometry exactly symmetric."""
    from vibrapol.symmetry import find_point_group, symmetrize_coordinates

    coords = m.coordinates_ang
    group = find_point_group(m.atomic_numbers, coords, m.masses_da)
    m.group, m.point_group = group, group.symbol
    if group.order == 1:
        return
    symmetric = symmetrize_coordinates(coords, group)
    shift = float(np.max(np.linalg.norm(symmetric - coords, axis=1)))
    m.symmetry_shift_ang = shift
    if shift < SAME_GEOMETRY_ANG:  # already symmetric: keep the exact bytes (checkpoint keys)
        return
    report.stage(
        f"{prefix}point group {group.symbol}; geometry symmetrized (max shift {shift:.1e} Å)"
    )
    m.coordinates_ang = symmetric


def check_spin(m: Molecule, settings: EngineSettings) -> str | None:
    """⟨S²⟩ of an open-shell reference (its sentence, kept in ``m``; None for a closed shell).

    Raises :class:`~vibrapol.engine.scf.EngineInputError` (via
    :func:`~vibrapol.engine.openshell.reference_spin_note`) when the spin contamination makes
    the result meaningless.
    """
    assert m.reference is not None
    m.spin_note = reference_spin_note(
        m.atomic_numbers, m.coordinates_ang, settings.spec, m.reference.density
    )
    return m.spin_note


def check_open_shell_symmetry(m: Molecule, settings: EngineSettings) -> None:
    """Refuse an open-shell solution that breaks the symmetry the tasks use (after the Hessian)."""
    spec, group, ref = settings.spec, m.group, m.reference
    if not spec.is_unrestricted or group is None or group.order == 1 or ref is None:
        return
    if ref.hessian_hartree_bohr2 is None:
        return
    ops, perms = group.operations, group.permutations
    if not spec.is_hf or spec.solvent is not None:
        ops, perms = grid_operations(ops, perms)
    check_symmetric_solution(
        ops, perms, ref.hessian_hartree_bohr2, ref.alpha_ang3, spec, group.symbol
    )


def plan_route(m: Molecule, settings: EngineSettings, workers: int = 1) -> bool:
    """Choose ``m``'s route and list its tasks if that can be done now; True when done.

    Right after the reference SCF, ``auto`` first weighs the analytic Hessian against the
    displacement route on ``workers`` workers (:func:`~vibrapol.engine.autoroute.hessian_needed`,
    kept in ``m.family``); the displacement route is planned at once (it needs no Hessian).
    Of the Hessian routes, a requested one of :data:`ROUTES_WITHOUT_MODES` is planned before
    the Hessian (its tasks run beside it), and so is ``auto`` unless the normal-mode route would
    be its cheapest (:func:`~vibrapol.engine.autoroute.modes_needed_to_choose`); the
    normal-mode route waits for the modes.
    """
    assert m.reference is not None
    group = m.group if settings.symmetry else None
    if m.family is None:
        m.family = hessian_needed(
            settings, m.coordinates_ang, m.masses_da, group, m.reference, workers, m.atomic_numbers
        )
    if m.family.hessian and m.harmonic is None:
        if settings.route == "auto":
            wait = modes_needed_to_choose(
                settings,
                m.coordinates_ang,
                m.masses_da,
                group,
                m.reference,
                workers,
                m.atomic_numbers,
            )
        else:
            wait = settings.route not in ROUTES_WITHOUT_MODES
        if wait:
            return False
    modes = None if m.harmonic is None else m.harmonic.modes
    m.choice, m.plan = pick_route(
        settings,
        m.family,
        m.coordinates_ang,
        m.masses_da,
        group,
        modes,
        m.reference,
        workers,
        m.atomic_numbers,
    )
    m.jobs, m.keys, m.labels = make_jobs(
        m.plan,
        m.atomic_numbers,
        m.coordinates_ang,
        settings.spec,
        m.reference,
        settings.omega_au,
    )
    return True


def assemble(prep: Molecule, results: list[np.ndarray], settings: EngineSettings) -> ModeSet:
    """The ModeSet of a molecule whose stages and tasks have all finished."""
    assert prep.plan is not None and prep.reference is not None
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
        polarizability_ang3=ref.alpha_ang3
        if prep.laser is None or prep.laser.alpha_ang3 is None
        else prep.laser.alpha_ang3,
        energy_hartree=ref.energy_hartree,
        ir_intensity_km_mol=ir_intensities_km_mol(dmu),
        provenance=_provenance(prep, settings, asymmetry),
    )


def _provenance(
    prep: Molecule, settings: EngineSettings, asymmetry: float | None = None
) -> Provenance:
    import pyscf

    assert prep.plan is not None and prep.choice is not None

    spec, plan, opt = settings.spec, prep.plan, prep.optimization
    if opt is None:
        moved = prep.symmetry_shift_ang >= SAME_GEOMETRY_ANG  # symmetrized: not as given
        notes = [f"geometry {'symmetrized, ' if moved else 'used as given, '}not optimised"]
    else:
        notes = [opt.describe()]
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
    if settings.dynamic:
        solver = "linear-response equations at the laser frequency, residual ≤ 1e-5"
    elif settings.spec.is_unrestricted:
        solver = "PySCF ucphf.solve"
    else:
        solver = f"preconditioned conjugate gradients to a residual of {CPHF_TOL:g}"
    hessian = f"analytic Hessian ({nuclear_solver_note(settings.spec, prep.earlier_hessian)})"
    if isinstance(plan, DisplacementRoutePlan):
        hessian = (
            f"{HESSIAN_NOTE}, step {plan.step_ang} Å (largest |H - H^T|/2 before: "
            f"{asymmetry:.1e} hartree/bohr²)"
        )
        how = (
            f"dalpha and dmu by central differences of alpha ({solver}) and the total "
            f"dipole (PySCF dip_moment, frame origin) at the same {plan.n_tasks} displaced "
            "geometries"
        )
    elif isinstance(plan, AnalyticPlan) and prep.tensor_with_hessian:
        how = (
            "dalpha/dx and dmu/dx analytically (closed-shell RHF/RKS: field derivatives of the "
            "analytic gradient by the 2n+1 rule, from the first-order field responses "
            f"(residual {ANALYTIC_RESPONSE_TOL:g}) and the Hessian's nuclear responses; for "
            "DFT with the XC kernel terms and their grid response, except in the "
            "orbital-relaxation term, which has none, as the Hessian; docs/analytic-raman.md)"
        )
    elif isinstance(plan, AnalyticPlan):
        how = (
            "dalpha/dx and dmu/dx analytically (closed-shell RHF/RKS: field derivatives of the "
            "analytic gradient, for DFT with the XC kernel terms and the grid response, from "
            "first- and second-order coupled-perturbed field responses, docs/analytic-raman.md)"
        )
    elif isinstance(plan, FieldPlan):
        how = (
            f"dalpha/dx from analytic gradients in uniform fields (field route), "
            f"F = {plan.field_au:g} au, {plan.n_tasks} field gradients"
            f"{' (the zero-field one among them)' if plan.zero_field_task else ''}; dmu/dx "
            "from their first field differences"
        )
    else:
        how = (
            f"dalpha by central differences, {route} route, step {plan.step_ang} Å, "
            f"{plan.n_tasks} displaced geometries (alpha: {solver}); dmu from the total "
            "dipole (PySCF dip_moment, frame origin) at the same geometries"
        )
    alpha = "CPHF static polarizability"
    if prep.laser is not None and prep.laser.dynamic:
        alpha = f"dynamic polarizability at {prep.laser.laser_nm:g} nm (linear response)"
    # the reference SCF has the field route's criteria where it computed the zero-field
    # gradient (stages.reference_key)
    tight = prep.reference is not None and prep.reference.gradient_hartree_bohr is not None
    reference = (
        f" (reference SCF {FIELD_SCF_CONV_TOL:g}, {FIELD_SCF_CONV_TOL_GRAD:g})" if tight else ""
    )
    notes.append(
        f"{hessian}; {alpha}; {how}; "
        f"SCF conv_tol {SCF_CONV_TOL:g}, conv_tol_grad {SCF_CONV_TOL_GRAD:g}{reference}"
    )
    notes.append(IR_NOTE)
    if prep.laser is not None:
        notes += prep.laser.notes()
    notes.append(f"route {route}, {prep.choice.n_tasks} tasks; reason: {prep.choice.reason}")
    if spec.cartesian_d:
        notes.append("Cartesian (6d) basis functions")
    if prep.spin_note is not None:
        notes.append(prep.spin_note)
    notes.extend(_model_notes(prep, settings))
    notes.extend(
        integral_notes(build_molecule(prep.atomic_numbers, prep.coordinates_ang, spec), spec)
    )
    metal = transition_metal_note(prep.atomic_numbers, spec)
    if metal is not None:
        notes.append(f"warning: {metal}")
    notes.append(SIGN_CONVENTION_NOTE)
    return Provenance(
        source_kind="engine",
        program="PySCF",
        program_version=pyscf.__version__,
        method=("U" if spec.is_unrestricted else "") + spec.method_label,
        basis=spec.basis,
        masses=DEFAULT_MASSES_NOTE if prep.default_masses else "given by the caller",
        notes=tuple(notes),
    )


def _model_notes(prep: Molecule, settings: EngineSettings) -> list[str]:
    """Provenance lines of the solvent, the dispersion correction and the ECPs used."""
    from vibrapol.engine.dispersion import dispersion_note
    from vibrapol.engine.ecp import ecp_note
    from vibrapol.engine.solvent import solvent_note

    spec = settings.spec
    notes = []
    if spec.solvent is not None:
        notes.append(solvent_note(spec.solvent))
        if settings.route == "auto":
            notes.append("field route not considered by auto: it cannot run with a solvent")
    for note in (dispersion_note(spec.method), ecp_note(spec.basis, prep.atomic_numbers)):
        if note is not None:
            notes.append(note)
    return notes
