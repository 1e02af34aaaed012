"""Geometry optimisation of the engine: geomeTRIC in internal coordinates, or ASE's BFGS.

Two optimisers, named by :data:`OPTIMIZERS`:

* ``internal`` (the default): geomeTRIC's translation-rotation-internal coordinates
  (:mod:`vibrapol.engine.optimize_internal`), with loose SCF on the early steps.  From noisy or
  drawn starts it needs a fraction of the gradients of Cartesian BFGS (``bench/optimize.py``).
* ``cartesian-bfgs``: ASE's BFGS in Cartesian coordinates with tight SCF at every step, the
  engine's optimiser before the internal one (kept to reproduce earlier runs).  Cartesian BFGS
  with an exact gradient keeps the point-group symmetry of the starting structure.

Both converge on the same criterion: the largest per-atom force at the final geometry, computed
with the engine's tight SCF, is at most :data:`FMAX_HARTREE_BOHR` — tighter than the usual
"tight" criteria of quantum-chemistry programs, so that the Hessian is taken at a stationary
point and the projected frequencies carry no spurious imaginary modes.  The final force is
checked here whatever the optimiser reports; a larger one is never passed on.
"""

from __future__ import annotations

from dataclasses import dataclass
from time import perf_counter

import numpy as np

from vibrapol.engine.scf import (
    EngineConvergenceError,
    EngineInputError,
    MethodSpec,
    build_molecule,
    build_scf,
)
from vibrapol.units import BOHR_ANG, HARTREE_BOHR2_TO_EV_ANG2

#: Convergence: largest Cartesian force component norm per atom, hartree bohr⁻¹ (≈ 5e-4 eV Å⁻¹).
FMAX_HARTREE_BOHR = 1e-5
#: Give up after this many optimisation steps.
MAX_STEPS = 200
#: Largest step of one BFGS update, Å.
MAX_STEP_ANG = 0.1
#: The optimisers, by the names of ``--optimizer``; the first is the default.
OPTIMIZERS = ("internal", "cartesian-bfgs")
DEFAULT_OPTIMIZER = OPTIMIZERS[0]
#: How each optimiser is named in the provenance and in messages.
OPTIMIZER_LABELS = {
    "internal": "geomeTRIC (internal coordinates; loose SCF while the largest force exceeds "
    "10x the threshold)",
    "cartesian-bfgs": "ASE BFGS (Cartesian coordinates)",
}

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
        Energy + gradient evaluations (a loose gradient recomputed tightly counts twice).
    optimizer : str
        One of :data:`OPTIMIZERS`.
    n_loose : int
        Gradients among ``n_gradients`` computed with loose SCF.
    density : ndarray or None
        The converged SCF density at the final geometry (AO basis; (2, n, n) for an open
        shell), the start of the reference SCF; None when not kept (older checkpoints).
    seconds_gradient : float or None
        Wall seconds of the last tightly converged analytic gradient (the gradient alone, not
        its SCF): the measured cost of one gradient at this geometry, which the route choice
        uses, so the reference stage need not compute one; None when not measured.
    """

    coordinates_ang: np.ndarray
    energy_hartree: float
    max_force_hartree_bohr: float
    n_steps: int
    n_gradients: int
    optimizer: str = "cartesian-bfgs"
    n_loose: int = 0
    density: np.ndarray | None = None
    seconds_gradient: float | None = None

    def describe(self) -> str:
        """One line for the provenance: optimiser, steps, gradients and final largest force."""
        loose = f" ({self.n_loose} with loose SCF)" if self.n_loose else ""
        return (
            f"geometry optimised with {OPTIMIZER_LABELS[self.optimizer]} in {self.n_steps} "
            f"steps, {self.n_gradients} gradients{loose}; final max force "
            f"{self.max_force_hartree_bohr:.2e} hartree/bohr"
        )


def optimizer_key(name: str) -> dict[str, object]:
    """What identifies an optimiser's result in a checkpoint key (beside the engine's settings).

    ``cartesian-bfgs`` adds nothing, so that its key is the one of the runs made before the
    optimiser could be chosen; ``internal`` adds its name and its loose-SCF schedule.
    """
    name = normalize_optimizer(name)
    if name == "cartesian-bfgs":
        return {}
    from vibrapol.engine import optimize_internal as oi

    schedule = [oi.LOOSE_CONV_TOL, oi.LOOSE_CONV_TOL_GRAD, oi.TIGHT_BELOW, oi.REFINE_BELOW]
    return {"optimizer": name, "optimizer_scf": schedule}


def normalize_optimizer(name: str) -> str:
    """The optimiser's canonical name; :class:`EngineInputError` for an unknown one."""
    key = str(name).strip().lower()
    if key not in OPTIMIZERS:
        raise EngineInputError(f"unknown optimizer {name!r}: use one of {', '.join(OPTIMIZERS)}")
    return key


