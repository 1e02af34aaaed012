"""Order-of-magnitude cost of an engine run, known before any SCF.

The route cost model (:mod:`vibrapol.engine.routes`) prices each route from timings measured
at the reference geometry; before that reference calculation only the size of the basis is
known.  This module scales the measured timings of a small and a medium molecule by the number
of basis functions, so that a run of days is announced, and refused without ``--yes``, before
it starts rather than after hours of Hessian.

Calibration (our own measurements, PySCF 2.14, HF/6-31G*, 2 threads; ±20 % run to run):
water (18 basis functions) SCF 0.11 s, analytic Hessian 0.5 s; benzene (96) SCF 2.8 s, Hessian
86–97 s; CCl4 (86) SCF 2.0 s, Hessian 91–113 s.  Power laws through these give the exponents
below; B3LYP took 4–9× the HF SCF time and 1.3–3.4× the HF Hessian time on the same molecules.
The estimate is the reference stage plus the field route's tasks (at most 12, whatever the
size: the route ``auto`` never picks a dearer one), serial, on one such machine.

In a continuum solvent (IEF-PCM) the field route is refused, so the tasks are those of the
normal-mode route (two displaced geometries per vibration, each an SCF and a CPHF α), and
every SCF and the Hessian cost more by the factors measured with bench/solvent_cost.py
(HF/6-31G*, water and ethylene in water, one thread, the engine's cached PCM):
SCF 3.6–4.0× and CPHF α 3.8–7.8× the vacuum SCF and α, analytic Hessian 7.0× (ethylene) to
9–17× (water: the smaller the molecule, the larger the surface's share).
"""

from __future__ import annotations

from dataclasses import dataclass

from vibrapol.engine.routes import DISPLACED_TASK_FACTOR, FIELD_TASK_FACTOR
from vibrapol.engine.scf import MethodSpec

#: Basis functions of the calibration point (water, 6-31G*, spherical d).
_NAO_REF = 18
_SCF_REF_S = 0.11
_HESSIAN_REF_S = 0.5
#: Exponents of the power laws in the number of basis functions (water → benzene, HF).
SCF_EXPONENT = 1.9
HESSIAN_EXPONENT = 3.24
#: DFT over HF (the larger ends of the measured ranges).
DFT_SCF_FACTOR = 9.0
DFT_HESSIAN_FACTOR = 3.4
#: Field-route tasks without symmetry (12 field gradients, :mod:`vibrapol.engine.fieldplan`).
FIELD_TASKS = 12
#: Open shells (UHF/UKS) cost about this many times the closed-shell run of the same atoms
#: (bench/open_shell.py, 6-31G*: B3LYP 1.7–2.4 for CH3 and H2O+, HF 0.8–1.5, noise-dominated).
OPEN_SHELL_FACTOR = 2.0
#: A continuum solvent (IEF-PCM) over vacuum, HF/6-31G* (bench/solvent_cost.py, cached PCM):
#: SCF 3.6 (ethylene) – 4.0 (water); analytic Hessian 7.0 (ethylene), 9–17 (water).
SOLVENT_SCF_FACTOR = 4.0
SOLVENT_HESSIAN_FACTOR = 7.0
#: A solvated displaced-geometry task (SCF from the reference density + CPHF α with the
#: optical response) in units of the solvated SCF (measured: α 0.4–0.6 of the SCF, plus the
#: SCF itself).
SOLVENT_TASK_SCFS = 1.6

#: ``vibrapol compute`` prints the estimate of a structure above this (seconds: ten minutes).
ANNOUNCE_ABOVE_S = 600.0

#: ``vibrapol compute`` asks for ``--yes`` when the estimate of one structure exceeds this
#: (seconds of serial time: one day).
CONFIRM_ABOVE_S = 24 * 3600.0


@dataclass(frozen=True)
class CostEstimate:
    """Estimated serial seconds of one molecule's run (order of magnitude).

    Attributes
    ----------
    n_atoms, n_basis : int
    seconds_reference : float
        SCF and analytic Hessian at the reference geometry.
    seconds_tasks : float
        The derivative tasks (field route).
    """

    n_atoms: int
    n_basis: int
    seconds_reference: float
    seconds_tasks: float

    @property
    def seconds(self) -> float:
        """Total estimated serial seconds."""
        return self.seconds_reference + self.seconds_tasks

    def describe(self) -> str:
        """Short text such as ``≈ 3.5 h of serial time (12 atoms, 230 basis functions)``."""
        size = f"{self.n_atoms} atoms, {self.n_basis} basis functions"
        return f"≈ {format_duration(self.seconds)} of serial time ({size})"


def estimate_cost(n_atoms: int, n_basis: int, spec: MethodSpec) -> CostEstimate:
    """Order-of-magnitude serial cost of a run with ``n_basis`` basis functions."""
    ratio = max(n_basis, 1) / _NAO_REF
    scf = _SCF_REF_S * ratio**SCF_EXPONENT
    hessian = _HESSIAN_REF_S * ratio**HESSIAN_EXPONENT
    if not spec.is_hf:
        scf *= DFT_SCF_FACTOR
        hessian *= DFT_HESSIAN_FACTOR
    if spec.is_unrestricted:
        scf *= OPEN_SHELL_FACTOR
        hessian *= OPEN_SHELL_FACTOR
    if spec.solvent is not None:
        # No field route in a solvent: the normal-mode route's displaced geometries.
        scf *= SOLVENT_SCF_FACTOR
        hessian *= SOLVENT_HESSIAN_FACTOR
        n_tasks = 2 * max(3 * int(n_atoms) - 6, 1)
        tasks = n_tasks * DISPLACED_TASK_FACTOR * SOLVENT_TASK_SCFS * scf
        return CostEstimate(int(n_atoms), int(n_basis), scf + hessian, tasks)
    # A field task: tight SCF from the reference density plus a gradient (about one SCF).
    tasks = FIELD_TASKS * FIELD_TASK_FACTOR * 2.0 * scf
    return CostEstimate(int(n_atoms), int(n_basis), scf + hessian, tasks)


def format_duration(seconds: float) -> str:
    """``40 s``, ``12 min``, ``3.5 h``, ``30 h``, ``12 days``: one significant unit."""
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 90 * 60:
        return f"{seconds / 60:.0f} min"
    if seconds < 10 * 3600:
        return f"{seconds / 3600:.1f} h"
    if seconds < 48 * 3600:
        return f"{seconds / 3600:.0f} h"
    return f"{seconds / 86400:.0f} days"
