"""Test helpers for the spectrum tests: analytic ModeSets and a small PySCF calculation.

The PySCF route (analytic Hessian, coupled-perturbed HF/KS static polarizability, central
finite differences of α along Cartesians) is a compact stand-in for the embedded engine, used
only to give the spectrum tests a real molecule.
"""

from __future__ import annotations

import numpy as np

from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.units import BOHR3_TO_ANG3
from vibrapol.vibrations import harmonic_analysis


def analytic_modeset(tensors, freqs_cm1, **kwargs) -> ModeSet:
    """A ModeSet whose ∂α/∂Q are the given tensors (Å² amu⁻¹ᐟ²); the modes are unit vectors.

    ModeSet only checks that the modes are orthonormal, so rows of the identity in 3N = 3·(n+1)
    dimensions serve; the atoms are carbons on the x axis (they play no role in the spectrum).
    """
    t = np.asarray(tensors, dtype=float).reshape(-1, 3, 3)
    n = t.shape[0]
    n_atoms = n // 3 + 1
    coords = np.zeros((n_atoms, 3))
    coords[:, 0] = 1.5 * np.arange(n_atoms)
    return ModeSet(
        atomic_numbers=[6] * n_atoms,
        coordinates_ang=coords,
        freqs_cm1=np.asarray(freqs_cm1, dtype=float),
        modes=np.eye(3 * n_atoms)[:n],
        dalpha_dq=t,
        **kwargs,
    )


def _scf(mol, xc):
    from pyscf import dft, scf

    mf = scf.RHF(mol) if xc is None else dft.RKS(mol, xc=xc)
    mf.conv_tol = 1e-11
    mf.conv_tol_grad = 1e-7
    mf.verbose = 0
    return mf


def polarizability_au(mf) -> np.ndarray:
    """Static polarizability (bohr³) by closed-shell coupled-perturbed HF/KS.

    Perturbation +r (dipole integrals about the centre of nuclear charge); α = −4 Σ h1·U with the
    response potential from ``gen_response(hermi=1)`` (the CPHF equations as in J. A. Pople,
    R. Krishnan, H. B. Schlegel and J. S. Binkley, Int. J. Quantum Chem. Symp. 13, 225 (1979)).
    """
    from pyscf import lib
    from pyscf.scf import cphf

    mol = mf.mol
    occ = mf.mo_occ > 0
    orbo, orbv = mf.mo_coeff[:, occ], mf.mo_coeff[:, ~occ]
    charges = mol.atom_charges()
    origin = charges @ mol.atom_coords() / charges.sum()
    with mol.with_common_orig(origin):
        r = mol.intor_symmetric("int1e_r", comp=3)
    h1 = lib.einsum("xpq,pa,qi->xai", r, orbv, orbo)
    vresp = mf.gen_response(hermi=1)

    def fvind(x):
        x = x.reshape(-1, orbv.shape[1], orbo.shape[1])
        dm = lib.einsum("xai,pa,qi->xpq", x, orbv, orbo)
        dm = (dm + dm.transpose(0, 2, 1)) * 2.0
        return lib.einsum("xpq,pa,qi->xai", vresp(dm), orbv, orbo).ravel()

    u = cphf.solve(fvind, mf.mo_energy, mf.mo_occ, h1, None, max_cycle=100, tol=1e-10)[0]
    e2 = np.einsum("xai,yai->xy", h1, u)
    return -2.0 * (e2 + e2.T)


def optimize(mol, xc=None, gtol=1e-6):
    """Minimise the energy with scipy's BFGS and analytic gradients; returns the new Mole."""
    from scipy.optimize import minimize

    def energy_grad(x):
        m = mol.set_geom_(x.reshape(-1, 3), unit="Bohr", inplace=False)
        mf = _scf(m, xc)
        e = mf.kernel()
        g = mf.nuc_grad_method()
        g.verbose = 0
        return e, g.kernel().ravel()

    res = minimize(
        energy_grad, mol.atom_coords().ravel(), jac=True, method="BFGS", options={"gtol": gtol}
    )
    return mol.set_geom_(res.x.reshape(-1, 3), unit="Bohr", inplace=False)


def pyscf_modeset(
    atom: str,
    basis: str,
    xc: str | None = None,
    step_ang: float = 0.005,
    opt: bool = True,
    cart: bool = False,
) -> ModeSet:
    """Harmonic modes and ∂α/∂x of a closed-shell molecule computed with PySCF.

    ``cart=True`` uses Cartesian d functions (6d), as the published 6-31G* scale factors did.
    """
    from pyscf import gto, lib

    lib.num_threads(1)  # many tiny tasks: threads only contend on a shared 2-core machine
    mol = gto.M(atom=atom, basis=basis, unit="Angstrom", verbose=0, cart=cart)
    if opt:
        mol = optimize(mol, xc)
    mf = _scf(mol, xc)
    energy = mf.kernel()
    n = mol.natm
    hess = mf.Hessian().kernel().transpose(0, 2, 1, 3).reshape(3 * n, 3 * n)
    coords = mol.atom_coords(unit="Angstrom")
    z = mol.atom_charges()
    masses = default_masses(z)
    harmonic = harmonic_analysis(hess, masses, coords)
    dalpha = np.zeros((3 * n, 3, 3))
    for i in range(3 * n):
        pair = []
        for sign in (1.0, -1.0):
            x = coords.copy().ravel()
            x[i] += sign * step_ang
            m = mol.set_geom_(x.reshape(-1, 3), unit="Angstrom", inplace=False)
            mfd = _scf(m, xc)
            mfd.kernel()
            pair.append(polarizability_au(mfd) * BOHR3_TO_ANG3)
        dalpha[i] = (pair[0] - pair[1]) / (2.0 * step_ang)
    return ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=masses,
        dalpha_dx=dalpha,
        polarizability_ang3=polarizability_au(mf) * BOHR3_TO_ANG3,
        energy_hartree=float(energy),
        provenance=Provenance(
            source_kind="pyscf (test helper)",
            program="PySCF",
            method="HF" if xc is None else xc.upper(),
            basis=basis + (" (Cartesian d)" if cart else ""),
            notes=(f"central differences of alpha, step {step_ang} angstrom",),
        ),
    )


#: Water at its HF/STO-3G minimum (optimised with :func:`optimize` from the experimental
#: geometry; r(OH) = 0.9894 Å, HOH = 100.0°), in Å.
WATER_HF_STO3G = "O 0 0 0.150168813; H 0 0.758079582 -0.485634407; H 0 -0.758079582 -0.485634407"
