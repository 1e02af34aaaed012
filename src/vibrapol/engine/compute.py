"""``compute_modes``: a bare structure in, a complete :class:`~vibrapol.modeset.ModeSet` out.

Steps: (optional) geometry optimisation → point group, imposed on the geometry → SCF, CPHF α
and gradient at the reference geometry → analytic Hessian → harmonic analysis
(:mod:`vibrapol.vibrations`) → the tasks of the chosen route (:mod:`vibrapol.engine.routes`),
independent and checkpointed → ∂α.  Every stage is a job on the one backend;
:func:`run_batch` runs many molecules at once (:mod:`vibrapol.engine.batch`).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from vibrapol.engine.batch import (
    BatchItem,
    BatchOutcome,
    EngineRun,
    Structure,
    as_structure,
    run_batch,
)
from vibrapol.engine.fieldplan import DEFAULT_FIELD_AU
from vibrapol.engine.routes import ROUTES
from vibrapol.engine.scf import DEFAULT_BASIS, DEFAULT_METHOD
from vibrapol.engine.settings import DEFAULT_STEP_ANG, EngineSettings
from vibrapol.modeset import ModeSet

__all__ = [
    "DEFAULT_FIELD_AU",
    "DEFAULT_STEP_ANG",
    "ROUTES",
    "BatchItem",
    "BatchOutcome",
    "EngineRun",
    "EngineSettings",
    "Structure",
    "as_structure",
    "compute_modes",
    "engine_settings",
    "run_batch",
    "run_engine",
]


def engine_settings(
    method: str = DEFAULT_METHOD, basis: str = DEFAULT_BASIS, **options: Any
) -> EngineSettings:
    """Checked :class:`~vibrapol.engine.settings.EngineSettings` (see :func:`compute_modes`)."""
    return EngineSettings(method, basis, **options)


def run_engine(
    atoms: Any,
    method: str = DEFAULT_METHOD,
    basis: str = DEFAULT_BASIS,
    *,
    masses_da: np.ndarray | None = None,
    workers: int | None = 1,
    scheduler: str | None = None,
    checkpoint: str | Path | None = None,
    fresh: bool = False,
    progress: bool | None = None,
    **options: Any,
) -> EngineRun:
    """:func:`compute_modes` with the run's statistics (see there for the parameters).

    ``options`` are the other fields of :class:`~vibrapol.engine.settings.EngineSettings`
    (``charge``, ``multiplicity``, ``optimize``, ``step_ang``, ``route``, ``field_au``,
    ``symmetry``, ``cartesian_d``, ``optimizer``, ``solvent``, ``epsilon``,
    ``epsilon_optical``, ``laser_nm``, ``dynamic``).
    """
    settings = EngineSettings(method, basis, **options)
    if masses_da is None and callable(getattr(atoms, "has", None)) and atoms.has("masses"):
        masses_da = atoms.get_masses()  # masses set on an ase.Atoms (isotopes) are the user's
    item = BatchItem(atoms, "structure", checkpoint, masses_da)
    (outcome,) = run_batch(
        [item],
        settings,
        workers=workers,
        scheduler=scheduler,
        fresh=fresh,
        progress=progress,
        raise_errors=True,
    )
    assert outcome.run is not None
    return outcome.run


def compute_modes(
    atoms: Any,
    method: str = DEFAULT_METHOD,
    basis: str = DEFAULT_BASIS,
    **options: Any,
) -> ModeSet:
    """Frequencies, normal modes and polarizability derivatives of a molecule, from scratch.

    Parameters
    ----------
    atoms : ase.Atoms or (atomic_numbers, coordinates_ang)
        The structure; coordinates in Å.
    method : str
        ``"hf"`` or a DFT functional name (``"b3lyp"``, ``"pbe0"`` …); spin-unrestricted
        (UHF/UKS) when ``multiplicity`` is above 1.  A dispersion suffix adds D3/D4
        (``"b3lyp-d3bj"``, ``"b3lyp-d4"``; :mod:`vibrapol.engine.dispersion`).
    basis : str
        Basis-set name PySCF knows; the ECP of a def2 (or other ECP) basis set is used for the
        atoms it covers (:mod:`vibrapol.engine.ecp`).
    **options
        The other fields of :class:`~vibrapol.engine.settings.EngineSettings` and the run's
        options, listed under Other Parameters.

    Returns
    -------
    ModeSet
        With frequencies, modes, ``dalpha_dx`` (Cartesian and field routes) or ``dalpha_dq``
        (normal-mode route), α at the reference geometry, the SCF energy and provenance.

    Other Parameters
    ----------------
    charge, multiplicity : int
        Total charge and spin multiplicity 2S+1.  Above 1 the references are UHF/UKS; ⟨S²⟩ is
        reported (provenance, :class:`~vibrapol.errors.OpenShellWarning`) and a badly
        spin-contaminated reference is refused (:mod:`vibrapol.engine.openshell`).
    optimize : bool
        Minimise the energy first (see :mod:`vibrapol.engine.optimize`).
    optimizer : {"internal", "cartesian-bfgs"}
        ``internal`` (default): geomeTRIC in internal coordinates, loose SCF on the early
        steps; ``cartesian-bfgs``: ASE's BFGS, the optimiser of earlier versions.  Both stop at
        a largest atomic force of 1e-5 hartree/bohr; the optimiser, its steps and gradients are
        recorded in the provenance.
    step_ang : float
        Central-difference step h in Å.
    route : {"cartesian", "normal-mode", "field", "displacement", "auto"}
        ``cartesian``: α at displaced Cartesian coordinates (6N tasks, fewer with symmetry;
        gives ∂α/∂x); ``normal-mode`` (or ``normal``): α along each normal mode (2·n_modes
        tasks; gives ∂α/∂Q only); ``field``: analytic gradients in uniform fields (12 tasks
        or fewer with symmetry, for any molecule size, and the zero field after an
        optimisation; gives ∂α/∂x); ``displacement``:
        gradient, dipole and α at the Cartesian displaced geometries, the Hessian from the
        gradients instead of the analytic Hessian (:mod:`vibrapol.engine.disproute`);
        ``auto``: the route with the least estimated time on the run's workers
        (:mod:`vibrapol.engine.autoroute`, :mod:`vibrapol.engine.routes`).  The route taken,
        its task count and the reason are recorded in the provenance.
    field_au : float
        Field strength of the field route, atomic units.
    symmetry : bool
        Find the point group (:func:`vibrapol.symmetry.find_point_group`), make the geometry
        exactly symmetric and compute only symmetry-inequivalent tasks (C1: all of them).
    masses_da : ndarray (N,), optional
        Atomic masses in Da; default: the masses set on an ``ase.Atoms`` with ``set_masses``
        (recorded as given), else the most abundant isotopes (not ASE's default standard
        atomic weights).
    cartesian_d : bool
        Cartesian (6d) instead of spherical basis functions.
    solvent : str, optional
        Implicit solvent (IEF-PCM) by name, e.g. ``"water"``
        (:mod:`vibrapol.engine.solvent`); not with ``route="field"``.
    epsilon, epsilon_optical : float, optional
        Static and optical dielectric constants of a solvent not named (both together).
    laser_nm : float, optional
        Laser wavelength in nm: the lowest singlet excitations of the reference are computed
        (TDHF/TDDFT); a laser within
        :data:`~vibrapol.engine.dynamic.PRE_RESONANCE_MARGIN_EV` below the first gives a
        :class:`~vibrapol.engine.dynamic.PreResonanceWarning`, one at or above it is refused.
    dynamic : bool
        Use α(−ω; ω) at ``laser_nm`` (linear response) at the reference and every displaced
        geometry instead of the static α; Cartesian and normal-mode routes only (``auto``
        leaves out the field route).
    workers : int or None
        Local worker processes for every stage and task (optimisation, reference SCF, Hessian,
        displaced geometries or fields); 1 (the default here) runs them in this process.  None
        (the command line's default) chooses: one per core, unless the whole run is estimated
        to take less than
        :data:`~vibrapol.engine.executors.SERIAL_BELOW_S` serially, when starting a pool would
        cost more than it saves.  Scripts that use more than one need the
        ``if __name__ == "__main__":`` guard.
    scheduler : str, optional
        Address of a running Dask distributed scheduler; overrides ``workers``.
    checkpoint : str or Path, optional
        SQLite file of finished tasks; a rerun with the same file computes only what is
        missing.
    fresh : bool
        Delete the checkpoint file first.
    progress : bool or None
        Progress on stderr; None: only when stderr is a terminal.

    Raises
    ------
    EngineInputError
        Unknown method, basis, element, route, an electron count that does not fit the
        multiplicity, or a badly spin-contaminated open-shell reference.
    EngineConvergenceError
        An SCF or the optimisation did not converge.
    """
    return run_engine(atoms, method, basis, **options).modes
