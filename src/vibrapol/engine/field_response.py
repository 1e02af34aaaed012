"""Field derivatives of the closed-shell RHF/RKS density by coupled-perturbed HF/KS.

First-order (three) and second-order (six) responses of the occupied-space projector to a
uniform electric field, as the AO density D and energy-weighted density W and their first and
second field derivatives: the inputs of the analytic ∂α/∂x of :mod:`vibrapol.engine.analytic`.
The equations are derived in ``docs/analytic-raman.md``.

For Kohn–Sham, ``mf.gen_response`` includes the XC kernel (and the hybrid's share of
exchange) in G, and the second-order equations get the XC third derivative
(:func:`vibrapol.engine.analytic_xc.kernel_derivative_fock`).

Scope: closed-shell RHF and RKS (LDA, GGA, global hybrids); :func:`check_supported` refuses
the rest.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.engine.analytic_xc import kernel_derivative_fock
from vibrapol.engine.fieldgrad import dipole_integrals
from vibrapol.engine.polarizability import CPHF_MAX_CYCLE, CPHF_TOL
from vibrapol.engine.scf import EngineConvergenceError, EngineInputError

#: Field component pairs (a, b), a ≤ b, of the second-order responses.
PAIRS = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))


@dataclass(frozen=True)
class FieldDensityDerivatives:
    """Field derivatives of the AO density and energy-weighted density at F = 0.

    All matrices are total (both spins) closed-shell quantities in the AO basis, symmetric.

    Attributes
    ----------
    density : ndarray (nao, nao)
        D = 2 C_occ C_occᵀ.
    energy_weighted : ndarray (nao, nao)
        W = 2 Σ_i ε_i c_i c_iᵀ.
    d1, w1 : ndarray (3, nao, nao)
        ∂D/∂F_a, ∂W/∂F_a.
    d2, w2 : ndarray (3, 3, nao, nao)
        ∂²D/∂F_a∂F_b, ∂²W/∂F_a∂F_b; with the nuclear responses given, their parts fixed by
        the first-order responses only (the second-order vo block left out).
    relaxation : ndarray (3N, 6) or None
        With the nuclear responses given: the contribution of the left-out second-order vo
        blocks to ∂³E/∂x∂F_a∂F_b, [coordinate, pair of :data:`PAIRS`], au.
    """

    density: np.ndarray
    energy_weighted: np.ndarray
    d1: np.ndarray
    w1: np.ndarray
    d2: np.ndarray
    w2: np.ndarray
    relaxation: np.ndarray | None = None


def check_supported(mf) -> None:
    """Raise :class:`EngineInputError` unless ``mf`` is a converged closed-shell RHF or RKS.

    Kohn–Sham functionals are limited to LDA, GGA and global hybrids
    (:func:`vibrapol.engine.analytic_xc.xc_scope`).
    """
    from pyscf import dft, scf

    if not isinstance(mf, scf.hf.RHF) or isinstance(mf, scf.rohf.ROHF):
        raise EngineInputError(
            "the analytic polarizability derivatives need a closed-shell restricted "
            "Hartree–Fock or Kohn–Sham calculation; use the field or cartesian route"
        )
    extras = ("with_solvent", "with_df", "with_x2c")
    if any(getattr(mf, name, None) for name in extras) or mf.mol.has_ecp() or mf.mol._pseudo:
        raise EngineInputError(
            "the analytic polarizability derivatives do not handle solvent models, density "
            "fitting, relativistic Hamiltonians or pseudopotentials; use the field or "
            "cartesian route"
        )
    if isinstance(mf, dft.rks.KohnShamDFT):
        from vibrapol.engine.analytic_xc import xc_scope

        xc_scope(mf)
    if not mf.converged:
        raise EngineInputError("the SCF is not converged; analytic derivatives need it")


#: Residual norm to which :func:`field_density_derivatives` solves its nine responses.  Measured
#: (ethanol 3-21G, against 1e-10): ∂α/∂x changes by 8.6e-10 (B3LYP) and 2.3e-9 (HF) of its
#: largest element, with 14 instead of 20 (B3LYP) and 19 instead of 24 (HF) solver steps; the
#: route's target is 1e-4, and its agreement with a tight reference 2e-6 (docs/analytic-raman.md).
ANALYTIC_RESPONSE_TOL = 1e-8


def solve_response(
    fvind,
    delta: np.ndarray,
    rhs: np.ndarray,
    x0: np.ndarray | None = None,
    tol: float = CPHF_TOL,
) -> np.ndarray:
    """Solve (ε_v − ε_o) X + G[X]_vo = −rhs for each right-hand side (k, nvir, nocc).

    ``x0``: a starting solution (same shape as ``rhs``), else −rhs / (ε_v − ε_o); ``tol``: the
    residual norm each right-hand side must reach (default ``CPHF_TOL``).

    Preconditioned conjugate gradients, one recurrence per right-hand side with the
    operator applied to all unconverged ones at once (one batched Fock build per step).  The
    closed-shell real response matrix is symmetric and, for a stable RHF solution, positive
    definite; the preconditioner is the orbital-energy difference.  Stops when every residual
    norm is below ``tol``.

    PySCF's ``cphf.solve`` is not used: its multi-vector Krylov solver (``lib.krylov``) left an
    error of 3e-7 au in α_xz of water HF/6-31G at an out-of-plane displacement whatever its
    tolerance (α_xz and α_zx then differ), while single right-hand sides and a direct solve
    of the full response matrix agree to 1e-10; divided by a 0.001 Å central difference that
    error becomes 1.5e-4 au in ∂α/∂x.

    Raises
    ------
    EngineConvergenceError
        When a residual is still above the tolerance after ``CPHF_MAX_CYCLE`` steps.
    """
    shape = rhs.shape
    n = shape[0]
    d = np.broadcast_to(delta, shape[1:]).reshape(-1)
    b = -np.asarray(rhs, dtype=float).reshape(n, -1)

    def apply(v: np.ndarray) -> np.ndarray:
        return d * v + fvind(v.reshape(-1, *shape[1:])).reshape(v.shape[0], -1)

    x = b / d if x0 is None else np.array(x0, dtype=float).reshape(n, -1)
    r = b - apply(x)
    z = r / d
    p = z.copy()
    rz = np.einsum("kn,kn->k", r, z)
    active = np.linalg.norm(r, axis=1) > tol
    for _ in range(CPHF_MAX_CYCLE):
        if not active.any():
            return x.reshape(shape)
        idx = np.flatnonzero(active)
        ap = apply(p[idx])
        step = rz[idx] / np.einsum("kn,kn->k", p[idx], ap)
        x[idx] += step[:, None] * p[idx]
        r[idx] -= step[:, None] * ap
        z[idx] = r[idx] / d
        rz_new = np.einsum("kn,kn->k", r[idx], z[idx])
        p[idx] = z[idx] + (rz_new / rz[idx])[:, None] * p[idx]
        rz[idx] = rz_new
        active[idx] = np.linalg.norm(r[idx], axis=1) > tol
    if active.any():
        raise EngineConvergenceError(
            f"the coupled-perturbed HF equations did not converge in {CPHF_MAX_CYCLE} steps"
        )
    return x.reshape(shape)


def solve_response_block(
    fvind,
    delta: np.ndarray,
    rhs: np.ndarray,
    tol: float,
    block_size: int | None = None,
) -> tuple[np.ndarray, np.ndarray | None]:
    """Solve (ε_v − ε_o) X + G[X]_vo = −rhs for many right-hand sides in a shared subspace.

    A Galerkin (block Krylov) solver for the symmetric positive definite response matrix A:
    the subspace V, orthonormal in the plain metric, grows each step by the residuals of the
    unconverged right-hand sides divided by the orbital-energy differences (orthogonalised
    twice against V and among themselves); X = V Y with (Vᵀ A V) Y = −Vᵀ rhs.  Each step costs
    one application of G per unconverged right-hand side, as PySCF's ``cphf.solve``, but the
    search directions of every right-hand side serve all of them, and the residual is that of
    the plain equations: measured for ethanol B3LYP/3-21G (27 right-hand sides), 6.0 vector
    applications per right-hand side to a residual of 6e-9, where PySCF's Krylov solver stops
    after 4.1 at 5e-4 whatever its tolerance and conjugate gradients
    (:func:`solve_response`) need 9.6.

    Parameters
    ----------
    fvind : callable
        (k, nvir, nocc) → G[X] for each X.  It may return a pair (vo, oo): the vo blocks
        (k, nvir, nocc) and any other linear image of X (k, …), e.g. the oo blocks, which is
        then returned for the solution too.
    delta : ndarray (nvir, nocc)
        ε_v − ε_o.
    rhs : ndarray (n, nvir, nocc)
    tol : float
        Residual norm each right-hand side must reach.
    block_size : int, optional
        Right-hand sides solved together (the subspace is shared within a block), to bound
        the memory of the subspace; default all.

    Returns
    -------
    x : ndarray (n, nvir, nocc)
    extra : ndarray (n, m) or None
        The second output of ``fvind`` at the solution, flattened per right-hand side, when
        it gives one.

    Raises
    ------
    EngineConvergenceError
        When a residual is still above ``tol`` after ``CPHF_MAX_CYCLE`` steps or the subspace
        stops growing first.
    """
    n = rhs.shape[0]
    size = n if block_size is None else max(1, int(block_size))
    xs, extras = [], []
    for start in range(0, n, size):
        x, extra = _solve_block(fvind, delta, rhs[start : start + size], tol)
        xs.append(x)
        extras.append(extra)
    return np.concatenate(xs), (None if extras[0] is None else np.concatenate(extras))


def _solve_block(fvind, delta: np.ndarray, rhs: np.ndarray, tol: float):  # noqa: ANN001, ANN202
    """One block of :func:`solve_response_block`."""
    shape = rhs.shape
    n = shape[0]
    d = np.asarray(delta, dtype=float).reshape(-1)
    b = -np.asarray(rhs, dtype=float).reshape(n, -1)
    basis = np.zeros((0, b.shape[1]))
    images = np.zeros((0, b.shape[1]))
    extra_images = None
    if not (np.linalg.norm(b, axis=1) > tol).any():  # nothing to solve: X = 0
        out = fvind(np.zeros_like(rhs))
        other = out[1] if isinstance(out, tuple) else None
        return np.zeros(shape), (None if other is None else np.reshape(other, (n, -1)))
    new = b / d
    for _ in range(CPHF_MAX_CYCLE):
        for _ in range(2):  # classical Gram–Schmidt, repeated once for orthogonality
            new -= (new @ basis.T) @ basis
        q, r = np.linalg.qr(new.T)
        # directions below 1e-12 of the largest right-hand side are numerically dependent
        new = q.T[np.abs(np.diag(r)) > 1e-12 * np.linalg.norm(b, axis=1).max()]
        if len(new) == 0:
            break
        out = fvind(new.reshape(-1, *shape[1:]))
        vo, other = out if isinstance(out, tuple) else (out, None)
        basis = np.vstack([basis, new])
        images = np.vstack([images, d * new + np.reshape(vo, (len(new), -1))])
        if other is not None:
            other = np.reshape(other, (len(new), -1))
            extra_images = other if extra_images is None else np.vstack([extra_images, other])
        projected = basis @ images.T
        y = np.linalg.solve(0.5 * (projected + projected.T), basis @ b.T)  # (m, n)
        residual = b - (images.T @ y).T
        active = np.linalg.norm(residual, axis=1) > tol
        if not active.any():
            x = (basis.T @ y).T.reshape(shape)
            if extra_images is None:
                return x, None
            return x, (extra_images.T @ y).T
        new = residual[active] / d
    raise EngineConvergenceError(
        "the coupled-perturbed equations did not converge "
        f"({CPHF_MAX_CYCLE} steps or a subspace that stopped growing)"
    )


def field_density_derivatives(
    mf,
    first_order_start: np.ndarray | None = None,
    nuclear_response: np.ndarray | None = None,
) -> FieldDensityDerivatives:
    """First and second field derivatives of D and W by coupled-perturbed HF.

    ``first_order_start``: an approximate ∂D/∂F_a (3, nao, nao) in the AO basis, for the
    perturbation +F_a r_a (the reference stage's), from which the first-order equations start;
    they are still solved to this function's tolerance.

    ``nuclear_response``: the vo blocks Uˣ (3N, nvir, nocc) of the analytic Hessian's
    first-order orbital responses to the nuclear coordinates
    (:func:`vibrapol.engine.hessian.analytic_hessian_parts`).  With them the six second-order
    equations are not solved (the 2n+1 rule): the second-order vo block X enters
    ∂³E/∂x∂F_a∂F_b only through 4⟨Lˣ, X⟩, where Lˣ = Fˣ_vo − Sˣ_vo ε_o − G[Sˣ_oo]_vo is the
    right-hand side of the nuclear equations, A Uˣ = −Lˣ; A is symmetric, so
    4⟨Lˣ, X⟩ = −4⟨Lˣ, A⁻¹ rhsᵃᵇ⟩ = 4⟨Uˣ, rhsᵃᵇ⟩, returned as ``relaxation``.  The Hessian's
    Fˣ carries no XC grid response, so neither does this term.

    In the orthonormal MO basis of the unperturbed SCF the occupied projector P(F) obeys
    P² = P and [f(P), P] = 0 with f = f⁰ + Σ F_c r_c + G[P].  Order by order (Pᵃ = ∂P/∂F_a,
    Pᵃᵇ = ∂²P/∂F_a∂F_b, o occupied, v virtual):

    * first order: Pᵃ_vo = Uᵃ with (ε_v − ε_o) Uᵃ + G[Pᵃ]_vo = −r_a,vo;
    * second order: idempotency fixes Pᵃᵇ_oo = −(Uᵃᵀ Uᵇ + Uᵇᵀ Uᵃ) and
      Pᵃᵇ_vv = Uᵃ Uᵇᵀ + Uᵇ Uᵃᵀ; the commutator gives for X = Pᵃᵇ_vo
      (ε_v − ε_o) X + G[X]_vo = −{fᵃ_vv Uᵇ − Uᵇ fᵃ_oo + fᵇ_vv Uᵃ − Uᵃ fᵇ_oo + G[Pᵃᵇ_oo+vv]_vo},
      fᵃ = r_a + G[Pᵃ].

    Then D = 2 C P Cᵀ and W = 2 C (P f P) Cᵀ (the Lagrangian of the orbital orthonormality,
    field included) are differentiated as products.

    References
    ----------
    J. Gerratt and I. M. Mills, J. Chem. Phys. 49, 1719 (1968) (coupled-perturbed HF);
    R. McWeeny, Rev. Mod. Phys. 32, 335 (1960) (density-matrix formulation).  The second-order
    equations are derived in ``docs/analytic-raman.md``.
    """
    check_supported(mf)
    c = mf.mo_coeff
    occ = mf.mo_occ > 0
    vir = ~occ
    eps = mf.mo_energy
    nocc, nvir = int(occ.sum()), int(vir.sum())
    nmo = c.shape[1]
    co, cv = c[:, occ], c[:, vir]
    response = mf.gen_response(hermi=1)  # AO total density → J − c_x K/2 (+ f_xc for KS)

    def g_mo(p_mo: np.ndarray) -> np.ndarray:
        """G[P] in the MO basis for symmetric MO matrices P (…, nmo, nmo)."""
        p_mo = np.asarray(p_mo).reshape(-1, nmo, nmo)
        dm = 2.0 * (c @ p_mo @ c.T)
        return c.T @ np.asarray(response(dm)) @ c

    def fvind(x: np.ndarray) -> np.ndarray:
        x = x.reshape(-1, nvir, nocc)
        dm = 2.0 * (cv @ x @ co.T)
        v = np.asarray(response(dm + dm.transpose(0, 2, 1)))
        return (cv.T @ v @ co).reshape(x.shape[0], -1)

    delta = eps[vir][:, None] - eps[occ][None, :]

    def solve(rhs: np.ndarray, x0: np.ndarray | None = None) -> np.ndarray:
        return solve_response(fvind, delta, rhs, x0, ANALYTIC_RESPONSE_TOL)

    def embed(vo: np.ndarray) -> np.ndarray:
        """Symmetric MO matrix with vo block ``vo`` and ov block its transpose."""
        p = np.zeros(vo.shape[:-2] + (nmo, nmo))
        p[..., vir[:, None] & occ[None, :]] = vo.reshape(vo.shape[:-2] + (-1,))
        return p + np.swapaxes(p, -1, -2)

    def ao(m: np.ndarray) -> np.ndarray:
        return 2.0 * (c @ m @ c.T)

    r_mo = c.T @ dipole_integrals(mf.mol) @ c
    r_vo = r_mo[:, vir][:, :, occ]
    u1, g1 = None, None
    if first_order_start is not None and np.shape(first_order_start) == (3, *c.shape[:1] * 2):
        # D¹ = 2 C P¹ Cᵀ with P¹_vo = U: U = ½ C_vᵀ S D¹ S C_o (orthonormal MOs)
        s = mf.get_ovlp()
        u1 = 0.5 * (cv.T @ s) @ np.asarray(first_order_start) @ (s @ co)
        # G[P¹] is needed in full below; its vo block is also the start's residual check
        # (the reference stage's start is usually solved already: one response, not two)
        g1 = g_mo(embed(u1))
        residual = delta * u1 + g1[:, vir][:, :, occ] + r_vo
        if (np.linalg.norm(residual.reshape(3, -1), axis=1) > ANALYTIC_RESPONSE_TOL).any():
            u1, g1 = solve(r_vo, u1), None
    if u1 is None:
        u1 = solve(r_vo)  # (3, nvir, nocc)
    p1 = embed(u1)
    f1 = r_mo + (g_mo(p1) if g1 is None else g1)  # (3, nmo, nmo)
    f0 = np.diag(eps)
    p0 = np.diag(occ.astype(float))

    known = np.zeros((len(PAIRS), nmo, nmo))
    rhs = np.zeros((len(PAIRS), nvir, nocc))
    for k, (a, b) in enumerate(PAIRS):
        ua, ub = u1[a], u1[b]
        known[k][np.ix_(occ, occ)] = -(ua.T @ ub + ub.T @ ua)
        known[k][np.ix_(vir, vir)] = ua @ ub.T + ub @ ua.T
        fa_vv, fa_oo = f1[a][np.ix_(vir, vir)], f1[a][np.ix_(occ, occ)]
        fb_vv, fb_oo = f1[b][np.ix_(vir, vir)], f1[b][np.ix_(occ, occ)]
        rhs[k] = fa_vv @ ub - ub @ fa_oo + fb_vv @ ua - ua @ fb_oo
    # Kohn–Sham: the XC potential is not linear in the density; its second field derivative
    # adds ∫ φμ φν k·uᵃ·uᵇ to f^ab beyond the kernel applied to Pᵃᵇ (zero for HF).
    kxc = c.T @ kernel_derivative_fock(mf, ao(p0), ao(p1)) @ c
    f2_known = g_mo(known) + kxc
    rhs += f2_known[:, vir][:, :, occ]
    relaxation = None
    if nuclear_response is None:
        p2_pairs = known + embed(solve(rhs))
        f2_pairs = g_mo(p2_pairs) + kxc
    else:
        relaxation = 4.0 * np.einsum("xvo,kvo->xk", nuclear_response, rhs)
        p2_pairs, f2_pairs = known, f2_known

    def pfp1(a: int) -> np.ndarray:
        return p1[a] @ f0 @ p0 + p0 @ f1[a] @ p0 + p0 @ f0 @ p1[a]

    def pfp2(k: int, a: int, b: int) -> np.ndarray:
        p2, f2 = p2_pairs[k], f2_pairs[k]
        out = p2 @ f0 @ p0 + p0 @ f2 @ p0 + p0 @ f0 @ p2
        for x, y in ((a, b), (b, a)):
            out += p1[x] @ f1[y] @ p0 + p1[x] @ f0 @ p1[y] + p0 @ f1[x] @ p1[y]
        return out

    nao = c.shape[0]
    d2 = np.zeros((3, 3, nao, nao))
    w2 = np.zeros((3, 3, nao, nao))
    for k, (a, b) in enumerate(PAIRS):
        d2[a, b] = d2[b, a] = ao(p2_pairs[k])
        w2[a, b] = w2[b, a] = ao(pfp2(k, a, b))
    return FieldDensityDerivatives(
        density=ao(p0),
        energy_weighted=ao(p0 @ f0 @ p0),
        d1=ao(p1),
        w1=ao(np.array([pfp1(a) for a in range(3)])),
        d2=d2,
        w2=w2,
        relaxation=relaxation,
    )
