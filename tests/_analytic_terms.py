"""Shared by the analytic ∂α/∂x tests: small geometries and the integrals behind each term.

The geometries are our own rounded values (Å).  :func:`term_integrals` gives, for densities
held fixed, the quantity whose derivative with respect to a nuclear coordinate each named HF
term of :class:`vibrapol.engine.analytic.AlphaDerivativeTerms` is, built from PySCF's integrals
(``get_hcore``, ``get_jk``, ``int1e_ovlp``, ``int1e_r``), the outside reference of the checks.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

#: Water near its equilibrium geometry (Å), C2v.
WATER = [("O", (0.0, 0.0, 0.1173)), ("H", (0.0, 0.7572, -0.4692)), ("H", (0.0, -0.7572, -0.4692))]
#: Hydrogen peroxide with unequal O–H bonds and a 105° dihedral: no symmetry (C1), Å.
PEROXIDE_C1 = [
    ("O", (0.0, 0.7375, -0.0528)),
    ("O", (0.0, -0.7375, -0.0528)),
    ("H", (0.8190, 0.8170, 0.4220)),
    ("H", (-0.7480, -0.9400, 0.5100)),
]


def term_integrals(dens) -> dict[str, Callable]:  # noqa: ANN001
    """Term name → f(mol), the (3, 3) [a, b] quantity whose x-derivative the term is.

    core: Tr[Dᵃᵇ h]; relaxed two-electron: Tr[Dᵃᵇ G[D]]; response two-electron: Tr[Dᵃ G[Dᵇ]];
    overlap: −Tr[Wᵃᵇ S]; dipole integrals: Tr[Dᵇ r_a] + Tr[Dᵃ r_b], r about the fixed frame
    origin.  ``dens``: :class:`~vibrapol.engine.field_response.FieldDensityDerivatives`.
    """
    from pyscf import scf

    from vibrapol.engine.fieldgrad import dipole_integrals

    d0, d1, d2, w2 = dens.density, dens.d1, dens.d2, dens.w2

    def veff(mol, dm):  # noqa: ANN001, ANN202
        vj, vk = scf.hf.get_jk(mol, dm, hermi=1)
        return vj - 0.5 * vk

    def dipole(m):  # noqa: ANN001, ANN202
        r = dipole_integrals(m)
        return np.einsum("apq,bpq->ab", r, d1) + np.einsum("apq,bpq->ba", r, d1)

    return {
        "core_hamiltonian": lambda m: np.einsum("pq,abpq->ab", scf.hf.get_hcore(m), d2),
        "two_electron_relaxed": lambda m: np.einsum("pq,abpq->ab", veff(m, d0), d2),
        "two_electron_response": lambda m: np.einsum("apq,bpq->ab", d1, veff(m, d1)),
        "overlap": lambda m: -np.einsum("pq,abpq->ab", m.intor("int1e_ovlp"), w2),
        "dipole_integrals": dipole,
    }


def tight_scf(atoms, basis: str, method: str):  # noqa: ANN001, ANN201
    """The engine's SCF object for ``method`` (its grid), converged to 1e-12 / 1e-9."""
    from pyscf import gto

    from vibrapol.engine.scf import MethodSpec, build_scf, converge

    mol = gto.M(atom=atoms, basis=basis, unit="Angstrom", verbose=0)
    mf = converge(build_scf(mol, MethodSpec(method, basis)), None)
    mf.conv_tol, mf.conv_tol_grad = 1e-12, 1e-9
    mf.kernel(dm0=mf.make_rdm1())
    assert mf.converged
    return mf
