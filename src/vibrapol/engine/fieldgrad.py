"""SCF energy and analytic nuclear gradient of a molecule in a uniform static electric field.

The field F (atomic units, hartree e⁻¹ bohr⁻¹) enters the Hamiltonian as the potential energy
of the charges in it, −Σ q r·F: an electron (q = −1) gets +F·r in the core Hamiltonian and
the nuclei add the constant −Σ_A Z_A F·R_A, so that

    E(F) = E(0) − μ·F − ½ F·α·F − …

with μ the total dipole moment (A. D. Buckingham, Adv. Chem. Phys. 12, 107 (1967)).  The
dipole integrals use the fixed origin of the coordinate frame; a fixed origin changes E(F)
only by a geometry-independent term linear in F, which drops out of every gradient and of
every second field derivative.

PySCF's gradient objects build the derivative of the core Hamiltonian from the kinetic and
nuclear-attraction integrals alone: they do not see a core Hamiltonian replaced on the SCF
object.  :func:`field_gradient` therefore adds the two field terms itself:

* electrons: ∂/∂R_Aκ Σ_μν D_μν F·⟨μ|r|ν⟩ = −2 Σ_a F_a Σ_{μ∈A, ν} D_μν ⟨∂_κ μ|r_a|ν⟩
  (the basis functions move with their atom; ⟨∂_κ μ|r_a|ν⟩ is PySCF's ``int1e_irp``
  transposed);
* nuclei: ∂/∂R_A (−Z_A F·R_A) = −Z_A F.

The overlap (Pulay) term needs nothing extra: it uses the energy-weighted density of the
field-perturbed orbitals.  For Kohn–Sham the response of the integration grid to the moving
atoms is included (PySCF's ``grid_response``): without it the gradient of B3LYP/STO-3G water
differs from the finite difference of the energy by 4e-6 hartree/bohr, with it by 1.5e-9, and
the displacement routes, which build a new grid at each geometry, include it implicitly.
Checked against central differences of E(F) in the tests.
"""

from __future__ import annotations

import functools

import numpy as np

from vibrapol.engine.scf import EngineConvergenceError, MethodSpec, build_scf, converge

#: SCF settings of the field calculations.  The field route divides gradient errors by F²
#: (1e-6 for F = 0.001 au), so the orbital gradient is converged 100× tighter than for the
#: displaced-geometry α (study in :mod:`vibrapol.engine.fieldplan`).
FIELD_SCF_CONV_TOL = 1e-12
#: Orbital-gradient convergence of the field SCFs.
FIELD_SCF_CONV_TOL_GRAD = 1e-9


@functools.cache
def scaled_cdiis_class():  # noqa: ANN201
    """PySCF's commutator DIIS with its linear-dependence test made scale-invariant.

    PySCF drops the directions of the DIIS matrix B (overlaps of the error vectors FDS − SDF,
    bordered by ones) whose eigenvalues are below an absolute 1e-14.  Near 1e-9 the error
    vectors have norms of ≈ 1e-8, their overlaps ≈ 1e-16, and every direction is dropped: the
    extrapolation then averages old Fock matrices and the SCF wanders at an orbital gradient
    of 3e-9 for ten or more cycles before it crosses 1e-9.  Dividing the error block by its
    largest diagonal element leaves the DIIS coefficients unchanged (they solve
    B c = −λ 1, Σ c = 1, and scaling B scales only λ) and makes the test relative.  Measured
    (docs/engine-routes.md): water HF/6-31G* field SCFs 21 → 10–11 cycles from D₀, 6–7 from
    the extrapolated start, gradients changed by ≤ 1.3e-10 hartree/bohr.
    """
    from pyscf.scf import diis

    class ScaledCDIIS(diis.CDIIS):
        def extrapolate(self, nd=None):  # noqa: ANN001, ANN202
            nd = self.get_num_vec() if nd is None else nd
            unscaled = self._H
            h = unscaled[: nd + 1, : nd + 1].copy()
            largest = np.abs(np.diag(h)[1:]).max()
            if largest > 0:
                h[1:, 1:] /= largest
            self._H = h  # PySCF's extrapolate reads the matrix from this attribute
            try:
                return super().extrapolate(nd)
            finally:
                self._H = unscaled

    return ScaledCDIIS


def dipole_integrals(mol) -> np.ndarray:
    """⟨μ|r_a|ν⟩ about the frame origin, shape (3, nao, nao), bohr."""
    with mol.with_common_orig((0.0, 0.0, 0.0)):
        return mol.intor_symmetric("int1e_r", comp=3)


def nuclear_field_energy(mol, field_au: np.ndarray) -> float:
    """−Σ_A Z_A F·R_A (hartree), the nuclei's potential energy in the field."""
    return -float(np.asarray(field_au) @ (mol.atom_charges() @ mol.atom_coords()))


def field_scf(
    mol, spec: MethodSpec, field_au: np.ndarray, dm0: np.ndarray | None = None, callback=None
):
    """A converged RHF/RKS object with +F·r added to its core Hamiltonian.

    UHF/UKS for an open-shell ``spec`` (the field acts on both spins; the gradient's field
    term takes the total density).  Its ``e_tot`` is the electronic energy plus nuclear
    repulsion; add :func:`nuclear_field_energy` for E(F).  ``callback`` is PySCF's per-cycle
    SCF callback (the benchmark records the orbital gradient with it).

    Raises
    ------
    EngineConvergenceError
        When the SCF does not converge.
    """
    f = np.asarray(field_au, dtype=float)
    mf = build_scf(mol, spec)
    mf.conv_tol = FIELD_SCF_CONV_TOL
    mf.conv_tol_grad = FIELD_SCF_CONV_TOL_GRAD
    mf.DIIS = scaled_cdiis_class()
    hcore = mf.get_hcore() + np.einsum("a,apq->pq", f, dipole_integrals(mol))
    mf.get_hcore = lambda *args, h=hcore: h
    mf.callback = callback
    mf = converge(mf, dm0)
    if not mf.converged:
        raise EngineConvergenceError(
            f"{spec.label()} SCF did not converge in the field {np.round(f, 5).tolist()} au; "
            "try a smaller --field-au or another route"
        )
    if spec.is_unrestricted:  # refuse a solution too spin-contaminated to differentiate
        from vibrapol.engine.openshell import check_scf_spin

        check_scf_spin(mf, spec, f"field {np.round(f, 5).tolist()} au")
    return mf


