"""The analytic ∂α/∂x by the 2n+1 rule, from the Hessian's own nuclear responses.

References:

* a dense direct solve (``numpy.linalg.solve``) of the nuclear coupled-perturbed equations,
  the response matrix built column by column from PySCF's ``gen_response``, and the Hessian
  from PySCF's own terms (``make_h1``, ``hess_elec``, ``hess_nuc``) with those solutions;
  PySCF's ``Hessian.kernel`` itself differs from it by its Krylov solver's error;
* the same ∂α/∂x with the six second-order field equations solved
  (:func:`vibrapol.engine.analytic.analytic_polarizability_derivatives` without the nuclear
  responses, itself checked against the field and Cartesian routes in
  ``test_engine_analytic_dft.py`` and ``test_engine_analytic_hf_checks.py``): the 2n+1 rule is
  an identity, so the two agree to the solvers' tolerance when the XC grid response is left out
  of both, and within the grid response of the orbital-relaxation term when it is not.
"""

from __future__ import annotations

import numpy as np
import pytest

from _analytic_terms import PEROXIDE_C1, WATER, tight_scf
from vibrapol.engine.analytic import analytic_polarizability_derivatives, derivative_terms
from vibrapol.engine.field_response import field_density_derivatives
from vibrapol.engine.hessian import analytic_hessian, analytic_hessian_parts

#: Ammonia (C3v), Å (N–H 1.012 Å, H–N–H 106.7°, common practice).
AMMONIA = [
    ("N", (0.0, 0.0, 0.1162)),
    ("H", (0.0, 0.9397, -0.2711)),
    ("H", (0.8138, -0.4699, -0.2711)),
    ("H", (-0.8138, -0.4699, -0.2711)),
]


def _responses(mf) -> np.ndarray:
    return analytic_hessian_parts(mf)[1]


def _direct(mf):
    """Uˣ by a dense direct solve, and the Hessian from PySCF's terms with them.

    The equations and the first-order occupied energies as PySCF's ``cphf.solve_withs1``
    states them; the response matrix built column by column from PySCF's ``gen_response``.
    """
    mol = mf.mol
    occ = mf.mo_occ > 0
    c = mf.mo_coeff
    co, cv = c[:, occ], c[:, ~occ]
    nocc, nvir = co.shape[1], cv.shape[1]
    eps = mf.mo_energy
    eo = eps[occ]
    response = mf.gen_response(hermi=1)
    units = np.eye(nvir * nocc).reshape(-1, nvir, nocc)
    dm = 2.0 * np.einsum("kai,pa,qi->kpq", units, cv, co)
    v = np.einsum("kpq,pa,qi->kai", response(dm + dm.transpose(0, 2, 1)), cv, co)
    delta = eps[~occ][:, None] - eo[None, :]
    matrix = v.reshape(nvir * nocc, -1).T + np.diag(delta.ravel())
    hess = mf.Hessian()
    hess.verbose = 0
    h1ao = hess.make_h1(c, mf.mo_occ)
    s_bra = -mol.intor("int1e_ipovlp", comp=3)
    mo1, mo_e1, us = [], [], []
    for atom, (_, _, p0, p1) in enumerate(mol.aoslice_by_atom()):
        m1, e1 = [], []
        for k in range(3):
            s1 = np.zeros((mol.nao, mol.nao))
            s1[p0:p1] += s_bra[k, p0:p1]
            s1[:, p0:p1] += s_bra[k, p0:p1].T
            s_oo = co.T @ s1 @ co
            g_s = c.T @ response(2.0 * co @ s_oo @ co.T) @ co
            h1 = c.T @ h1ao[atom][k] @ co
            rhs = h1[~occ] - (cv.T @ s1 @ co) * eo - g_s[~occ]
            u = np.linalg.solve(matrix, -rhs.ravel()).reshape(nvir, nocc)
            du = 2.0 * cv @ u @ co.T
            g_u = c.T @ response(du + du.T) @ co
            e1.append(h1[occ] - s_oo * eo + g_u[occ] - g_s[occ] - 0.5 * s_oo * (eo[:, None] - eo))
            m1.append(cv @ u - 0.5 * co @ s_oo)
            us.append(u)
        mo1.append(np.array(m1))
        mo_e1.append(np.array(e1))
    de = hess.hess_elec(eps, c, mf.mo_occ, mo1=mo1, mo_e1=mo_e1, h1ao=h1ao)
    h4 = np.asarray(de + hess.hess_nuc(mol))
    n = mol.natm
    h = h4.transpose(0, 2, 1, 3).reshape(3 * n, 3 * n)
    return np.array(us), 0.5 * (h + h.T)


