"""Geometry optimisation with ASE's BFGS optimiser driven by PySCF energies and gradients.

Why this optimiser: ASE is already a dependency, its optimisers are maintained and widely
used, and BFGS in Cartesian coordinates converges the small molecules this engine is meant
for in a handful of steps.  Cartesian BFGS with an exact gradient keeps the point-group
symmetry of the starting structure (the forces have that symmetry and so does every update),
which matters for clean depolarization ratios.  Convergence is on the largest atomic force,
set tighter than the usual "tight" criteria of quantum-chemistry programs so that the Hessian
is taken at a stationary point and the projected frequencies carry no spurious imaginary
modes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.engine.scf import EngineConvergenceError, MethodSpec, build_molecule, build_scf
from vibrapol.units import BOHR_ANG, HARTREE_BOHR2_TO_EV_ANG2

#: Convergence: largest Cartesian force component norm per atom, hartree bohr⁻¹ (≈ 5e-4 eV Å⁻¹).
FMAX_HARTREE_BOHR = 1e-5
#: Give up after this many optimisation steps.
MAX_STEPS = 200
#: Largest step of one BFGS update, Å.
MAX_STEP_ANG = 0.1

_HARTREE_EV = HARTREE_BOHR2_TO_EV_ANG2 * BOHR_ANG**2


@dataclass(frozen=True, eq=False)
class OptimizationResult:
    """Result of :func:`optimize_geometry`.

    Attributes
    ----------
    coordinates_ang : ndarray (N, 3)
    energy_hartree : float
    max_force_hartree_bohr : float
        Largest per-atom force norm at the final geometry.
    n_steps : int
        Optimiser steps taken (0 when the start was already converged).
    n_gradients : int
        Energy + gradient evaluations.
    """

    coordinates_ang: np.ndarray
    energy_hartree: float
    max_force_hartree_bohr: float
    n_steps: int
    n_gradients: int


def _calculator(atomic_numbers: np.ndarray, spec: MethodSpec):
    from ase.calculators.calculator import Calculator, all_changes

    class _PySCFCalculator(Calculator):
        implemented_properties = ["energy", "forces"]

        def __init__(self) -> None:
            super().__init__()
            self.density = None
            self.n_gradients = 0

        def calculate(self, atoms=None, properties=("energy",), system_changes=all_changes):
            super().calculate(atoms, properties, system_changes)
            mol = build_molecule(atomic_numbers, self.atoms.get_positions(), spec)
            mf = build_scf(mol, spec)
            mf.kernel(dm0=self.density)
            if not mf.converged:
                raise EngineConvergenceError(
                    f"{spec.label()} SCF did not converge during the optimisation"
                )
            self.density = mf.make_rdm1()
            grad = mf.nuc_grad_method()
            grad.verbose = 0
            g = np.asarray(grad.kernel())
            self.n_gradients += 1
            self.results = {
                "energy": float(mf.e_tot) * _HARTREE_EV,
                "forces": -g * _HARTREE_EV / BOHR_ANG,
            }

    return _PySCFCalculator()


def optimize_geometry(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    *,
    fmax_hartree_bohr: float = FMAX_HARTREE_BOHR,
    max_steps: int = MAX_STEPS,
) -> OptimizationResult:
    """Minimise the SCF energy with :class:`ase.optimize.BFGS` (no log, no files written).

    Raises
    ------
    EngineConvergenceError
        When the largest force is still above ``fmax_hartree_bohr`` after ``max_steps``.
    """
    from ase import Atoms
    from ase.optimize import BFGS

    atoms = Atoms(
        numbers=np.asarray(atomic_numbers, dtype=int),
        positions=np.asarray(coordinates_ang, dtype=float),
    )
    calc = _calculator(atomic_numbers, spec)
    atoms.calc = calc
    fmax_ev_ang = fmax_hartree_bohr * _HARTREE_EV / BOHR_ANG
    opt = BFGS(atoms, logfile=None, maxstep=MAX_STEP_ANG)
    converged = opt.run(fmax=fmax_ev_ang, steps=max_steps)
    forces = atoms.get_forces() * BOHR_ANG / _HARTREE_EV
    max_force = float(np.max(np.linalg.norm(forces, axis=1)))
    if not converged:
        raise EngineConvergenceError(
            f"{spec.label()} optimisation not converged after {max_steps} steps "
            f"(largest force {max_force:.2e} hartree/bohr); "
            "check the structure or pass --no-optimize"
        )
    return OptimizationResult(
        coordinates_ang=atoms.get_positions(),
        energy_hartree=float(atoms.get_potential_energy()) / _HARTREE_EV,
        max_force_hartree_bohr=max_force,
        n_steps=int(opt.nsteps),
        n_gradients=calc.n_gradients,
    )
