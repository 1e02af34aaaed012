"""Analytic Hessian of an SCF (RHF/RKS, or UHF/UKS for open shells), (3N, 3N) atom-major.

PySCF's analytic second derivatives (Q. Sun et al., J. Chem. Phys. 153, 024109 (2020)).  For
closed-shell RHF/RKS without a solvent model the 3N coupled-perturbed equations of the nuclear
displacements are solved by :func:`~vibrapol.engine.field_response.solve_response_block` to a
residual of :data:`NUCLEAR_RESPONSE_TOL` instead of PySCF's Krylov solver, whose solutions stop
where its subspace becomes linearly dependent (measured: residual norms 3.5e-5 for benzene and
1.6e-4 for water at B3LYP/6-31G*, 5e-4 for ethanol B3LYP/3-21G, whatever tolerance is asked);
the other terms are PySCF's, called one by one.  The accurate responses are kept: the analytic
route contracts them with the field responses (2n+1 rule, :mod:`vibrapol.engine.analytic`).
"""

from __future__ import annotations

import numpy as np

#: Residual norm of the nuclear coupled-perturbed equations of the closed-shell Hessian.
#: Measured (ethanol B3LYP/3-21G, 27 right-hand sides): 4.9 applications of the response per
#: right-hand side, against 4.1 for PySCF's Krylov solver, which stops at residuals of 5e-4;
#: 4.2 at 1e-5, 5.2 at 1e-7.  The Hessian moves with the responses' error, by about a fifth of
#: it (water B3LYP/3-21G in blocks of 3: responses 1.9e-7 and Hessian 3.6e-8 hartree/bohr² off a
#: dense direct solve; in one block the shared subspace converges further, 1e-8 and 3e-15);
#: ∂α/∂x by the 2n+1 rule moves with it too: 2.8e-7 of its largest element (water HF/3-21G),
#: 2e-5 at PySCF's residual (water B3LYP/6-31G*).
NUCLEAR_RESPONSE_TOL = 1e-6
#: Right-hand sides solved in one shared subspace, and AO densities sent to the response
#: function at once, at most; fewer when PySCF's ``max_memory`` asks (:func:`_blocks`).
_MAX_BLOCK = 96


def analytic_hessian(mf) -> np.ndarray:
    """Cartesian Hessian of the SCF energy by PySCF's analytic second derivatives.

    Parameters
    ----------
    mf : converged pyscf RHF, RKS, UHF or UKS object (PySCF's ``hessian.uhf``/``uks`` for the
        unrestricted ones)

    Returns
    -------
    ndarray, shape (3N, 3N)
        ∂²E/∂x_i∂x_j in hartree bohr⁻², coordinates ordered (x1, y1, z1, x2, …).

    Notes
    -----
    PySCF returns the Hessian as (N, N, 3, 3) [atom i, atom j, xyz of i, xyz of j]; it is
    reordered here to (N, 3, N, 3) and flattened.  Closed shells without a solvent model:
    see :func:`analytic_hessian_parts` (the module notes say why).
    """
    if own_nuclear_solver(mf):
        return analytic_hessian_parts(mf)[0]
    hess = mf.Hessian()
    hess.verbose = 0
    return _flatten(np.asarray(hess.kernel()))


def own_nuclear_solver(mf) -> bool:
    """Whether the Hessian of ``mf`` solves its nuclear equations with our solver.

    Closed-shell RHF/RKS without a solvent model (PySCF's solvent Hessians add their own
    response terms); unrestricted and solvated calculations keep PySCF's own solver.
    """
    from pyscf import scf

    return (
        isinstance(mf, scf.hf.RHF)
        and not isinstance(mf, scf.rohf.ROHF)
        and getattr(mf, "with_solvent", None) is None
    )


def own_solver_for(spec) -> bool:  # noqa: ANN001
    """:func:`own_nuclear_solver` decided from a MethodSpec, before the SCF."""
    return not spec.is_unrestricted and spec.solvent is None


