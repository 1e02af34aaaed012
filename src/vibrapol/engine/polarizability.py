"""Static dipole polarizability of a closed-shell SCF by coupled-perturbed HF/KS.

References
----------
.. [1] J. Gerratt and I. M. Mills, J. Chem. Phys. 49, 1719 (1968) (coupled-perturbed
   Hartree–Fock equations).
.. [2] J. A. Pople, R. Krishnan, H. B. Schlegel and J. S. Binkley, Int. J. Quantum Chem.
   Symp. 13, 225 (1979) (static polarizability from the first-order orbital response).
.. [3] Q. Sun et al., J. Chem. Phys. 153, 024109 (2020) (PySCF; ``cphf.solve`` and
   ``gen_response`` used here).
"""

from __future__ import annotations

import numpy as np

#: Convergence of the CPHF/CPKS iterations (residual norm of the orbital response).
CPHF_TOL = 1e-10
#: Maximum CPHF/CPKS iterations.
CPHF_MAX_CYCLE = 100


def _charge_center(mol) -> np.ndarray:
    charges = mol.atom_charges()
    return charges @ mol.atom_coords() / charges.sum()


def cphf_polarizability(mf) -> np.ndarray:
    """Static polarizability tensor α of a converged closed-shell SCF, in bohr³ (a.u.).

    See :func:`cphf_polarizability_response`, which also returns the density response.
    """
    return cphf_polarizability_response(mf)[0]


#: The coupled-perturbed solvers of :func:`cphf_polarizability_response`.
CPHF_SOLVERS = ("cg", "krylov", "block")