def _calculator(atomic_numbers: np.ndarray, spec: MethodSpec):
    from ase.calculators.calculator import Calculator, all_changes

    class _PySCFCalculator(Calculator):
        implemented_properties = ["energy", "forces"]

        def __init__(self) -> None:
            super().__init__()
            self.density = None
            self.n_gradients = 0
            self.seconds_gradient: float | None = None

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
            start = perf_counter()
            g = np.asarray(grad.kernel())
            self.seconds_gradient = perf_counter() - start
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
    optimizer: str = DEFAULT_OPTIMIZER,
    fmax_hartree_bohr: float = FMAX_HARTREE_BOHR,
    max_steps: int = MAX_STEPS,
    loose_scf: bool = True,
) -> OptimizationResult:
    """Minimise the SCF energy until the largest atomic force is at most ``fmax_hartree_bohr``.

    Nothing is written to the working directory and nothing is printed.

    Parameters
    ----------
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
        Starting geometry, Å.
    spec : MethodSpec
    optimizer : str
        ``"internal"`` (geomeTRIC) or ``"cartesian-bfgs"`` (ASE BFGS), see :data:`OPTIMIZERS`.
    fmax_hartree_bohr : float
        Convergence threshold on the largest per-atom force.
    max_steps : int
        Give up after this many steps.
    loose_scf : bool
        ``internal`` only: loose SCF while the forces are large (False: tight at every step).

    Raises
    ------
    EngineConvergenceError
        When the largest force is still above ``fmax_hartree_bohr`` after ``max_steps``, or an
        SCF does not converge.
    EngineInputError
        An unknown optimiser name.
    """
    name = normalize_optimizer(optimizer)
    if name == "cartesian-bfgs":
        return _bfgs(atomic_numbers, coordinates_ang, spec, fmax_hartree_bohr, max_steps)
    return _internal(atomic_numbers, coordinates_ang, spec, fmax_hartree_bohr, max_steps, loose_scf)


def _internal(z, xyz, spec, fmax, max_steps, loose) -> OptimizationResult:  # noqa: ANN001
    from vibrapol.engine.optimize_internal import Evaluator, run_geometric

    evaluator = Evaluator(z, spec, fmax, loose=loose)
    xyz = np.asarray(xyz, dtype=float)
    if len(xyz) < 2:  # a single atom: nothing to optimise (geomeTRIC needs two atoms)
        final, steps = evaluator(xyz / BOHR_ANG), 0
    else:
        final, steps = run_geometric(evaluator, xyz, fmax, max_steps)
        if final.max_force > fmax:  # geomeTRIC's test may use a projected gradient: go on
            final, more = run_geometric(
                evaluator, final.coordinates_bohr * BOHR_ANG, fmax, max(max_steps - steps, 1)
            )
            steps += more
    if not final.tight or final.max_force > fmax:
        raise EngineConvergenceError(
            f"{spec.label()} optimisation (geomeTRIC) ended with largest force "
            f"{final.max_force:.2e} hartree/bohr, above {fmax:.0e}; try --optimizer "
            "cartesian-bfgs or pass --no-optimize"
        )
    return OptimizationResult(
        coordinates_ang=final.coordinates_bohr * BOHR_ANG,
        energy_hartree=final.energy_hartree,
        max_force_hartree_bohr=final.max_force,
        n_steps=steps,
        n_gradients=evaluator.n_gradients,
        optimizer="internal",
        n_loose=evaluator.n_loose,
        density=evaluator.density,
        seconds_gradient=evaluator.seconds_gradient,
    )


def _bfgs(z, coordinates_ang, spec, fmax_hartree_bohr, max_steps) -> OptimizationResult:  # noqa: ANN001
    """Minimise the SCF energy with :class:`ase.optimize.BFGS` (no log, no files written)."""
    atomic_numbers = z
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
        optimizer="cartesian-bfgs",
        density=calc.density,
        seconds_gradient=calc.seconds_gradient,
    )