def hessian_key(spec) -> dict:  # noqa: ANN001
    """What the Hessian stage's checkpoint key records about the solver of its equations.

    Hessians solved by PySCF's Krylov solver (earlier versions) are not taken for ours.
    """
    return {"nuclear_solver": ["block", NUCLEAR_RESPONSE_TOL]} if own_solver_for(spec) else {}


def nuclear_solver_note(spec, earlier_version: bool = False) -> str:  # noqa: ANN001
    """How the Hessian of a calculation with ``spec`` (a MethodSpec) solved its 3N equations.

    ``earlier_version``: the Hessian was taken from a checkpoint row of an earlier vibrapol
    (one reference row), whose Hessian PySCF's Krylov solver solved.
    """
    if earlier_version:
        return "PySCF's analytic Hessian, from an earlier vibrapol's checkpoint"
    if own_solver_for(spec):
        return (
            "PySCF's analytic Hessian terms, its nuclear coupled-perturbed equations solved by "
            f"vibrapol's block subspace solver to a residual of {NUCLEAR_RESPONSE_TOL:g}"
        )
    return "PySCF's analytic Hessian (nuclear coupled-perturbed equations by its Krylov solver)"


def _blocks(mf, nao: int, n_vo: int) -> tuple[int, int]:  # noqa: ANN001
    """How many AO densities and right-hand sides to treat at once within PySCF's max_memory.

    A density and its potential take 2 nao² numbers (the response function needs about as
    much again); a right-hand side keeps about ten subspace vectors and their images, 20 n_vo.
    A quarter of ``max_memory`` (MB) each, at most :data:`_MAX_BLOCK`, at least 3.
    """
    budget = 0.25 * float(getattr(mf, "max_memory", 4000)) * 1e6 / 8
    dm_block = int(budget / (4 * nao * nao))
    rhs_block = int(budget / (20 * max(n_vo, 1)))
    return (max(3, min(_MAX_BLOCK, dm_block)), max(3, min(_MAX_BLOCK, rhs_block)))


def _flatten(h4: np.ndarray) -> np.ndarray:
    """(N, N, 3, 3) → symmetrised (3N, 3N), atom-major."""
    n = h4.shape[0]
    h = h4.transpose(0, 2, 1, 3).reshape(3 * n, 3 * n)
    return 0.5 * (h + h.T)