def cphf_polarizability_response(
    mf, solver: str = "cg", tol: float | None = None
) -> tuple[np.ndarray, np.ndarray | None]:
    """Static polarizability α (bohr³) and first-order density response ∂D/∂F (AO basis).

    Solves the static coupled-perturbed equations for the three components of the dipole
    perturbation h¹ = r (origin at the centre of nuclear charge) [1]_, with the SCF object's
    own response function, so that for Kohn–Sham the exchange–correlation kernel is included
    [3]_.  With U the occupied–virtual response (virtual × occupied),

        α_xy = −4 Σ_ai h¹_x,ai U_y,ai

    (2 for double occupancy × 2 for the symmetric density response) [2]_.

    Parameters
    ----------
    mf : pyscf.scf.hf.RHF or pyscf.dft.rks.RKS
        Converged restricted SCF object (a UHF/UKS object is passed on to
        :func:`vibrapol.engine.openshell.ucphf_polarizability`).
    solver : {"cg", "krylov", "block"}
        ``cg``: our preconditioned conjugate gradients
        (:func:`~vibrapol.engine.field_response.solve_response`), every residual below
        :data:`CPHF_TOL`; for α at displaced geometries, whose differences are divided by the
        step.  ``krylov``: PySCF's ``cphf.solve``, 1.4–1.7× cheaper (ethanol 6-31G*, HF and
        B3LYP) but it leaves errors of up to 3e-7 au in small components (measured: CH₂Cl₂
        HF/6-31G*, Cartesian route at 0.001 Å, tensor error 1.7e-4 against 3.9e-7 with CG); for
        the reference α alone (a relative error of 1e-8) and the start of the field tasks.
        ``block``: :func:`~vibrapol.engine.field_response.solve_response_block`, the three
        equations in one shared subspace, every residual below :data:`CPHF_TOL`.
    tol : float, optional
        The residual for the ``cg`` and ``block`` solvers instead of :data:`CPHF_TOL` (α is
        variational: its error goes as the square of the residual).

    Returns
    -------
    alpha : ndarray, shape (3, 3)
        Symmetric α in bohr³.
    density_response : ndarray, shape (3, nao, nao), or None
        None for an open shell (the field tasks then start from the reference density).
        ∂D/∂F_a of the AO density for the perturbation +F_a r_a, the field term of
        :mod:`vibrapol.engine.fieldgrad`: D(F) = D(0) + Σ_a F_a ∂D/∂F_a + O(F²).  It does not
        depend on the dipole origin (a shift adds a multiple of the overlap to h¹, which
        leaves the density unchanged).
    """
    if mf.istype("UHF"):  # open shell: the spin-unrestricted equations
        from vibrapol.engine.openshell import ucphf_polarizability

        return ucphf_polarizability(mf), None
    from vibrapol.engine.field_response import solve_response
    from vibrapol.engine.solvent import response_function

    mol = mf.mol
    mo_coeff, mo_occ, mo_energy = mf.mo_coeff, mf.mo_occ, mf.mo_energy
    orbo = mo_coeff[:, mo_occ > 0]
    orbv = mo_coeff[:, mo_occ == 0]
    nvir, nocc = orbv.shape[1], orbo.shape[1]
    with mol.with_common_orig(_charge_center(mol)):
        dipole_ints = mol.intor_symmetric("int1e_r", comp=3)
    h1 = np.einsum("xpq,pa,qi->xai", dipole_ints, orbv, orbo)
    response = response_function(mf)  # with a solvent: the optical (ε∞) response

    def fvind(x: np.ndarray) -> np.ndarray:
        x = x.reshape(-1, nvir, nocc)
        dm1 = np.einsum("xai,pa,qi->xpq", x, orbv, 2.0 * orbo)
        dm1 = dm1 + dm1.transpose(0, 2, 1)
        v1 = response(dm1)
        return np.einsum("xpq,pa,qi->xai", v1, orbv, orbo).reshape(x.shape[0], -1)

    delta = mo_energy[mo_occ == 0][:, None] - mo_energy[mo_occ > 0][None, :]
    residual = CPHF_TOL if tol is None else tol
    if solver == "cg":
        mo1 = solve_response(fvind, delta, h1, tol=residual)
    elif solver == "block":
        from vibrapol.engine.field_response import solve_response_block

        mo1 = solve_response_block(fvind, delta, h1, residual)[0]
    elif solver == "krylov":
        from pyscf.scf import cphf

        mo1, _ = cphf.solve(
            fvind, mo_energy, mo_occ, h1, None, max_cycle=CPHF_MAX_CYCLE, tol=CPHF_TOL, verbose=0
        )
    else:
        raise ValueError(f"solver must be one of {CPHF_SOLVERS}, got {solver!r}")
    mo1 = mo1.reshape(3, nvir, nocc)
    alpha = -4.0 * np.einsum("xai,yai->xy", h1, mo1)
    response = np.einsum("xai,pa,qi->xpq", mo1, orbv, 2.0 * orbo)
    return 0.5 * (alpha + alpha.T), response + response.transpose(0, 2, 1)


def finite_field_polarizability(mf, field_au: float = 1e-3) -> np.ndarray:
    """Polarizability by central differences of the dipole moment in a uniform field, bohr³.

    A field component F is applied by adding F·r to the core Hamiltonian (origin at the
    centre of nuclear charge); α_xy = [μ_x(+F_y) − μ_x(−F_y)] / (2F).  The truncation error
    is O(F²).  Six extra SCF runs: for checking :func:`cphf_polarizability`, not for
    production.

    Parameters
    ----------
    mf : converged restricted SCF object (its settings are copied, it is not modified)
    field_au : float
        Field strength in atomic units (hartree e⁻¹ bohr⁻¹).
    """
    mol = mf.mol
    with mol.with_common_orig(_charge_center(mol)):
        dipole_ints = mol.intor_symmetric("int1e_r", comp=3)
    hcore = mf.get_hcore()
    dm_ref = mf.make_rdm1()
    alpha = np.zeros((3, 3))
    for j in range(3):
        dipoles = []
        for sign in (1.0, -1.0):
            field_mf = mf.copy()
            field_mf.get_hcore = lambda *args, h=hcore + sign * field_au * dipole_ints[j]: h
            field_mf.kernel(dm0=dm_ref)
            dipoles.append(field_mf.dip_moment(unit="au", verbose=0))
        alpha[:, j] = (dipoles[0] - dipoles[1]) / (2.0 * field_au)
    return alpha