@pytest.mark.parametrize("method", ["hf", "b3lyp"])
def test_closed_shell_hessian_is_pyscfs_with_exactly_solved_responses(method):
    """Water 3-21G: Uˣ and the Hessian against a dense direct solve of the nuclear equations.

    PySCF's own ``Hessian.kernel`` differs by its Krylov solver's error (measured here 1.8e-8
    hartree/bohr² for HF, 1.7e-5 for B3LYP; 7.5e-6 for B3LYP/6-31G*).  Ours, solved to a
    residual of 1e-6, gives Uˣ within 1.9e-7 of the direct solve and the Hessian within
    5.7e-13 (measured, PySCF 2.14: all 9 right-hand sides in one subspace).
    """
    mf = tight_scf(WATER, "3-21g", method)
    u_direct, h_direct = _direct(mf)
    h_ours, u_ours = analytic_hessian_parts(mf)
    h_pyscf = mf.Hessian().kernel()
    h_pyscf = h_pyscf.transpose(0, 2, 1, 3).reshape(h_ours.shape)
    err_u = np.abs(u_ours - u_direct).max()
    err_h = np.abs(h_ours - h_direct).max()
    err_pyscf = np.abs(0.5 * (h_pyscf + h_pyscf.T) - h_direct).max()
    print(
        f"MEASURED {method}: |U - direct| {err_u:.1e}, |H - direct| {err_h:.1e}, "
        f"PySCF's kernel {err_pyscf:.1e}"
    )
    assert err_u < 1e-6
    assert err_h < 1e-10
    np.testing.assert_array_equal(analytic_hessian(mf), h_ours)


@pytest.mark.parametrize(
    ("atoms", "method"),
    [
        pytest.param(WATER, "hf", id="water-HF"),
        pytest.param(PEROXIDE_C1, "hf", id="peroxide-C1-HF"),
        pytest.param(WATER, "b3lyp", id="water-B3LYP"),
        pytest.param(AMMONIA, "pbe", id="ammonia-C3v-PBE"),
    ],
)
def test_2n1_rule_equals_the_second_order_field_equations(atoms, method):
    # Contract (the 2n+1 rule is an identity): with the grid response left out of both, the
    # orbital-relaxation term equals the second-order vo blocks' contribution, to the nuclear
    # responses' residual (1e-6): measured 2.8e-7 of the largest element for water HF/3-21G
    # (PySCF 2.14).  The terms that do not involve the second-order blocks are unchanged.
    mf = tight_scf(atoms, "3-21g", method)
    u = _responses(mf)
    full = derivative_terms(mf, field_density_derivatives(mf), grid_response=False)[0]
    fast = derivative_terms(mf, field_density_derivatives(mf, None, u), grid_response=False)[0]
    scale = np.abs(full.total()).max()
    diff = np.abs(fast.total() - full.total()).max() / scale
    print(f"MEASURED 2n+1 vs second-order equations, {method}, {len(atoms)} atoms: {diff:.1e}")
    assert diff < 1e-6
    np.testing.assert_allclose(fast.dipole_integrals, full.dipole_integrals, atol=1e-8 * scale)
    assert full.orbital_relaxation is None and fast.orbital_relaxation is not None


@pytest.mark.parametrize(("atoms", "tol"), [(WATER, 3e-6), (AMMONIA, 3e-5)])
def test_2n1_rule_leaves_out_only_the_relaxation_terms_grid_response(atoms, tol):
    # With the grid response (B3LYP, the engine's grid) the two differ by the grid response of
    # the orbital-relaxation term alone, which the Hessian's Fock derivatives do not carry:
    # measured 9.5e-7 (water) and 1.1e-5 (ammonia) of the largest element at 6-31G*.
    mf = tight_scf(atoms, "3-21g", "b3lyp")
    full = analytic_polarizability_derivatives(mf)
    fast = analytic_polarizability_derivatives(mf, None, _responses(mf))
    scale = np.abs(full.dalpha_dx_ang2).max()
    diff = np.abs(fast.dalpha_dx_ang2 - full.dalpha_dx_ang2).max() / scale
    print(f"MEASURED 2n+1 vs second-order equations, B3LYP {len(atoms)} atoms: {diff:.1e}")
    assert diff < tol
    np.testing.assert_allclose(fast.dmu_dx_e, full.dmu_dx_e, atol=1e-9)