def tighten_scf(mf, spec: MethodSpec):
    """Converge a converged SCF further, to the field route's settings (in place).

    The reference calculation does this so that its gradient can serve as the zero-field
    point of the field stencil.
    """
    mf.conv_tol = FIELD_SCF_CONV_TOL
    mf.conv_tol_grad = FIELD_SCF_CONV_TOL_GRAD
    mf.DIIS = scaled_cdiis_class()
    mf.kernel(dm0=mf.make_rdm1())
    if not mf.converged:
        raise EngineConvergenceError(
            f"{spec.label()} SCF did not reach the tight convergence at the reference geometry"
        )
    return mf


def run_tight_scf(mol, spec: MethodSpec, dm0: np.ndarray | None = None):  # noqa: ANN001, ANN201
    """The reference SCF converged to the field route's tight criteria.

    From a starting density ``dm0`` (the optimisation's last, or the reference's) it goes to
    the tight criteria in one run; without one, or when that run does not converge, it takes
    the engine's usual path (:func:`~vibrapol.engine.scf.run_scf` with its rescue, then
    :func:`tighten_scf`).  Measured (benzene B3LYP/6-31G*, from a density at a geometry
    1e-5 Å away): 3.7 s CPU in one run against 4.5 + 5.0 s for the usual path, and 12.2 + 5.0 s
    from PySCF's guess.
    """
    from vibrapol.engine.scf import build_scf, run_scf

    if dm0 is not None:
        mf = build_scf(mol, spec)
        shape = (2, mol.nao, mol.nao) if spec.is_unrestricted else (mol.nao, mol.nao)
        if np.shape(dm0) == shape:
            mf.conv_tol = FIELD_SCF_CONV_TOL
            mf.conv_tol_grad = FIELD_SCF_CONV_TOL_GRAD
            mf.DIIS = scaled_cdiis_class()
            mf.kernel(dm0=dm0)
            if mf.converged:
                if spec.is_unrestricted:  # the same spin check as run_scf's
                    from vibrapol.engine.openshell import check_scf_spin

                    check_scf_spin(mf, spec, "reference geometry")
                return mf
    return tighten_scf(run_scf(mol, spec, dm0=dm0), spec)


def field_start_density(
    density: np.ndarray, density_response: np.ndarray | None, field_au: np.ndarray
) -> np.ndarray:
    """The start of a field SCF: D(0) + Σ_a F_a ∂D/∂F_a, or D(0) without the response.

    ``density_response`` is the CPHF response to +F_a r_a
    (:func:`~vibrapol.engine.polarizability.cphf_polarizability_response`), the same sign as
    the field term of :func:`field_scf`.  Measured with the scaled DIIS (6-31G*): field SCFs
    from 11 to 7 cycles (water HF), 8 to 5.3 (water B3LYP), 12 to 9 (benzene HF), gradients
    changed by ≤ 1.4e-10 hartree/bohr (docs/engine-routes.md, "Cheaper field tasks").
    """
    if density_response is None:
        return density
    return density + np.einsum("a,apq->pq", np.asarray(field_au, dtype=float), density_response)


def field_energy(mol, spec: MethodSpec, field_au: np.ndarray, dm0=None) -> float:
    """E(F) in hartree (electrons, nuclear repulsion and the nuclei's field energy)."""
    mf = field_scf(mol, spec, field_au, dm0)
    return float(mf.e_tot) + nuclear_field_energy(mol, field_au)


def field_gradient(mf, field_au: np.ndarray) -> np.ndarray:
    """dE(F)/dR of a converged :func:`field_scf` object, shape (N, 3), hartree/bohr.

    See the module notes for the two field terms added to PySCF's gradient.
    """
    mol = mf.mol
    f = np.asarray(field_au, dtype=float)
    grad = mf.nuc_grad_method()
    grad.verbose = 0
    if hasattr(grad, "grid_response"):
        grad.grid_response = True
    plain = grad.hcore_generator(mol)
    with mol.with_common_orig((0.0, 0.0, 0.0)):
        # irp[a, κ, μ, ν] = ⟨μ| r_a ∂_κ |ν⟩, so ⟨∂_κ μ|r_a|ν⟩ = irp[a, κ, ν, μ].
        irp = mol.intor("int1e_irp", comp=9).reshape(3, 3, mol.nao, mol.nao)
    bra_deriv = np.einsum("a,akvu->kuv", f, irp)  # Σ_a F_a ⟨∂_κ μ|r_a|ν⟩
    slices = mol.aoslice_by_atom()

    def hcore_deriv(atom: int) -> np.ndarray:
        p0, p1 = slices[atom, 2:]
        extra = np.zeros((3, mol.nao, mol.nao))
        extra[:, p0:p1] = -bra_deriv[:, p0:p1]
        return plain(atom) + extra + extra.transpose(0, 2, 1)

    grad.hcore_generator = lambda mol=None: hcore_deriv
    de = np.asarray(grad.kernel())
    return de - np.outer(mol.atom_charges(), f)
