"""Frequency-dependent polarizability α(−ω; ω) at the laser line, and the resonance check.

* :func:`dynamic_polarizability`: closed-shell linear response (time-dependent
  coupled-perturbed HF/KS, the random-phase approximation for HF) at one real frequency ω
  [1]_ [2]_, built from PySCF's TDHF operator [3]_;
* :func:`excitation_energies`: the lowest singlet excitations of the same reference (TDHF or
  TDDFT, the poles of that α(ω));
* :func:`resonance_message`: refuses a laser above the first excitation and warns inside
  :data:`PRE_RESONANCE_MARGIN_EV` of it (docs/engine-routes.md says why);
* :class:`DynamicPolarizabilityDipoleJob`: the displaced-geometry task of the Cartesian and
  normal-mode routes with α(ω) in place of the static α.

References
----------
.. [1] J. Olsen and P. Jørgensen, J. Chem. Phys. 82, 3235 (1985) (linear response functions
   of SCF wave functions).
.. [2] H. Sekino and R. J. Bartlett, J. Chem. Phys. 85, 976 (1986) (frequency-dependent
   polarizabilities by time-dependent Hartree–Fock).
.. [3] Q. Sun et al., J. Chem. Phys. 153, 024109 (2020) (PySCF; ``tdscf.rhf``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from vibrapol.engine.evaluate import PolarizabilityDipoleJob, threads_limited
from vibrapol.engine.polarizability import CPHF_MAX_CYCLE, CPHF_TOL, _charge_center
from vibrapol.engine.scf import EngineConvergenceError, EngineInputError, build_molecule, run_scf
from vibrapol.errors import AccuracyWarning
from vibrapol.units import BOHR3_TO_ANG3, BOHR_ANG, C_CM_S, HARTREE_J, PLANCK_J_S

#: Hartree in eV (CODATA of scipy, as every constant of :mod:`vibrapol.units`).
HARTREE_EV = HARTREE_J / 1.602176634e-19

#: A laser whose photon energy lies less than this below the first computed excitation is in
#: pre-resonance: warned, not refused.  1 eV covers the error of computed vertical excitation
#: energies (TDDFT a few tenths of an eV, TDHF often too high by about 1 eV), the width of an
#: absorption band below its vertical energy (a few tenths of an eV), and the range where one
#: state's undamped 1/(ω_n² − ω²) already doubles its share of α (docs/engine-routes.md).
PRE_RESONANCE_MARGIN_EV = 1.0

#: Singlet excitations computed for the resonance check.
N_EXCITED_STATES = 5

#: Largest residual (max norm, au) of the response equations accepted after the iterations: a
#: guard against a failed solve.  PySCF's Krylov solver stops at residuals of about 1e-5 for
#: water (as does the static CPHF), while α, formed from the projected solution, then agrees
#: with the sum over all TDHF states to 3e-8 relative (tests/test_engine_dynamic.py).
RESPONSE_RESIDUAL_MAX = 1e-3

#: Residual (max norm, au) below which the response solution is not refined further (where
#: one Krylov solve usually stops, as the static CPHF's does), and the largest number of
#: Krylov solves: measured, the residual stalls near 1e-6 after 3–6 solves.
RESPONSE_RESIDUAL_TARGET = 1e-5
RESPONSE_REFINEMENTS = 8


class PreResonanceWarning(AccuracyWarning):
    """The laser is close below an electronic excitation: the non-resonant theory fails."""


def laser_omega_au(laser_nm: float) -> float:
    """Photon energy ħω of a vacuum wavelength in nm, in hartree."""
    return PLANCK_J_S * C_CM_S * 1e7 / float(laser_nm) / HARTREE_J


def _orbitals(mf):  # noqa: ANN001, ANN202
    occ = mf.mo_occ
    if mf.mo_coeff.ndim != 2 or not np.all((occ == 0) | (occ == 2)):
        raise EngineInputError("the dynamic polarizability needs a closed-shell (RHF/RKS) SCF")
    return mf.mo_coeff[:, occ == 2], mf.mo_coeff[:, occ == 0]


def dynamic_polarizability(mf, omega_au: float) -> np.ndarray:
    """α(−ω; ω) of a converged closed-shell SCF at a real frequency ω, in bohr³ (a.u.).

    Solves the linear-response equations of the dipole perturbation h = r (origin at the
    centre of nuclear charge) for the excitation (X) and de-excitation (Y) amplitudes,

        (A − ω) X + B Y = −h,    B X + (A + ω) Y = −h,

    with PySCF's TDHF/TDDFT operator [3]_ (so for Kohn–Sham the adiabatic XC kernel is
    included), and forms α_xy(ω) = −2 Σ_ia h_x,ia (X_y + Y_y)_ia (2 for double occupancy).
    At ω = 0, X = Y is the static CPHF response and α equals
    :func:`~vibrapol.engine.polarizability.cphf_polarizability`.  Valid below the first
    excitation energy (the first pole); callers check that with :func:`excitation_energies`.

    Parameters
    ----------
    mf : pyscf.scf.hf.RHF or pyscf.dft.rks.RKS
        Converged restricted SCF object.
    omega_au : float
        Photon energy ħω in hartree (0 gives the static α).

    Returns
    -------
    ndarray, shape (3, 3)
        Symmetric α(ω) in bohr³.

    Raises
    ------
    EngineConvergenceError
        The iterations leave a residual above :data:`RESPONSE_RESIDUAL_MAX`.
    """
    from pyscf import lib
    from pyscf.tdscf.rhf import gen_tdhf_operation

    omega = float(omega_au)
    mol = mf.mol
    orbo, orbv = _orbitals(mf)
    with mol.with_common_orig(_charge_center(mol)):
        dipole_ints = mol.intor_symmetric("int1e_r", comp=3)
    h = np.einsum("xpq,pi,qa->xia", dipole_ints, orbo, orbv).reshape(3, -1)
    # vind(z) = [[A, B], [−B, −A]] z for z = [X, Y]; diag its diagonal (orbital-energy gaps).
    vind, diag = gen_tdhf_operation(mf, singlet=True)
    rhs = np.hstack([-h, h])  # (L − ω) z = [−h, h]
    denom = diag - omega
    denom[np.abs(denom) < 1e-8] = 1e-8

    def aop(z: np.ndarray) -> np.ndarray:  # (1 + a) z = rhs / denom  ⇔  (L − ω) z = rhs
        z = np.asarray(z).reshape(-1, diag.size)
        return (vind(z) - diag * z) / denom

    # PySCF's Krylov solver stops early on this non-symmetric system when a weak transition
    # couples to the field (residual 1e-3 for a slightly non-planar formaldehyde at 350 nm):
    # solve again for the remaining residual (iterative refinement) until it stops falling.
    z = np.zeros_like(rhs)
    best, residual = z, np.inf
    for _ in range(RESPONSE_REFINEMENTS):
        left = rhs - (vind(z) - omega * z)
        now = float(np.abs(left).max())
        stalled = now > 0.5 * residual
        if now < residual:
            best, residual = z, now
        if stalled or residual < RESPONSE_RESIDUAL_TARGET:
            break
        dz = lib.krylov(aop, left / denom, tol=CPHF_TOL, max_cycle=CPHF_MAX_CYCLE)
        z = z + np.asarray(dz).reshape(3, diag.size)
    z = best
    if residual > RESPONSE_RESIDUAL_MAX:
        raise EngineConvergenceError(
            f"the response equations at ħω = {omega * HARTREE_EV:.3f} eV did not converge "
            f"(residual {residual:.1e}); the laser may be too close to an excitation"
        )
    nov = h.shape[1]
    alpha = -2.0 * h @ (z[:, :nov] + z[:, nov:]).T
    return 0.5 * (alpha + alpha.T)


@dataclass(frozen=True)
class Excitations:
    """The lowest singlet excitations of a reference.

    Attributes
    ----------
    energies_ev : ndarray (n,)
        Vertical excitation energies, ascending.
    oscillator_strengths : ndarray (n,)
        Length-gauge oscillator strengths.
    method : str
        ``"TDHF (RPA)"`` or ``"TDDFT"``.
    """

    energies_ev: np.ndarray
    oscillator_strengths: np.ndarray
    method: str

    def describe(self) -> str:
        """One line: the energies (eV) with their oscillator strengths."""
        states = ", ".join(
            f"{e:.3f} eV (f = {f:.3f})"
            for e, f in zip(self.energies_ev, self.oscillator_strengths, strict=True)
        )
        return f"lowest singlet excitations ({self.method}): {states}"


def excitation_energies(mf, nstates: int = N_EXCITED_STATES) -> Excitations:
    """The ``nstates`` lowest singlet excitation energies of a closed-shell SCF.

    TDHF (RPA) for Hartree–Fock, TDDFT (adiabatic kernel) for Kohn–Sham: the same response
    whose poles :func:`dynamic_polarizability` has.  Fewer states when the space is smaller.

    Raises
    ------
    EngineConvergenceError
        The eigenvalue iterations did not converge, or a root is not positive (an unstable
        reference).
    """
    from pyscf import tdscf

    orbo, orbv = _orbitals(mf)
    nstates = int(min(nstates, orbo.shape[1] * orbv.shape[1]))
    td = tdscf.TDDFT(mf)  # TDHF for an RHF object
    td.verbose = 0
    td.singlet = True
    td.nstates = nstates
    td.kernel()
    energies = np.asarray(td.e, dtype=float)
    if not np.all(np.atleast_1d(td.converged)) or energies.size == 0:
        raise EngineConvergenceError(
            "the excitation energies (TDHF/TDDFT) of the reference did not converge"
        )
    if energies[0] <= 0.0:
        raise EngineConvergenceError(
            f"the reference has a non-positive excitation energy ({energies[0]:.2e} hartree): "
            "the SCF solution is unstable, so no polarizability at the laser line can be given"
        )
    strengths = np.asarray(td.oscillator_strength(), dtype=float)
    from pyscf.dft.rks import KohnShamDFT

    method = "TDDFT" if isinstance(mf, KohnShamDFT) else "TDHF (RPA)"
    return Excitations(energies * HARTREE_EV, strengths, method)


def resonance_message(laser_nm: float, excitations: Excitations) -> str | None:
    """None far from resonance; the warning text in pre-resonance.

    Raises
    ------
    EngineInputError
        The photon energy is at or above the first excitation energy (resonance).
    """
    photon = laser_omega_au(laser_nm) * HARTREE_EV
    first = float(excitations.energies_ev[0])
    if photon >= first:
        raise EngineInputError(
            f"the {laser_nm:g} nm laser ({photon:.3f} eV) is at or above the first computed "
            f"excitation ({first:.3f} eV, {excitations.method}): resonance Raman is outside "
            "what vibrapol computes (docs/limits.md)"
        )
    if first - photon < PRE_RESONANCE_MARGIN_EV:
        return (
            f"pre-resonance: the {laser_nm:g} nm laser ({photon:.3f} eV) is within "
            f"{PRE_RESONANCE_MARGIN_EV:g} eV of the first computed excitation ({first:.3f} eV, "
            f"{excitations.method}); non-resonant activities are unreliable here"
        )
    return None


@dataclass(frozen=True, eq=False)
class DynamicPolarizabilityDipoleJob(PolarizabilityDipoleJob):
    """A displaced geometry whose α(−ω; ω) and total dipole are wanted.

    As :class:`~vibrapol.engine.evaluate.PolarizabilityDipoleJob` (result: α in Å³ over μ in
    e·Å, shape (4, 3)), with :func:`dynamic_polarizability` at ``omega_au`` (hartree).
    """

    omega_au: float = 0.0

    kind: ClassVar[str] = "alpha"
    result_name: ClassVar[str] = "alpha_omega_ang3_dipole_e_ang"

    def run(self) -> np.ndarray:
        """α(ω) in Å³ over μ in e·Å."""
        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = run_scf(mol, self.spec, dm0=self.dm0, where="displaced geometry")
            alpha = dynamic_polarizability(mf, self.omega_au) * BOHR3_TO_ANG3
            dipole = mf.dip_moment(unit="AU", origin=(0.0, 0.0, 0.0), verbose=0) * BOHR_ANG
            return np.vstack([alpha, dipole[None, :]])
