"""``compute_modes``: a bare structure in, a complete :class:`~vibrapol.modeset.ModeSet` out.

Steps: (optional) geometry optimisation → SCF, analytic Hessian and CPHF α at the reference
geometry → harmonic analysis (:mod:`vibrapol.vibrations`) → α at displaced geometries
(independent tasks) → ∂α by central differences.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from vibrapol.engine.displacements import (
    ROUTES,
    DisplacementPlan,
    cartesian_plan,
    central_differences,
    normal_mode_plan,
)
from vibrapol.engine.evaluate import (
    PolarizabilityJob,
    evaluate_polarizability,
    reference_calculation,
)
from vibrapol.engine.scf import (
    SCF_CONV_TOL,
    SCF_CONV_TOL_GRAD,
    EngineInputError,
    MethodSpec,
    build_molecule,
)
from vibrapol.modeset import DEFAULT_MASSES_NOTE, ModeSet, Provenance, default_masses
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
    if z.shape[0] < 2:
        raise EngineInputError("a molecule needs at least two atoms to vibrate")
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
    import pyscf

    structure = as_structure(atoms)
    spec = MethodSpec(method, basis, int(charge), int(multiplicity), bool(cartesian_d))
    if route not in ROUTES:
        raise EngineInputError(f"unknown route {route!r}; choose one of {', '.join(ROUTES)}")
    build_molecule(structure.atomic_numbers, structure.coordinates_ang, spec)  # validate early
    z = structure.atomic_numbers
    masses = default_masses(z) if masses_da is None else np.asarray(masses_da, dtype=float)
    notes: list[str] = []
    coords = structure.coordinates_ang
    if optimize:
        from vibrapol.engine.optimize import optimize_geometry

        opt = optimize_geometry(z, coords, spec)
        coords = opt.coordinates_ang
        notes.append(
            f"geometry optimised with ASE BFGS in {opt.n_steps} steps; "
            f"final max force {opt.max_force_hartree_bohr:.2e} hartree/bohr"
        )
    else:
        notes.append("geometry used as given (not optimised)")
    ref = reference_calculation(z, coords, spec)
    harmonic = harmonic_analysis(ref.hessian_hartree_bohr2, masses, coords)
    plan = make_plan(route, coords, harmonic.modes, masses, step_ang)
    jobs = [PolarizabilityJob(z, x, spec, ref.density) for x in plan.coordinates_ang]
    alphas = np.array([evaluate_polarizability(job) for job in jobs])
    deriv = central_differences(plan, alphas)
    notes.append(
        f"dalpha by central differences, {route} route, step {plan.step_ang} Å, "
        f"{plan.n_tasks} displaced "
        f"geometries; analytic Hessian; CPHF polarizability; SCF conv_tol {SCF_CONV_TOL:g}, "
        f"conv_tol_grad {SCF_CONV_TOL_GRAD:g}"
    )
    provenance = Provenance(
        source_kind="engine",
        program="PySCF",
        program_version=pyscf.__version__,
        method="HF" if spec.is_hf else spec.method.upper(),
        basis=spec.basis,
        masses=DEFAULT_MASSES_NOTE if masses_da is None else "given by the caller",
        notes=tuple(notes),
    )
    return ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=masses,
        dalpha_dx=deriv if route == "cartesian" else None,
        dalpha_dq=deriv if route == "normal-mode" else None,
        polarizability_ang3=ref.alpha_ang3,
        energy_hartree=ref.energy_hartree,
        provenance=provenance,
    )