def analytic_hessian_parts(mf) -> tuple[np.ndarray, np.ndarray]:
    """The closed-shell analytic Hessian and its orbital responses to the nuclear coordinates.

    PySCF's steps called one by one: its Fock derivatives Fˣ (``make_h1``), then the 3N
    responses solved here (not by ``solve_mo1``), ``hess_elec`` with them, ``hess_nuc``, and
    dispersion.  The vo blocks Uˣ (C(x) = C (1 + Uˣ x), orthonormal MO basis) solve

        (ε_v − ε_o) Uˣ + G[Uˣ]_vo = −(Fˣ_vo − Sˣ_vo ε_o − G[Sˣ_oo]_vo),

    with the occupied block −Sˣ_oo/2 and the first-order occupied energies
    εˣ_oo = Fˣ_oo − Sˣ_oo ε_o + G[Uˣ − Sˣ_oo/2]_oo − (Sˣ_oo/2)(ε_i − ε_j), as PySCF's
    ``cphf.solve_withs1`` defines them.

    Parameters
    ----------
    mf : pyscf.scf.hf.RHF or pyscf.dft.rks.RKS
        Converged closed-shell SCF without a solvent model.

    Returns
    -------
    hessian : ndarray (3N, 3N)
        As :func:`analytic_hessian`.
    response : ndarray (3N, nvir, nocc)
        Uˣ, coordinates atom-major.
    """
    from pyscf.lib import logger

    from vibrapol.engine.field_response import solve_response_block

    mol = mf.mol
    hess = mf.Hessian()
    hess.verbose = 0
    log = logger.new_logger(hess, 0)
    mo_energy, mo_coeff, mo_occ = mf.mo_energy, mf.mo_coeff, mf.mo_occ
    atoms = range(mol.natm)
    h1ao = hess.make_h1(mo_coeff, mo_occ, None, atoms, log)

    occ = mo_occ > 0
    vir = ~occ
    co, cv = mo_coeff[:, occ], mo_coeff[:, vir]
    nocc = co.shape[1]
    eps_o = mo_energy[occ]
    s_bra = -mol.intor("int1e_ipovlp", comp=3)
    h1_rows, s1_rows = [], []
    for atom, (_, _, p0, p1) in enumerate(mol.aoslice_by_atom()):
        s1 = np.zeros_like(s_bra)  # Sˣ = ⟨∂μ|ν⟩ + ⟨μ|∂ν⟩ for the functions on the atom
        s1[:, p0:p1] += s_bra[:, p0:p1]
        s1[:, :, p0:p1] += s_bra[:, p0:p1].transpose(0, 2, 1)
        h1_rows.append(mo_coeff.T @ np.asarray(h1ao[atom]) @ co)
        s1_rows.append(mo_coeff.T @ s1 @ co)
    h1_mo, s1_mo = np.concatenate(h1_rows), np.concatenate(s1_rows)  # (3N, nmo, nocc)
    s1_oo = s1_mo[:, occ]
    response = mf.gen_response(hermi=1)  # AO total density → J − c_x K/2 (+ f_xc for KS)

    dm_block, rhs_block = _blocks(mf, mo_coeff.shape[0], (~occ).sum() * nocc)

    def g_full(dm: np.ndarray) -> np.ndarray:
        """G of AO densities, (k, nmo, nocc), ``dm_block`` densities at a time."""
        out = np.empty((len(dm), mo_coeff.shape[1], nocc))
        for i in range(0, len(dm), dm_block):
            out[i : i + dm_block] = mo_coeff.T @ np.asarray(response(dm[i : i + dm_block])) @ co
        return out

    g_s = g_full(2.0 * (co @ s1_oo @ co.T))  # G[Sˣ_oo]
    rhs = h1_mo[:, vir] - s1_mo[:, vir] * eps_o - g_s[:, vir]

    def fvind(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        dm = 2.0 * (cv @ x @ co.T)
        g = g_full(dm + dm.transpose(0, 2, 1))
        return g[:, vir], g[:, occ]

    delta = mo_energy[vir][:, None] - eps_o[None, :]
    u, g_u_oo = solve_response_block(fvind, delta, rhs, NUCLEAR_RESPONSE_TOL, rhs_block)
    assert g_u_oo is not None
    g_u_oo = g_u_oo.reshape(-1, nocc, nocc)

    mo1 = np.zeros_like(h1_mo)  # (3N, nmo, nocc), PySCF's layout in the MO basis
    mo1[:, vir] = u
    mo1[:, occ] = -0.5 * s1_oo
    mo_e1 = (
        h1_mo[:, occ]
        - s1_oo * eps_o
        + g_u_oo
        - g_s[:, occ]
        - 0.5 * s1_oo * (eps_o[:, None] - eps_o[None, :])
    )
    natm = mol.natm
    mo1_ao = (mo_coeff @ mo1).reshape(natm, 3, -1, nocc)
    mo_e1 = mo_e1.reshape(natm, 3, nocc, nocc)
    de = hess.hess_elec(
        mo_energy, mo_coeff, mo_occ, mo1=list(mo1_ao), mo_e1=list(mo_e1), h1ao=h1ao, atmlst=atoms
    )
    de = de + hess.hess_nuc(mol, atmlst=atoms)
    if mf.do_disp():
        de = de + hess.get_dispersion()
    return _flatten(np.asarray(de)), u