def test_compute_takes_the_analytic_route_from_the_hessian_stage(tmp_path, capsys):
    # Contract (flow and checkpoint): `compute --route analytic` computes ∂α/∂x in the Hessian
    # stage (2n+1) and says so, in the progress lines and the provenance; a rerun takes the
    # stage from the checkpoint; where a plain Hessian is already in the checkpoint (an earlier
    # field-route run), the route's own task (second-order field equations) runs beside it
    # instead, and the two agree (HF: the 2n+1 rule is an identity; water 3-21G).  Fails on the
    # code before the 2n+1 stage (no such stage, no such lines).
    from vibrapol.cli import main
    from vibrapol.ramantable import raman_table
    from vibrapol.sources.modes_json import read_modes_json

    xyz = tmp_path / "water.xyz"
    xyz.write_text(
        "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
    )
    base = ["compute", str(xyz), "--method", "hf", "--basis", "3-21g", "--workers", "1"]
    base += ["--no-optimize", "--progress"]

    def run(route: str, name: str, *extra: str):
        out = tmp_path / name
        assert main([*base, "--route", route, "-o", str(out), *extra]) == 0
        return read_modes_json(out), capsys.readouterr().err

    fast, err = run("analytic", "a.modes.json")
    assert "analytic route: dalpha/dx computed with the Hessian (2n+1)" in err
    assert "2n+1 rule" in " ".join(fast.provenance.notes)
    again, err = run("analytic", "a.modes.json", "--force")
    assert "analytic Hessian and dalpha/dx: taken from the checkpoint" in err
    np.testing.assert_array_equal(raman_table(again).activity, raman_table(fast).activity)

    run("field", "b.modes.json")
    slow, err = run("analytic", "b.modes.json", "--force")
    assert "analytic Hessian: taken from the checkpoint" in err
    assert "analytic route: 1 tasks" in err
    t_fast, t_slow = raman_table(fast), raman_table(slow)
    np.testing.assert_allclose(t_fast.freqs_cm1, t_slow.freqs_cm1, atol=1e-8)
    # the tensor differs by the nuclear responses' residual, 1e-6 (2.8e-7 of its largest
    # element, test above)
    np.testing.assert_allclose(t_fast.activity, t_slow.activity, rtol=2e-6)
    np.testing.assert_allclose(t_fast.rho_linear, t_slow.rho_linear, atol=1e-6)


def test_hessian_in_memory_blocks_equals_the_hessian_in_one_block(monkeypatch):
    # Contract: with few densities and right-hand sides at a time (what a small max_memory
    # asks for large molecules), the Hessian and the responses agree to the solver's tolerance
    # (water B3LYP/3-21G: 9 right-hand sides in blocks of 3).
    from vibrapol.engine import hessian

    mf = tight_scf(WATER, "3-21g", "b3lyp")
    whole, u_whole = analytic_hessian_parts(mf)
    monkeypatch.setattr(hessian, "_MAX_BLOCK", 3)
    assert hessian._blocks(mf, mf.mol.nao, 1) == (3, 3)
    blocks, u_blocks = analytic_hessian_parts(mf)
    # each block to the residual 1e-6: measured 3.6e-8 hartree/bohr² and 1.9e-7 apart
    np.testing.assert_allclose(blocks, whole, rtol=0, atol=1e-7)
    np.testing.assert_allclose(u_blocks, u_whole, rtol=0, atol=1e-6)


@pytest.mark.parametrize("method", ["hf", "b3lyp"])
def test_a_solved_first_order_start_costs_no_solver_step(method):
    # Contract (cost and result): with the reference stage's ∂D/∂F (solved to its residual,
    # REFERENCE_ALPHA_TOL) as the start and the Hessian's nuclear responses given, the field
    # derivatives apply the response function twice (G[P¹], whose vo block is also the start's
    # residual check, and G of the six second-order densities), where a cold start needs the
    # solver's steps as well; the derivatives agree to the response tolerance (1e-8 residual).
    from vibrapol.engine.polarizability import cphf_polarizability_response
    from vibrapol.engine.stages import REFERENCE_ALPHA_TOL

    mf = tight_scf(WATER, "3-21g", method)
    u = _responses(mf)
    start = cphf_polarizability_response(mf, solver="block", tol=REFERENCE_ALPHA_TOL)[1]
    build = mf.gen_response
    calls = []

    def counted(*args, **kwargs):  # noqa: ANN002, ANN003, ANN202
        response = build(*args, **kwargs)
        return lambda dm: calls.append(len(dm)) or response(dm)

    mf.gen_response = counted
    warm = field_density_derivatives(mf, start, u)
    assert len(calls) == 2
    calls.clear()
    cold = field_density_derivatives(mf, None, u)
    assert len(calls) > 2
    scale = np.abs(cold.d1).max()
    np.testing.assert_allclose(warm.d1, cold.d1, atol=1e-7 * scale)
    np.testing.assert_allclose(
        warm.relaxation, cold.relaxation, atol=1e-7 * np.abs(cold.relaxation).max()
    )
