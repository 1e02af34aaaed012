"""PySCF's PCM with the cavity's work done once per geometry instead of at every call.

Why
---
PySCF 2.14's :class:`pyscf.solvent.pcm.PCM` solves its surface equations K q = R v with
``numpy.linalg.solve`` twice per SCF iteration and twice per coupled-perturbed product
(factorising the dense K, of the order of the number of surface points, anew each time),
and recomputes the three-centre integrals between the basis and the surface charges, twice
per call as well.  For water with HF/6-31G* these two were two thirds of a solvated run
(measured with cProfile: docs/engine-models.md, "Cost").  K, R and the integrals depend on
the cavity only (the geometry, the radii and ε), not on the density.

What changes
------------
:class:`CachedPCM` is the same model: PySCF builds the surface and the matrices exactly as
before; the subclass keeps the LU factorisation of K (solving K x = b and Kᵀ x = b from it)
and, while it fits in :data:`INT3C_CACHE_MB`, the three-centre integrals (lower triangle),
contracted by matrix products.  Results agree with PySCF's own code to rounding
(tests/test_engine_pcm_cost.py: energies, gradients, Hessian and α within 1e-10 relative).
The caches live in ``_intermediates``, which PySCF clears whenever the molecule changes
(``reset``).  The optical copy of the polarizability's response shares the surface, the
matrices S, D, A and the integrals, and only recomputes K and R with ε∞.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
from pyscf import df, gto, lib
from pyscf.solvent import pcm

#: Largest three-centre integral cache kept per PCM object, in MB (lower triangle,
#: nao (nao + 1) / 2 × surface points × 8 bytes: 57 MB for benzene with 6-31G*, 1538
#: surface points); above it, or above a quarter of PySCF's ``max_memory``, the integrals
#: are recomputed at every call, as PySCF does.
INT3C_CACHE_MB = 1000.0

#: The models whose K and R :meth:`CachedPCM.optical_copy` rebuilds for another ε (the
#: engine uses IEF-PCM only; another model is built from scratch by PySCF).
_IEF = ("IEF-PCM", "IEFPCM")


class CachedPCM(pcm.PCM):
    """:class:`pyscf.solvent.pcm.PCM` with K factorised once and the integrals kept."""

    def _lu(self):  # noqa: ANN202
        """LU factorisation of K (computed at the first solve after a build)."""
        if not self._intermediates:
            self.build()
        lu = self._intermediates.get("vibrapol_lu")
        if lu is None:
            lu = scipy.linalg.lu_factor(self._intermediates["K"], check_finite=False)
            self._intermediates["vibrapol_lu"] = lu
        return lu

    def _charges(self, v_grids: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Charges q = K⁻¹ R v and q_sym = (q + Rᵀ K⁻ᵀ v) / 2, one row per set."""
        lu = self._lu()
        r = self._intermediates["R"]
        q = scipy.linalg.lu_solve(lu, r @ v_grids.T, check_finite=False).T
        vk_1 = scipy.linalg.lu_solve(lu, v_grids.T, trans=1, check_finite=False)
        qt = (r.T @ vk_1).T
        return q, 0.5 * (q + qt)

    def _int3c(self) -> np.ndarray | None:
        """(ij|L) of the basis with the surface charges, lower triangle (npair, ngrid), or None.

        None when it would exceed :data:`INT3C_CACHE_MB` (or a quarter of the object's
        ``max_memory``): the caller then uses PySCF's code.
        """
        if not self._intermediates:
            self.build()
        cached = self._intermediates.get("vibrapol_int3c", False)
        if cached is not False:
            return cached
        mol = self.mol
        nao = mol.nao
        ngrids = self.surface["grid_coords"].shape[0]
        limit_mb = min(INT3C_CACHE_MB, 0.25 * self.max_memory)  # max_memory: PySCF's, MB
        if nao * (nao + 1) // 2 * ngrids * 8 / 1e6 > limit_mb:
            self._intermediates["vibrapol_int3c"] = None
            return None
        fakemol = gto.fakemol_for_charges(
            self.surface["grid_coords"], expnt=self.surface["charge_exp"] ** 2
        )
        fakemol.cart = mol.cart
        v = df.incore.aux_e2(mol, fakemol, intor=mol._add_suffix("int3c2e"), aosym="s2ij")
        self._intermediates["vibrapol_int3c"] = v
        return v

    def _get_v(self, dms):  # noqa: ANN001, ANN202
        """Electrostatic potential of the densities ``dms`` on the surface (PySCF's meaning)."""
        v = self._int3c()
        if v is None:
            return super()._get_v(dms)
        nao = dms.shape[-1]
        dms = np.asarray(dms).reshape(-1, nao, nao)
        # Σ_ij (ij|L) D_ij over the lower triangle: off-diagonal pairs carry D_ij + D_ji.
        packed = lib.pack_tril(dms + dms.transpose(0, 2, 1))
        diag = np.arange(nao)
        packed[:, diag * (diag + 1) // 2 + diag] *= 0.5
        return packed @ v

    def _get_vmat(self, q):  # noqa: ANN001, ANN202
        """Fock contribution −Σ_L (ij|L) q_L of surface charges ``q`` (PySCF's meaning)."""
        v = self._int3c()
        if v is None:
            return super()._get_vmat(q)
        ngrids = self.surface["grid_coords"].shape[0]
        q = np.asarray(q).reshape(-1, ngrids)
        return -lib.unpack_tril(q @ v.T)

    def _get_vind(self, dms):  # noqa: ANN001, ANN202
        """PySCF's ``_get_vind`` (same equations and stored intermediates), factorised once."""
        if not self._intermediates:
            self.build()
        nao = dms.shape[-1]
        dms = dms.reshape(-1, nao, nao)
        if dms.shape[0] == 2:
            dms = (dms[0] + dms[1]).reshape(-1, nao, nao)
        v_grids = self.v_grids_n - self._get_v(dms)
        q, q_sym = self._charges(v_grids)
        vmat = self._get_vmat(q_sym)
        epcm = 0.5 * np.dot(q_sym[0], v_grids[0])
        self._intermediates["q"] = q[0]
        self._intermediates["q_sym"] = q_sym[0]
        self._intermediates["v_grids"] = v_grids[0]
        self._intermediates["dm"] = dms
        return epcm, vmat[0]

    def _B_dot_x(self, dms):  # noqa: ANN001, ANN202, N802
        """PySCF's ``_B_dot_x`` (response of the surface charges), factorised once."""
        if not self._intermediates:
            self.build()
        out_shape = dms.shape
        nao = dms.shape[-1]
        dms = dms.reshape(-1, nao, nao)
        _, q_sym = self._charges(-self._get_v(dms))
        return self._get_vmat(q_sym).reshape(out_shape)

    def optical_copy(self, eps: float) -> CachedPCM:
        """The same cavity with dielectric constant ``eps`` (sharing surface and integrals)."""
        fast = self.copy()
        fast.eps = eps
        if self.method.upper() not in _IEF:
            fast.reset()
            fast.build()
            return fast
        if not self._intermediates:
            self.build()
        mine = self._intermediates
        s, d, a = mine["S"], mine["D"], mine["A"]
        # PySCF's IEF-PCM matrices (pyscf.solvent.pcm.PCM.build) for the new ε.
        f_epsilon = (eps - 1.0) / (eps + 1.0) if eps != float("inf") else 1.0
        da = d * a
        k = s - f_epsilon / (2.0 * pcm.PI) * np.dot(da, s)
        r = -f_epsilon * (np.eye(k.shape[0]) - 1.0 / (2.0 * pcm.PI) * da)
        fast._intermediates = {"S": s, "D": d, "A": a, "K": k, "R": r, "f_epsilon": f_epsilon}
        if "vibrapol_int3c" in mine:
            fast._intermediates["vibrapol_int3c"] = mine["vibrapol_int3c"]
        return fast
