"""Geometry optimisation in internal coordinates with geomeTRIC, driven by PySCF gradients.

Why geomeTRIC: it is a maintained library (used by PySCF's own ``geomopt`` module) whose
translation-rotation-internal coordinates (TRIC) follow bonds, angles and torsions, so a
drawn or noisy start converges in a fraction of the gradients Cartesian BFGS needs (measured
in ``bench/optimize.py``).  It is driven here through its ``Optimizer`` class with an engine
of our own rather than through ``geometric.optimize.run_optimizer`` or PySCF's
``geometric_solver``: those configure the root logger, write a log and a trajectory file
beside the input and overwrite geomeTRIC's unit constants for the whole process.  Here
nothing is written outside a temporary directory that is removed, geomeTRIC's logger is
silenced only while it runs, and coordinates are converted with vibrapol's own constant.

Convergence is geomeTRIC's: all five of its criteria must hold, with its largest per-atom
gradient (the same quantity as the engine's largest force) set to the engine's threshold.
The SCF of the early steps is converged loosely (:data:`LOOSE_CONV_TOL`,
:data:`LOOSE_CONV_TOL_GRAD`), each starting from the previous density.  Once a largest force
is within :data:`TIGHT_BELOW` times the threshold every later SCF is tight, and a loose gradient
whose largest force is within :data:`REFINE_BELOW` times the threshold is recomputed tightly
(from its own density) before geomeTRIC sees it: geomeTRIC's convergence test, which needs a
largest force below the threshold, is thus never passed on a loose gradient.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import threading
from collections.abc import Iterator
from dataclasses import dataclass
from time import perf_counter

import numpy as np

from vibrapol.engine.quiet import quiet_streams
from vibrapol.engine.scf import (
    EngineConvergenceError,
    MethodSpec,
    build_molecule,
    build_scf,
    converge,
)
from vibrapol.units import BOHR_ANG

#: SCF energy convergence (hartree) of the early, loose steps.
LOOSE_CONV_TOL = 1e-9
#: SCF orbital-gradient convergence of the early, loose steps.  It moves the nuclear gradient by
#: about 1e-6 hartree/bohr (benzene B3LYP, issue 16; ``bench/optimize.py`` measures it), a
#: negligible error while the largest force is far above the threshold.
LOOSE_CONV_TOL_GRAD = 1e-5
#: After a largest force within this multiple of the threshold, every SCF is tight.
TIGHT_BELOW = 10.0
#: A loose gradient with a largest force within this multiple of the threshold is recomputed
#: tightly (any multiple ≥ 1 keeps the convergence test on tight gradients; 2 leaves a margin
#: of one threshold, about ten times the loose SCF's gradient error).
REFINE_BELOW = 2.0


@dataclass(frozen=True, eq=False)
class Evaluation:
    """One energy and gradient: coordinates (bohr), energy (hartree), gradient (hartree/bohr)."""

    coordinates_bohr: np.ndarray
    energy_hartree: float
    gradient_hartree_bohr: np.ndarray
    tight: bool

    @property
    def max_force(self) -> float:
        """Largest per-atom gradient norm, hartree/bohr."""
        return float(np.max(np.linalg.norm(self.gradient_hartree_bohr.reshape(-1, 3), axis=1)))


class Evaluator:
    """SCF energies and gradients along an optimisation, loose early and tight late.

    Parameters
    ----------
    atomic_numbers : ndarray (N,)
    spec : MethodSpec
    fmax_hartree_bohr : float
        The optimisation's force threshold; loose SCF is used only while the last largest force
        exceeds ``TIGHT_BELOW`` times it.
    loose : bool
        False: every SCF with the engine's tight settings.
    """

    def __init__(
        self,
        atomic_numbers: np.ndarray,
        spec: MethodSpec,
        fmax_hartree_bohr: float,
        loose: bool = True,
    ) -> None:
        self.atomic_numbers = np.asarray(atomic_numbers, dtype=int)
        self.spec = spec
        self.switch = TIGHT_BELOW * fmax_hartree_bohr
        self.refine = REFINE_BELOW * fmax_hartree_bohr
        self.loose = loose
        self.density: np.ndarray | None = None
        self.saved_density: np.ndarray | None = None
        self.last: Evaluation | None = None
        self.n_gradients = 0
        self.n_loose = 0
        self.n_scf_cycles = 0
        self.seconds_gradient: float | None = None

    def _scf(self, mol, dm0, tight: bool):  # noqa: ANN001, ANN202
        def fresh():  # noqa: ANN202
            mf = build_scf(mol, self.spec)
            if not tight:
                mf.conv_tol, mf.conv_tol_grad = LOOSE_CONV_TOL, LOOSE_CONV_TOL_GRAD
            return mf

        mf = converge(fresh(), dm0, restart=fresh)
        self.n_scf_cycles += int(getattr(mf, "cycles", 0) or 0)
        if not mf.converged:
            raise EngineConvergenceError(
                f"{self.spec.label()} SCF did not converge during the optimisation; "
                "check the structure or pass --no-optimize"
            )
        grad = mf.nuc_grad_method()
        grad.verbose = 0
        start = perf_counter()
        g = np.asarray(grad.kernel(), dtype=float)
        if tight:  # the cost of one analytic gradient (the reference stage's cost model)
            self.seconds_gradient = perf_counter() - start
        self.n_gradients += 1
        self.n_loose += 0 if tight else 1
        return mf, g

    def __call__(self, coordinates_bohr: np.ndarray) -> Evaluation:
        """Energy and gradient at ``coordinates_bohr`` (flat or (N, 3))."""
        xyz = np.asarray(coordinates_bohr, dtype=float).reshape(-1, 3)
        mol = build_molecule(self.atomic_numbers, xyz * BOHR_ANG, self.spec)
        tight = not self.loose or (self.last is not None and self.last.max_force <= self.switch)
        mf, g = self._scf(mol, self.density, tight)
        result = Evaluation(xyz.copy(), float(mf.e_tot), g, tight)
        if not tight and result.max_force <= self.refine:
            mf, g = self._scf(mol, mf.make_rdm1(), True)
            result = Evaluation(xyz.copy(), float(mf.e_tot), g, True)
        self.density = mf.make_rdm1()
        self.last = result
        return result


_LOGGER_LOCK = threading.Lock()
_LOGGER_USERS = 0
_LOGGER_STATE: dict[str, bool] = {}


@contextlib.contextmanager
def _silenced() -> Iterator[None]:
    """Silence geomeTRIC's logger and swallow its stray prints while it runs.

    Optimisations may run in several threads at once: the logger is switched off by the first
    to enter and restored by the last to leave, and the prints are caught in this thread only
    (:func:`~vibrapol.engine.quiet.quiet_streams`).
    """
    global _LOGGER_USERS
    from geometric.nifty import logger

    with _LOGGER_LOCK:
        if _LOGGER_USERS == 0:
            _LOGGER_STATE["disabled"] = logger.disabled
            logger.disabled = True
        _LOGGER_USERS += 1
    try:
        with quiet_streams():
            yield
    finally:
        with _LOGGER_LOCK:
            _LOGGER_USERS -= 1
            if _LOGGER_USERS == 0:
                logger.disabled = _LOGGER_STATE.pop("disabled")


def _engine(evaluator: Evaluator, molecule):  # noqa: ANN001, ANN202
    from geometric.engine import Engine

    class _Engine(Engine):
        def calc_new(self, coords, dirname):  # noqa: ANN001, ANN202, ARG002
            result = evaluator(coords)
            return {
                "energy": result.energy_hartree,
                "gradient": result.gradient_hartree_bohr.ravel(),
            }

        # geomeTRIC saves the accepted step's guess and restores it after a rejected step.
        def save_guess_files(self, dirname):  # noqa: ANN001, ANN202, ARG002
            evaluator.saved_density = evaluator.density

        def load_guess_files(self, dirname):  # noqa: ANN001, ANN202, ARG002
            if evaluator.saved_density is not None:
                evaluator.density = evaluator.saved_density

    return _Engine(molecule)


def run_geometric(
    evaluator: Evaluator,
    coordinates_ang: np.ndarray,
    fmax_hartree_bohr: float,
    max_steps: int,
) -> tuple[Evaluation, int]:
    """Minimise with geomeTRIC from ``coordinates_ang``; the final evaluation and the steps.

    Raises
    ------
    EngineConvergenceError
        When geomeTRIC gives up (step limit, or a structure it cannot handle).
    """
    from geometric.errors import Error as GeometricError
    from geometric.errors import GeomOptNotConvergedError
    from geometric.internal import DelocalizedInternalCoordinates
    from geometric.molecule import Molecule
    from geometric.optimize import Optimizer
    from geometric.params import OptParams
    from pyscf.data.elements import ELEMENTS

    xyz = np.asarray(coordinates_ang, dtype=float)
    molecule = Molecule()
    molecule.elem = [ELEMENTS[int(z)] for z in evaluator.atomic_numbers]
    molecule.xyzs = [xyz.copy()]
    params = OptParams(
        convergence_gmax=fmax_hartree_bohr,
        convergence_grms=fmax_hartree_bohr,
        maxiter=max_steps,
    )
    label = evaluator.spec.label()
    with _silenced(), tempfile.TemporaryDirectory(prefix="vibrapol-opt-") as scratch:
        engine = _engine(evaluator, molecule)
        try:
            coords = DelocalizedInternalCoordinates(
                engine.M, build=True, connect=False, addcart=False
            )
            optimizer = Optimizer(
                xyz.ravel() / BOHR_ANG,
                engine.M,
                coords,
                engine,
                os.path.join(scratch, "work"),
                params,
                print_info=False,
            )
            optimizer.optimizeGeometry()
        except GeomOptNotConvergedError as exc:
            last = evaluator.last
            force = "" if last is None else f" (largest force {last.max_force:.2e} hartree/bohr)"
            raise EngineConvergenceError(
                f"{label} optimisation (geomeTRIC) not converged after {max_steps} steps{force}; "
                "check the structure, try --optimizer cartesian-bfgs or pass --no-optimize"
            ) from exc
        except GeometricError as exc:
            raise EngineConvergenceError(
                f"{label} optimisation (geomeTRIC) stopped: {str(exc).strip().splitlines()[0]}; "
                "try --optimizer cartesian-bfgs or pass --no-optimize"
            ) from exc
    final = np.asarray(optimizer.X, dtype=float).reshape(-1, 3)
    last = evaluator.last
    if last is None or not np.array_equal(last.coordinates_bohr, final):
        last = evaluator(final)  # not expected: geomeTRIC ends on its last evaluation
    return last, int(optimizer.Iteration)
