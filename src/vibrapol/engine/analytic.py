"""Analytic Cartesian polarizability derivatives ∂α/∂x of a closed-shell RHF or RKS wavefunction.

In a uniform field F the analytic nuclear gradient of a closed-shell SCF energy is, with the
field-dependent density D(F) and energy-weighted density W(F) (the basis does not depend on F),

    g_x(F) = Tr[D hˣ] + B_x(D, D) − Tr[W Sˣ] + Σ_c F_c Tr[D r_cˣ] + V_nnˣ − Z_A F_κ,

where hˣ, Sˣ and r_cˣ are the derivatives of the core-Hamiltonian, overlap and dipole integrals
with respect to the nuclear coordinate x = R_Aκ, and B_x(D, D′) is the symmetric bilinear form of
the two-electron derivative integrals whose diagonal B_x(D, D) is the gradient's two-electron
term.  Differentiating g_x twice with respect to the field, at F = 0,

    ∂³E/∂x∂F_a∂F_b = Tr[Dᵃᵇ hˣ] + 2 B_x(Dᵃᵇ, D)            (core and relaxed two-electron)
                    + 2 B_x(Dᵃ, Dᵇ)                          (response two-electron)
                    − Tr[Wᵃᵇ Sˣ]                             (overlap)
                    + Tr[Dᵇ r_aˣ] + Tr[Dᵃ r_bˣ]              (dipole integrals),

and ∂α_ab/∂x = −∂³E/∂x∂F_a∂F_b; likewise ∂μ_a/∂x = −∂²E/∂x∂F_a.  Dᵃ, Wᵃ come from the three
first-order coupled-perturbed HF solutions (those of the polarizability), Dᵃᵇ, Wᵃᵇ from six
second-order ones (:func:`field_density_derivatives`).  No response to the 3N nuclear
perturbations is solved: the cost is 9 field responses plus gradient-like contractions, nearly
independent of the number of atoms.  The derivation, its references and the checks are in
``docs/analytic-raman.md``.

For Kohn–Sham, B_x carries the hybrid's share of exchange only, the responses include the XC
kernel (and its derivative at second order), and the XC gradient term adds five named terms
(:mod:`vibrapol.engine.analytic_xc`), grid response included.

Scope: closed-shell RHF and RKS with LDA, GGA or global hybrid functionals, all-electron, no
solvent model.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from vibrapol.engine.analytic_xc import xc_gradient_derivatives, xc_scope
from vibrapol.engine.field_response import (
    PAIRS,
    FieldDensityDerivatives,
    check_supported,
    field_density_derivatives,
)
from vibrapol.engine.fieldgrad import dipole_integrals
from vibrapol.units import BOHR2_TO_ANG2

__all__ = [
    "AlphaDerivativeTerms",
    "AnalyticDerivatives",
    "analytic_polarizability_derivatives",
    "check_supported",
    "derivative_terms",
    "field_density_derivatives",
]


@dataclass(frozen=True)
class AlphaDerivativeTerms:
    """The named contributions to ∂³E/∂x∂F_a∂F_b, each (N, 3, 3, 3) [atom, κ, a, b], au.

    Their sum is ∂³E/∂x∂F_a∂F_b (hartree bohr⁻¹ (au field)⁻²); ∂α/∂x is minus the sum.
    """

    core_hamiltonian: np.ndarray
    two_electron_relaxed: np.ndarray
    two_electron_response: np.ndarray
    overlap: np.ndarray
    dipole_integrals: np.ndarray
    xc_potential: np.ndarray | None = None
    xc_kernel_relaxed: np.ndarray | None = None
    xc_kernel_response: np.ndarray | None = None
    xc_kernel_derivative: np.ndarray | None = None
    xc_grid_response: np.ndarray | None = None
    orbital_relaxation: np.ndarray | None = None

    def total(self) -> np.ndarray:
        """∂³E/∂x∂F_a∂F_b, shape (N, 3, 3, 3)."""
        parts = [getattr(self, f.name) for f in fields(self)]
        return np.sum([p for p in parts if p is not None], axis=0)


@dataclass(frozen=True)
class AnalyticDerivatives:
    """Result of :func:`analytic_polarizability_derivatives`.

    Attributes
    ----------
    dalpha_dx_ang2 : ndarray (3N, 3, 3)
        ∂α/∂x in Å² (α in Å³, x in Å), coordinates atom-major as in the other routes.
    dmu_dx_e : ndarray (3N, 3)
        ∂μ/∂x in units of the elementary charge (electrons and nuclei).
    terms : AlphaDerivativeTerms
        The contributions to ∂³E/∂x∂F∂F in atomic units.
    alpha_bohr3 : ndarray (3, 3)
        The polarizability from the same first-order responses, bohr³.
    """

    dalpha_dx_ang2: np.ndarray
    dmu_dx_e: np.ndarray
    terms: AlphaDerivativeTerms
    alpha_bohr3: np.ndarray

    def stacked(self) -> np.ndarray:
        """(3N, 4, 3): rows 0–2 of each coordinate ∂α/∂x (Å²), row 3 ∂μ/∂x (e).

        The analytic route's result, stored and checkpointed like every task result.
        """
        return np.concatenate([self.dalpha_dx_ang2, self.dmu_dx_e[:, None, :]], axis=1)


def _two_electron_potentials(mol, dms: np.ndarray, exact_exchange: float) -> np.ndarray:
    """−(∂_κ μ ν|λσ)-contracted J − c_x K/2 of each density, shape (n, 3, nao, nao).

    PySCF's gradient helpers (``pyscf.grad.rhf.get_jk``/``get_j``, integrals ``int2e_ip1``,
    direct, no four-index array in memory); the nabla acts on the first (bra) function only.
    ``exact_exchange`` is c_x: 1 for HF, the hybrid fraction for DFT (0: J alone).
    """
    from pyscf.grad import rhf as rhf_grad

    if exact_exchange == 0:
        return np.asarray(rhf_grad.get_j(mol, np.asarray(dms)))
    vj, vk = rhf_grad.get_jk(mol, np.asarray(dms))
    return np.asarray(vj) - 0.5 * exact_exchange * np.asarray(vk)


def derivative_terms(
    mf, dens: FieldDensityDerivatives, grid_response: bool = True
) -> tuple[AlphaDerivativeTerms, np.ndarray]:
    """The named terms of ∂³E/∂x∂F_a∂F_b and the mixed second derivative ∂²E/∂x∂F_a.

    For Kohn–Sham the XC terms of :mod:`vibrapol.engine.analytic_xc` are added, with the
    grid moving with the atoms unless ``grid_response`` is False (for checks only: the field
    route's gradients and the displaced-geometry routes include it).

    Returns
    -------
    terms : AlphaDerivativeTerms
    d2e_dx_df : ndarray (N, 3, 3)
        ∂²E/∂R_Aκ∂F_a [atom, κ, a] in au (electrons and nuclei); ∂μ_a/∂x is minus it.
    """
    from pyscf import dft

    mol = mf.mol
    natm, nao = mol.natm, mol.nao
    hcore_deriv = mf.nuc_grad_method().hcore_generator(mol)
    s_bra = -mol.intor("int1e_ipovlp", comp=3)  # ⟨∂μ/∂R_κ|ν⟩
    with mol.with_common_orig((0.0, 0.0, 0.0)):
        irp = mol.intor("int1e_irp", comp=9).reshape(3, 3, nao, nao)
    r_bra = -irp.transpose(0, 1, 3, 2)  # ⟨∂μ/∂R_κ|r_a|ν⟩ = −⟨∇_κ μ|r_a|ν⟩
    d0, d1, d2 = dens.density, dens.d1, dens.d2
    pairs_d2 = np.array([d2[a, b] for a, b in PAIRS])
    kohn_sham = isinstance(mf, dft.rks.KohnShamDFT)
    exact_exchange = xc_scope(mf).exact_exchange if kohn_sham else 1.0
    v = _two_electron_potentials(mol, np.concatenate([d0[None], d1, pairs_d2]), exact_exchange)
    v0, v1, v2 = v[0], v[1:4], v[4:]

    shape = (natm, 3, 3, 3)
    core, relaxed, resp, ovlp, dip = (np.zeros(shape) for _ in range(5))
    mixed = np.zeros((natm, 3, 3))
    for atom, (_, _, p0, p1) in enumerate(mol.aoslice_by_atom()):
        sl = slice(p0, p1)
        h1 = hcore_deriv(atom)
        # Tr[D r_cˣ] for every c and density: 2 Σ_{μ∈A} ⟨∂μ|r_c|ν⟩ D_μν
        dip1 = 2.0 * np.einsum("ckpq,apq->kac", r_bra[:, :, sl], d1[:, sl])  # Tr[Dᵃ r_cˣ]
        for k, (a, b) in enumerate(PAIRS):
            # two-electron bilinear form B_x(D1, D2) = Σ_{μ∈A} [V(D2)·D1 + V(D1)·D2]_μ
            b_relax = np.einsum("kpq,pq->k", v0[:, sl], d2[a, b, sl]) + np.einsum(
                "kpq,pq->k", v2[k][:, sl], d0[sl]
            )
            b_resp = np.einsum("kpq,pq->k", v1[b][:, sl], d1[a, sl]) + np.einsum(
                "kpq,pq->k", v1[a][:, sl], d1[b, sl]
            )
            values = (
                (core, np.einsum("kpq,pq->k", h1, d2[a, b])),
                (relaxed, 2.0 * b_relax),
                (resp, 2.0 * b_resp),
                (ovlp, -2.0 * np.einsum("kpq,pq->k", s_bra[:, sl], dens.w2[a, b, sl])),
                (dip, dip1[:, b, a] + dip1[:, a, b]),
            )
            for target, value in values:
                target[atom, :, a, b] = target[atom, :, b, a] = value
        for a in range(3):
            mixed[atom, :, a] = (
                np.einsum("kpq,pq->k", h1, d1[a])
                + 2.0 * np.einsum("kpq,pq->k", v0[:, sl], d1[a, sl])
                + 2.0 * np.einsum("kpq,pq->k", v1[a][:, sl], d0[sl])
                - 2.0 * np.einsum("kpq,pq->k", s_bra[:, sl], dens.w1[a, sl])
                + 2.0 * np.einsum("kpq,pq->k", r_bra[a][:, sl], d0[sl])
            )
        mixed[atom] -= mol.atom_charge(atom) * np.eye(3)
    more_terms: dict[str, np.ndarray] = {}
    if kohn_sham:
        more_terms, xc_mixed, _ = xc_gradient_derivatives(mf, d0, d1, d2, grid_response)
        mixed = mixed + xc_mixed
    if dens.relaxation is not None:
        relaxation = np.zeros(shape)
        for k, (a, b) in enumerate(PAIRS):
            relaxation[..., a, b] = relaxation[..., b, a] = dens.relaxation[:, k].reshape(natm, 3)
        more_terms["orbital_relaxation"] = relaxation
    return AlphaDerivativeTerms(core, relaxed, resp, ovlp, dip, **more_terms), mixed


def analytic_polarizability_derivatives(
    mf,
    first_order_start: np.ndarray | None = None,
    nuclear_response: np.ndarray | None = None,
) -> AnalyticDerivatives:
    """∂α/∂x and ∂μ/∂x of a converged closed-shell RHF or RKS calculation, analytically.

    Parameters
    ----------
    mf : pyscf.scf.hf.RHF or pyscf.dft.rks.RKS
        Converged closed-shell restricted Hartree–Fock or Kohn–Sham (LDA, GGA, global hybrid)
        object (tightly converged: the responses are solved to a residual of 1e-8, and the
        SCF's own error enters linearly).
    first_order_start : ndarray (3, nao, nao), optional
        An approximate ∂D/∂F (the reference stage's); only the start of the first-order
        equations (:func:`~vibrapol.engine.field_response.field_density_derivatives`).
    nuclear_response : ndarray (3N, nvir, nocc), optional
        The analytic Hessian's orbital responses to the nuclear coordinates (vo blocks, from
        :func:`vibrapol.engine.hessian.analytic_hessian_parts`).  With them
        the six second-order field equations are not solved (2n+1 rule; the orbital
        relaxation term then carries no XC grid response, as the Hessian's).

    Returns
    -------
    AnalyticDerivatives

    Raises
    ------
    EngineInputError
        For meta-GGA, range-separated or VV10 functionals, open-shell, solvated, density-fitted
        or pseudopotential calculations (not implemented).

    References
    ----------
    A. Komornicki and J. W. McIver, J. Chem. Phys. 70, 2014 (1979) (∂α/∂x as a field
    derivative of the gradient); M. J. Frisch, Y. Yamaguchi, J. F. Gaw, H. F. Schaefer III and
    J. S. Binkley, J. Chem. Phys. 84, 531 (1986) (analytic Raman intensities; cited from
    memory).  See ``docs/analytic-raman.md`` for the derivation.
    """
    dens = field_density_derivatives(mf, first_order_start, nuclear_response)
    terms, mixed = derivative_terms(mf, dens)
    natm = mf.mol.natm
    dalpha = -terms.total().reshape(3 * natm, 3, 3)
    dalpha = 0.5 * (dalpha + dalpha.transpose(0, 2, 1))
    alpha = -np.einsum("apq,bpq->ab", dipole_integrals(mf.mol), dens.d1)
    return AnalyticDerivatives(
        dalpha_dx_ang2=dalpha * BOHR2_TO_ANG2,
        dmu_dx_e=-mixed.reshape(3 * natm, 3),
        terms=terms,
        alpha_bohr3=0.5 * (alpha + alpha.T),
    )
