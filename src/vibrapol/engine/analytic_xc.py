"""Exchange–correlation parts of the analytic ∂α/∂x for closed-shell Kohn–Sham DFT.

The closed-shell XC energy on a grid is E_xc = Σ_g w_g e(u_g), u = (ρ, ∇ρ) the density and
(GGA) its gradient at grid point g.  Its part of the nuclear gradient, with the grid moving with
the atoms as in PySCF's ``grid_response`` (the field route's gradients), is for x = R_Aκ

    g_xc,x(D) = Σ_g w_g v_g·∂ₓu_g[D] + [A owns g] Σ_g w_g v_g·∇u_g[D] + Σ_g (∂ₓw_g) e_g,

v = ∂e/∂u, ∂ₓu[D] the derivative of u through the basis functions of atom A only; the second
sum is the motion of the points of atom A's own grid, the third that of the Becke weights.  Each
term is linear in the contracted density D and in the grid "potential" v, so its second field
derivative at F = 0 splits, with f = ∂²e/∂u², k = ∂³e/∂u³ and uᵃ = u[Dᵃ], into

* ``xc_potential``         T(v, Dᵃᵇ)
* ``xc_kernel_relaxed``    T(f·uᵃᵇ, D)
* ``xc_kernel_response``   T(f·uᵃ, Dᵇ) + T(f·uᵇ, Dᵃ)
* ``xc_kernel_derivative`` T(k·uᵃ·uᵇ, D)
* ``xc_grid_response``     the point motion of all four and Σ_g ∂ₓw_g (v·uᵃᵇ + uᵃ·f·uᵇ),

T(·, ·) the fixed-grid (basis-function) contraction.  The response equations need one more
piece, the second field derivative of the XC potential matrix beyond the kernel,
∫ φμ φν k·uᵃ·uᵇ (:func:`kernel_derivative_fock`).  The derivatives of e come from libxc through
PySCF's ``eval_xc_eff`` (derivatives with respect to (ρ, ∇ρ) directly, no σ chain rule).

PySCF's own helpers are not reused for the contractions: ``pyscf.grad.rks`` builds its (3, nao,
nao) gradient matrix for one potential and one density per call and re-evaluates the AO values
each time, while here 16 potentials meet D and 4 meet the nine response densities on each grid
block (one AO evaluation; the 16 as atom sums of rows, :func:`_pulled`, the 4 as matrices,
:func:`_pulled_matrices`); ``pyscf.hessian.rks`` works with the nuclear, not the field,
perturbations.  At zeroth order the code gives PySCF's XC gradient (with and without grid
response) to 1e-15, checked in the tests.

Scope: closed-shell RKS with LDA, GGA and global hybrid functionals (:func:`xc_scope`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.engine.scf import EngineInputError

#: Grid points per block (memory: about 40 × nao × this many doubles for GGA).
BLOCK = 2000

#: Field component pairs (a, b), a ≤ b (the order of ``field_response.PAIRS``).
_PAIRS = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))

_NUMERICAL = "use the field or cartesian route"


@dataclass(frozen=True)
class XcScope:
    """What the analytic derivatives need to know of a Kohn–Sham functional."""

    xctype: str  # "LDA" or "GGA"
    exact_exchange: float  # global hybrid fraction of exact exchange (0 for pure)

    @property
    def n_components(self) -> int:
        """Length of u: 1 (ρ) for LDA, 4 (ρ, ∇ρ) for GGA."""
        return 1 if self.xctype == "LDA" else 4

    @property
    def ao_deriv(self) -> int:
        """Order of the AO derivatives the gradient contractions need."""
        return 1 if self.xctype == "LDA" else 2


def functional_unsupported(xc: str) -> str | None:
    """Why the analytic derivatives cannot handle functional ``xc`` (None: they can).

    Implemented and checked: LDA, GGA and global hybrids.  Not implemented: meta-GGA
    (the kinetic-energy density), range-separated hybrids (the attenuated exchange),
    non-local correlation (VV10/NLC).
    """
    from pyscf.dft import numint

    ni = numint.NumInt()
    xctype = ni._xc_type(xc)
    if xctype not in ("LDA", "GGA"):
        return f"it handles LDA, GGA and global hybrid functionals, not the {xctype} {xc!r}"
    if ni.rsh_and_hybrid_coeff(xc)[0] != 0:
        return f"it does not handle range-separated hybrids ({xc!r})"
    if ni.libxc.is_nlc(xc):
        return f"it does not handle non-local correlation (VV10/NLC) of {xc!r}"
    return None


def xc_scope(mf) -> XcScope:
    """The functional of a closed-shell RKS object, or :class:`EngineInputError` naming why not."""
    why = functional_unsupported(mf.xc)
    if why is None and mf.do_nlc():
        why = f"it does not handle non-local correlation (VV10/NLC) of {mf.xc!r}"
    if why is not None:
        raise EngineInputError(
            f"the analytic polarizability derivatives cannot run: {why}; {_NUMERICAL}"
        )
    ni = mf._numint
    return XcScope(ni._xc_type(mf.xc), float(ni.rsh_and_hybrid_coeff(mf.xc)[2]))


def _densities(ao: np.ndarray, dms: np.ndarray, scope: XcScope) -> np.ndarray:
    """u[D] = (ρ, ∇ρ) of symmetric densities on a block, shape (n, ncomp, ng)."""
    out = np.empty((len(dms), scope.n_components, ao.shape[1]))
    for i, dm in enumerate(dms):
        x0 = ao[0] @ dm
        out[i, 0] = np.einsum("gu,gu->g", ao[0], x0)
        for c in range(1, scope.n_components):
            out[i, c] = 2.0 * np.einsum("gu,gu->g", ao[c], x0)
    return out


def _xc_derivatives(mf, u0: np.ndarray, scope: XcScope):
    """e·ρ (energy density), v, f and k on a block, with the component axes first."""
    rho = u0[0] if scope.xctype == "LDA" else u0
    exc, v, f, k = mf._numint.eval_xc_eff(mf.xc, rho, deriv=3, xctype=scope.xctype)
    return exc * u0[0], v, f, k


def _eval_ao(mf, coords: np.ndarray, deriv: int) -> np.ndarray:
    # contiguous: PySCF returns transposed views, which NumPy multiplies without BLAS
    ao = np.ascontiguousarray(mf._numint.eval_ao(mf.mol, coords, deriv=deriv))
    return ao if deriv else ao[None]


def _blocks(n: int):
    for start in range(0, n, BLOCK):
        yield slice(start, min(start + BLOCK, n))


def kernel_derivative_fock(mf, d0: np.ndarray, d1: np.ndarray) -> np.ndarray:
    """∫ φμ φν k·uᵃ·uᵇ (with the GGA gradient terms) for the six pairs, (6, nao, nao).

    The part of ∂²v_xc/∂F_a∂F_b not given by the kernel applied to Dᵃᵇ; on the SCF's own
    grid, like the kernel of ``mf.gen_response``.  Zero-filled for Hartree–Fock objects.
    """
    nao = mf.mol.nao
    out = np.zeros((len(_PAIRS), nao, nao))
    from pyscf import dft

    if not isinstance(mf, dft.rks.KohnShamDFT):
        return out
    scope = xc_scope(mf)
    grids = mf.grids
    if grids.coords is None:
        grids.build(with_non0tab=True)
    for sl in _blocks(len(grids.weights)):
        ao = _eval_ao(mf, grids.coords[sl], scope.ao_deriv - 1)
        u = _densities(ao, np.concatenate([d0[None], d1]), scope)
        k = _xc_derivatives(mf, u[0], scope)[3]
        w = grids.weights[sl]
        for p, (a, b) in enumerate(_PAIRS):
            wv = np.einsum("ijlg,jg,lg->ig", k, u[1 + a], u[1 + b]) * w
            aow = 0.5 * wv[0][:, None] * ao[0]
            for c in range(1, scope.n_components):
                aow += wv[c][:, None] * ao[c]
            m = ao[0].T @ aow
            out[p] += m + m.T
    return out


def _pulled(ao: np.ndarray, dm: np.ndarray, wvs: np.ndarray, scope: XcScope) -> np.ndarray:
    """Y[m, κ, μ] = Σ_g Σ_i wvs[m, i, g] ∂u_i/∂(∇_κ φμ-shift) for density ``dm``.

    The fixed-grid contraction of a grid potential with the basis-function derivative of
    u[dm]: T(wv, dm)[A, κ] = −2 Σ_{μ∈A} Y[κ, μ] (∂/∂R_A = −∇ on the functions of atom A).
    """
    ncomp, ng, nao = scope.n_components, ao.shape[1], ao.shape[2]
    x = ao[:ncomp] @ dm  # X_i[g, μ] = Σ_ν ∂_iφ_ν D_νμ (i = 0: φ itself)
    flat = wvs.reshape(wvs.shape[0], ncomp * ng)
    y = np.empty((wvs.shape[0], 3, nao))
    b = np.empty((ncomp, ng, nao))
    for kap in range(3):
        np.multiply(ao[1 + kap], x[0], out=b[0])
        for i in range(1, ncomp):
            # ∇κ∇iφμ: PySCF's second-derivative order xx, xy, xz, yy, yz, zz
            np.multiply(ao[1 + kap], x[i], out=b[i])
            b[i] += ao[4 + _HESS_INDEX[kap][i - 1]] * x[0]
        y[:, kap] = flat @ b.reshape(ncomp * ng, nao)
    return y


_HESS_INDEX = ((0, 1, 2), (1, 3, 4), (2, 4, 5))


def _pulled_matrices(ao: np.ndarray, wvs: np.ndarray, scope: XcScope) -> np.ndarray:
    """M[m, κ, μ, ν] with Σ_ν M[m, κ, μ, ν] D_νμ = :func:`_pulled` (m, κ, μ) for any D.

    M = ∫ ∇κφμ (v₀ φν + Σ_i v_i ∇_iφν) + (Σ_i v_i ∇κ∇_iφμ) φν: the matrix PySCF's RKS
    gradient builds for one potential, worth building when it meets several densities.
    """
    ncomp = scope.n_components
    out = np.empty((wvs.shape[0], 3, ao.shape[2], ao.shape[2]))
    for m, wv in enumerate(wvs):
        aow = wv[0][:, None] * ao[0]
        for i in range(1, ncomp):
            aow += wv[i][:, None] * ao[i]
        for kap in range(3):
            out[m, kap] = ao[1 + kap].T @ aow
            if ncomp > 1:
                second = sum(wv[i][:, None] * ao[4 + _HESS_INDEX[kap][i - 1]] for i in (1, 2, 3))
                out[m, kap] += second.T @ ao[0]
    return out


def _atom_sums(y: np.ndarray, atom_of_ao: np.ndarray, natm: int) -> np.ndarray:
    """T = −2 Σ_{μ∈A} Y over the last (AO) axis → (..., natm)."""
    out = np.zeros((natm,) + y.shape[:-1])
    np.add.at(out, atom_of_ao, np.moveaxis(-2.0 * y, -1, 0))
    return np.moveaxis(out, 0, -1)


def xc_gradient_derivatives(
    mf, d0: np.ndarray, d1: np.ndarray, d2: np.ndarray, grid_response: bool = True
) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """XC terms of ∂³E/∂x∂F_a∂F_b and ∂²E/∂x∂F_a, and the XC gradient itself.

    Parameters
    ----------
    mf : pyscf.dft.rks.RKS
    d0, d1, d2 : ndarray
        D (nao, nao), Dᵃ (3, nao, nao) and Dᵃᵇ (3, 3, nao, nao), total densities.
    grid_response : bool
        Include the motion of the grid points and weights (the field route does).

    Returns
    -------
    terms : dict
        ``xc_potential``, ``xc_kernel_relaxed``, ``xc_kernel_response``,
        ``xc_kernel_derivative``, ``xc_grid_response``, each (N, 3, 3, 3) [atom, κ, a, b].
    mixed : ndarray (N, 3, 3)
        The XC part of ∂²E/∂x∂F_a [atom, κ, a] (grid response included if asked).
    gradient : ndarray (N, 3)
        The XC part of the nuclear gradient at D (as PySCF's ``grad.rks``, for checks).
    """
    from pyscf.grad.rks import grids_response_cc

    scope = xc_scope(mf)
    mol = mf.mol
    natm = mol.natm
    grids = mf.grids
    atom_of_ao = np.concatenate(
        [np.full(p1 - p0, atom) for atom, (_, _, p0, p1) in enumerate(mol.aoslice_by_atom())]
    )

    def basis(y: np.ndarray) -> np.ndarray:
        return _atom_sums(y, atom_of_ao, natm)

    pairs_d2 = np.array([d2[a, b] for a, b in _PAIRS])
    names = ("xc_potential", "xc_kernel_relaxed", "xc_kernel_response", "xc_kernel_derivative")
    fixed = {name: np.zeros((6, 3, natm)) for name in names}
    motion = np.zeros((6, 3, natm))
    weights_term = np.zeros((6, natm, 3))
    mixed_fixed, mixed_motion = np.zeros((3, 3, natm)), np.zeros((3, 3, natm))
    mixed_weights = np.zeros((3, natm, 3))
    grad_fixed, grad_motion, grad_weights = np.zeros((3, natm)), np.zeros((3, natm)), 0.0

    for owner, (coords, weight, weight1) in enumerate(grids_response_cc(grids)):
        for sl in _blocks(len(weight)):
            ao = _eval_ao(mf, coords[sl], scope.ao_deriv)
            w = weight[sl]
            u = _densities(ao, np.concatenate([d0[None], d1, pairs_d2]), scope)
            u0, u1, u2 = u[0], u[1:4], u[4:]
            e, v, f, k = _xc_derivatives(mf, u0, scope)
            fu1 = np.einsum("ijg,ajg->aig", f, u1)  # f·uᵃ
            fu2 = np.einsum("ijg,pjg->pig", f, u2)  # f·uᵃᵇ
            ku = np.array([np.einsum("ijlg,jg,lg->ig", k, u1[a], u1[b]) for a, b in _PAIRS])
            wv0 = v * w
            y_d0 = _pulled(ao, d0, np.concatenate([wv0[None], fu2 * w, ku * w, fu1 * w]), scope)
            y_grad, y_relax, y_kder, y_f1_d0 = y_d0[0], y_d0[1:7], y_d0[7:13], y_d0[13:16]
            # the potentials v and f·uᵃ meet nine densities (Dᵃ, Dᵃᵇ): one matrix each
            mats = _pulled_matrices(ao, np.concatenate([wv0[None], fu1 * w]), scope)
            y_d1 = np.einsum("mkuv,cuv->cmku", mats, d1)  # [c, m, κ, μ]: m = 0 v, 1 + a f·uᵃ
            y_pot = np.einsum("kuv,puv->pku", mats[0], pairs_d2)
            y_resp = np.array([y_d1[b, 1 + a] + y_d1[a, 1 + b] for a, b in _PAIRS])
            y_mixed = y_d1[:, 0] + y_f1_d0  # T(v, Dᵃ) + T(f·uᵃ, D)
            blocks = {
                "xc_potential": y_pot,
                "xc_kernel_relaxed": y_relax,
                "xc_kernel_response": y_resp,
                "xc_kernel_derivative": y_kder,
            }
            for name, y in blocks.items():
                fixed[name] += basis(y)
                motion[:, :, owner] += 2.0 * y.sum(axis=-1)
            mixed_fixed += basis(y_mixed)
            mixed_motion[:, :, owner] += 2.0 * y_mixed.sum(axis=-1)
            grad_fixed += basis(y_grad)
            grad_motion[:, owner] += 2.0 * y_grad.sum(axis=-1)
            if grid_response:
                w1 = weight1[:, :, sl]
                e2 = np.array(
                    [
                        np.einsum("ig,ig->g", v, u2[p]) + np.einsum("ig,ig->g", fu1[a], u1[b])
                        for p, (a, b) in enumerate(_PAIRS)
                    ]
                )
                weights_term += np.einsum("nkg,pg->pnk", w1, e2)
                mixed_weights += np.einsum("nkg,ag->ank", w1, np.einsum("ig,aig->ag", v, u1))
                grad_weights = grad_weights + np.einsum("nkg,g->nk", w1, e)

    def unpack(pairs: np.ndarray) -> np.ndarray:
        """(6, natm, 3) → (natm, 3, 3, 3) symmetric in a, b."""
        out = np.zeros((natm, 3, 3, 3))
        for p, (a, b) in enumerate(_PAIRS):
            out[:, :, a, b] = out[:, :, b, a] = pairs[p]
        return out

    terms = {name: unpack(fixed[name].transpose(0, 2, 1)) for name in names}
    grid = np.zeros((natm, 3, 3, 3))
    mixed = mixed_fixed.transpose(2, 1, 0)  # [a, κ, A] → [A, κ, a]
    gradient = grad_fixed.T
    if grid_response:
        grid = unpack(motion.transpose(0, 2, 1) + weights_term)
        mixed = mixed + mixed_motion.transpose(2, 1, 0) + mixed_weights.transpose(1, 2, 0)
        gradient = gradient + grad_motion.T + grad_weights
    terms["xc_grid_response"] = grid
    return terms, mixed, gradient
