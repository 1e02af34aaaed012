"""Analytic ∂α/∂x of closed-shell Kohn–Sham DFT (vibrapol.engine.analytic_xc) against references.

References, all PySCF itself:

* PySCF's XC nuclear gradient (``pyscf.grad.rks.get_vxc`` on a fixed grid and
  ``get_vxc_full_response`` with the grid moving) at the density D and at D displaced along
  the field-response densities: its directional derivatives in density space are the XC terms
  (first derivative along Dᵃᵇ: potential + kernel-relaxed; mixed second derivative along Dᵃ,
  Dᵇ: kernel-response + kernel-derivative; full minus fixed grid: the grid response);
* PySCF's XC kernel contraction ``nr_rks_fxc`` at shifted ground-state densities: its
  derivative is the kxc Fock term of the second-order response equations;
* the field route (PySCF analytic gradients with grid response in 12 uniform fields,
  ``vibrapol.engine.fieldgrad``) and central differences of the coupled-perturbed KS α at
  displaced geometries (a new grid at each, so the grid response is implicit).
"""

from __future__ import annotations

import numpy as np
import pytest

from _analytic_terms import PEROXIDE_C1, WATER, tight_scf
from vibrapol.engine.analytic import (
    analytic_polarizability_derivatives,
    check_supported,
    field_density_derivatives,
)
from vibrapol.engine.analytic_xc import kernel_derivative_fock, xc_gradient_derivatives
from vibrapol.engine.field_response import PAIRS
from vibrapol.engine.scf import EngineInputError
from vibrapol.units import BOHR2_TO_ANG2, BOHR_ANG

#: Ammonia (C3v), Å (N–H 1.012 Å, H–N–H 106.7°, common practice).
AMMONIA = [
    ("N", (0.0, 0.0, 0.1162)),
    ("H", (0.0, 0.9397, -0.2711)),
    ("H", (0.8138, -0.4699, -0.2711)),
    ("H", (-0.8138, -0.4699, -0.2711)),
]
#: Cartesian step of the finite-difference reference, Å.
STEP_ANG = 1e-3


def _pyscf_xc_gradient(mf, dm, grid_response: bool) -> np.ndarray:
    """The XC part of PySCF's RKS nuclear gradient at density ``dm`` (N, 3)."""
    from pyscf.grad import rks as rks_grad

    ni, mol = mf._numint, mf.mol
    if grid_response:  # the grid terms come back per atom, the basis term as a matrix
        exc, vmat = rks_grad.get_vxc_full_response(ni, mol, mf.grids, mf.xc, dm)
    else:
        exc, vmat = 0.0, rks_grad.get_vxc(ni, mol, mf.grids, mf.xc, dm)[1]
    out = np.zeros((mol.natm, 3))
    for atom, (_, _, p0, p1) in enumerate(mol.aoslice_by_atom()):
        out[atom] = 2.0 * np.einsum("kpq,pq->k", vmat[:, p0:p1], dm[p0:p1])
    return out + exc


@pytest.mark.parametrize("xc", ["svwn", "pbe"])
def test_xc_gradient_is_pyscfs(xc):
    """The contraction machinery at zeroth order reproduces PySCF's XC gradient."""
    mf = tight_scf(PEROXIDE_C1, "sto-3g", xc)
    dm = mf.make_rdm1()
    zeros = np.zeros((3, 3) + dm.shape)
    for grid_response in (False, True):
        ours = xc_gradient_derivatives(mf, dm, zeros[0], zeros, grid_response)[2]
        ref = _pyscf_xc_gradient(mf, dm, grid_response)
        np.testing.assert_allclose(ours, ref, rtol=0, atol=1e-10)


@pytest.mark.parametrize("xc", ["svwn", "pbe"])
def test_xc_terms_are_density_derivatives_of_pyscfs_xc_gradient(xc):
    """Each XC term against finite differences of PySCF's XC gradient in density space.

    g(D) the XC gradient; with h = 1e-3 (a field of 0.001 au; error O(h²) ≈ 1e-6 relative):
    ∂g/∂D·Dᵃᵇ = xc_potential + xc_kernel_relaxed and ∂²g/∂D²·(Dᵃ, Dᵇ) = xc_kernel_response +
    xc_kernel_derivative on a fixed grid (``get_vxc``); PySCF's full-response gradient
    (``get_vxc_full_response``) minus the fixed-grid one gives xc_grid_response.  C1
    molecule, so that no component vanishes by symmetry.
    """
    mf = tight_scf(PEROXIDE_C1, "sto-3g", xc)
    dens = field_density_derivatives(mf)
    d0, d1, d2 = dens.density, dens.d1, dens.d2
    fixed = xc_gradient_derivatives(mf, d0, d1, d2, grid_response=False)[0]
    full = xc_gradient_derivatives(mf, d0, d1, d2, grid_response=True)[0]
    assert not fixed["xc_grid_response"].any()
    h = 1e-3

    def derivatives(a: int, b: int, grid_response: bool):
        def g(dm):
            return _pyscf_xc_gradient(mf, dm, grid_response)

        first = (g(d0 + h * d2[a, b]) - g(d0 - h * d2[a, b])) / (2 * h)
        da, db = h * d1[a], h * d1[b]
        second = g(d0 + da + db) - g(d0 + da - db) - g(d0 - da + db) + g(d0 - da - db)
        return first, second / (4 * h * h)

    for a, b in ((0, 0), (1, 2), (0, 2)):
        first, second = derivatives(a, b, False)
        first_full, second_full = derivatives(a, b, True)
        checks = (
            (first, fixed["xc_potential"] + fixed["xc_kernel_relaxed"]),
            (second, fixed["xc_kernel_response"] + fixed["xc_kernel_derivative"]),
            (first_full + second_full - first - second, full["xc_grid_response"]),
        )
        # the grid response is small (≈ 1e-4 of the rest here): its difference carries the
        # round-off of the others, so every check is relative to the largest XC derivative
        scale = max(np.abs(first).max(), np.abs(second).max())
        for k, (fd, terms) in enumerate(checks):
            assert np.abs(fd - terms[:, :, a, b]).max() < 1e-6 * scale, (a, b, k)


def test_kernel_derivative_fock_is_the_derivative_of_pyscfs_kernel():
    """∫ φμ φν k·uᵃ·uᵇ equals the derivative of PySCF's f_xc contraction in the density.

    ``nr_rks_fxc(D₀ ± h Dᵇ, Dᵃ)`` is the kernel at a shifted ground-state density applied to
    Dᵃ; its central difference (h = 2.5e-4, error O(h²) ≈ 2e-7 relative) is the kxc term,
    for GGA with the gradient terms.
    """
    mf = tight_scf(PEROXIDE_C1, "sto-3g", "b3lyp")
    dens = field_density_derivatives(mf)
    d0, d1 = dens.density, dens.d1
    kxc = kernel_derivative_fock(mf, d0, d1)
    ni, h = mf._numint, 2.5e-4

    def kernel(dm0, dm1):
        return ni.nr_rks_fxc(mf.mol, mf.grids, mf.xc, dm0, dm1, hermi=1)

    for p, (a, b) in enumerate(PAIRS):
        fd = (kernel(d0 + h * d1[b], d1[a]) - kernel(d0 - h * d1[b], d1[a])) / (2 * h)
        assert np.abs(fd - kxc[p]).max() < 1e-6 * np.abs(kxc).max(), (a, b)


def _direct_cpks_alpha(mf) -> np.ndarray:
    """Static α (bohr³) by solving the full coupled-perturbed KS matrix directly.

    The response matrix (orbital-energy differences plus PySCF's ``gen_response``: Coulomb,
    the hybrid's exchange and the XC kernel) is built column by column and solved with
    ``numpy.linalg.solve``: no iterative solver, small molecules only.
    """
    from vibrapol.engine.fieldgrad import dipole_integrals

    c, occ = mf.mo_coeff, mf.mo_occ > 0
    co, cv = c[:, occ], c[:, ~occ]
    nvir, nocc = cv.shape[1], co.shape[1]
    response = mf.gen_response(hermi=1)
    units = np.eye(nvir * nocc).reshape(-1, nvir, nocc)
    dm = 2.0 * np.einsum("kai,pa,qi->kpq", units, cv, co)
    v = np.einsum("kpq,pa,qi->kai", response(dm + dm.transpose(0, 2, 1)), cv, co)
    delta = mf.mo_energy[~occ][:, None] - mf.mo_energy[occ][None, :]
    matrix = v.reshape(nvir * nocc, -1).T + np.diag(delta.ravel())
    h1 = np.einsum("xpq,pa,qi->xai", dipole_integrals(mf.mol), cv, co).reshape(3, -1)
    return -4.0 * h1 @ np.linalg.solve(matrix, -h1.T)


def _displaced(atoms, i: int, delta_ang: float):
    out = [(s, np.array(x, dtype=float)) for s, x in atoms]
    out[i // 3][1][i % 3] += delta_ang
    return [(s, tuple(x)) for s, x in out]


def _cartesian_route(atoms, basis, xc) -> np.ndarray:
    """∂α/∂x (Å²) by central differences of the CPKS α, a new grid at each geometry."""
    n = 3 * len(atoms)
    out = np.zeros((n, 3, 3))
    for i in range(n):
        plus, minus = (
            _direct_cpks_alpha(tight_scf(_displaced(atoms, i, s * STEP_ANG), basis, xc))
            for s in (1, -1)
        )
        out[i] = (plus - minus) / (2 * STEP_ANG / BOHR_ANG)
    return out * BOHR2_TO_ANG2


def _field_route(mf, spec) -> np.ndarray:
    """∂α/∂x (Å²) of the field route: PySCF gradients with grid response in 12 fields."""
    from vibrapol.engine.fieldgrad import field_gradient, field_scf
    from vibrapol.engine.fieldplan import dalpha_dx_from_gradients, field_plan

    plan = field_plan(n_atoms=mf.mol.natm)
    grads = [field_gradient(mf, np.zeros(3))]
    for field in plan.task_fields_au:
        grads.append(field_gradient(field_scf(mf.mol, spec, field, mf.make_rdm1()), field))
    return dalpha_dx_from_gradients(plan, np.array(grads))


def _activities_and_rho(mf, dalpha):
    from vibrapol.engine.hessian import analytic_hessian
    from vibrapol.invariants import activity, rho_linear, tensor_invariants
    from vibrapol.vibrations import harmonic_analysis, project_dalpha

    masses = mf.mol.atom_mass_list(isotope_avg=True)
    modes = harmonic_analysis(analytic_hessian(mf), masses, mf.mol.atom_coords() * BOHR_ANG)
    a2, g2 = tensor_invariants(project_dalpha(dalpha, modes.modes, masses))
    return activity(a2, g2), rho_linear(a2, g2)


# 35–70 s each on 2 shared cores (measured 2026-12-05): all slow; the quick suite keeps the
# end-to-end B3LYP check against the field route and the term-by-term checks.
ROUTE_CASES = [
    pytest.param(WATER, "svwn", id="water-SVWN", marks=pytest.mark.slow),
    pytest.param(WATER, "pbe", id="water-PBE", marks=pytest.mark.slow),
    pytest.param(WATER, "b3lyp", id="water-B3LYP", marks=pytest.mark.slow),
    pytest.param(AMMONIA, "b3lyp", id="ammonia-C3v-B3LYP", marks=pytest.mark.slow),
    pytest.param(PEROXIDE_C1, "pbe", id="peroxide-C1-PBE", marks=pytest.mark.slow),
    pytest.param(PEROXIDE_C1, "b3lyp", id="peroxide-C1-B3LYP", marks=pytest.mark.slow),
]


@pytest.mark.parametrize(("atoms", "xc"), ROUTE_CASES)
def test_activities_and_rho_against_field_and_cartesian_routes(atoms, xc):
    """3-21G: activities and ρ of the analytic ∂α/∂x against the two numerical routes."""
    from vibrapol.engine.hessian import analytic_hessian_parts
    from vibrapol.engine.scf import MethodSpec

    mf = tight_scf(atoms, "3-21g", xc)
    np.testing.assert_allclose(
        analytic_polarizability_derivatives(mf).alpha_bohr3, _direct_cpks_alpha(mf), atol=1e-8
    )
    # both forms: six second-order field equations, and the 2n+1 form from the Hessian's
    # nuclear responses (what --route analytic computes in the Hessian stage)
    forms = {
        "second-order": analytic_polarizability_derivatives(mf).dalpha_dx_ang2,
        "2n+1": analytic_polarizability_derivatives(
            mf, None, analytic_hessian_parts(mf)[1]
        ).dalpha_dx_ang2,
    }
    field = _field_route(mf, MethodSpec(xc, "3-21g"))
    cartesian = _cartesian_route(atoms, "3-21g", xc)
    # the field route's own error is about 1e-4 (docs/engine-routes.md); the Cartesian
    # differences (h = 0.001 Å, direct CPKS solves) are good to about 1e-6
    for form, analytic in forms.items():
        s_an, rho_an = _activities_and_rho(mf, analytic)
        for name, reference, s_tol, rho_tol in (
            ("field", field, 2e-4, 1e-4),
            ("cartesian", cartesian, 1e-4, 1e-5),
        ):
            s_ref, rho_ref = _activities_and_rho(mf, reference)
            seen = s_ref > 1e-3 * s_ref.max()
            s_err = (np.abs(s_an - s_ref) / s_ref)[seen].max()
            rho_err = np.abs(rho_an - rho_ref)[seen].max()
            print(
                f"MEASURED {form} {xc} {len(atoms)} atoms vs {name}: "
                f"activity {s_err:.1e} rho {rho_err:.1e}"
            )
            assert s_err < s_tol and rho_err < rho_tol, (form, name)


@pytest.mark.parametrize(
    ("xc", "why"),
    [
        ("tpss", "not the MGGA"),
        ("camb3lyp", "range-separated hybrids"),
        ("wb97x-v", "range-separated hybrids"),
    ],
)
def test_refuses_functionals_it_does_not_implement(xc, why):
    """Contract: meta-GGA, range-separated hybrids and VV10 are refused with one line."""
    from pyscf import dft, gto

    mol = gto.M(atom=WATER, basis="sto-3g", verbose=0)
    with pytest.raises(EngineInputError, match=f"{why}.*use the field or cartesian route"):
        check_supported(dft.RKS(mol, xc=xc))
    vv10 = dft.RKS(mol, xc="b3lyp")
    vv10.nlc = "vv10"
    with pytest.raises(EngineInputError, match="non-local correlation"):
        check_supported(vv10)


def test_analytic_route_accepts_closed_shell_dft_and_auto_may_take_it():
    # Behaviour change: the route took Hartree–Fock only; LDA, GGA and global hybrids are now
    # allowed (and among auto's choices), open shells and meta-GGA still refused in one line.
    from vibrapol.engine.autoroute import hessian_routes_allowed
    from vibrapol.engine.settings import EngineSettings
    from vibrapol.errors import OptionError

    for method in ("b3lyp", "pbe", "svwn", "pbe0", "b3lyp-d3bj"):
        EngineSettings(route="analytic", method=method)
        assert "analytic" in hessian_routes_allowed(EngineSettings(method=method), None)
    for kwargs, why in (
        ({"method": "b3lyp", "multiplicity": 3}, "closed shells"),
        ({"method": "tpss"}, "MGGA"),
        ({"method": "cam-b3lyp"}, "range-separated"),
    ):
        with pytest.raises(OptionError, match=f"analytic route cannot run here: .*{why}"):
            EngineSettings(route="analytic", **kwargs)
        assert "analytic" not in hessian_routes_allowed(EngineSettings(**kwargs), None)


def test_compute_route_analytic_agrees_with_the_field_route_for_b3lyp(tmp_path, capsys):
    # End to end through `vibrapol compute`: water B3LYP/3-21G, --route analytic against
    # --route field (its own error about 1e-4, docs/engine-routes.md): activities within
    # 2e-4 relative, ρ within 1e-4, the same frequencies (the same analytic Hessian).
    from vibrapol.cli import main
    from vibrapol.ramantable import raman_table
    from vibrapol.sources.modes_json import read_modes_json

    xyz = tmp_path / "water.xyz"
    xyz.write_text(
        "3\nwater (own test input)\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
    )
    tables = {}
    for route in ("analytic", "field"):
        out = tmp_path / f"{route}.modes.json"
        args = ["compute", str(xyz), "--method", "b3lyp", "--basis", "3-21g", "--route", route]
        assert main([*args, "--workers", "1", "--no-optimize", "-o", str(out)]) == 0
        tables[route] = raman_table(read_modes_json(out))
    assert "analytic route, 1 tasks" in capsys.readouterr().err
    t_a, t_f = tables["analytic"], tables["field"]
    np.testing.assert_allclose(t_a.freqs_cm1, t_f.freqs_cm1, atol=1e-6)
    np.testing.assert_allclose(t_a.activity, t_f.activity, rtol=2e-4)
    np.testing.assert_allclose(t_a.rho_linear, t_f.rho_linear, atol=1e-4)


def test_auto_prices_the_dft_analytic_route_with_the_dft_model():
    # Contract (cost model): for DFT the analytic task is ANALYTIC_TO_HESSIAN_DFT × the DFT
    # Hessian estimate (0.25; measured 0.19 for benzene B3LYP/6-31G* by the 2n+1 rule), for HF
    # ANALYTIC_TO_HESSIAN × the HF one.
    from vibrapol.engine.analyticroute import ANALYTIC_TO_HESSIAN, ANALYTIC_TO_HESSIAN_DFT
    from vibrapol.engine.autoroute import estimated_hessian_seconds
    from vibrapol.engine.evaluate import ReferenceResult
    from vibrapol.engine.routes import task_seconds

    ref = ReferenceResult(
        energy_hartree=0.0,
        hessian_hartree_bohr2=None,
        alpha_ang3=np.eye(3),
        density=np.eye(40),
        gradient_hartree_bohr=np.zeros((3, 3)),
        seconds_scf=2.0,
        seconds_alpha=1.0,
        seconds_gradient=0.5,
    )
    dft = task_seconds("analytic", ref, is_hf=False)
    assert dft == pytest.approx(ANALYTIC_TO_HESSIAN_DFT * estimated_hessian_seconds(ref, False))
    hf = task_seconds("analytic", ref, is_hf=True)
    assert hf == pytest.approx(ANALYTIC_TO_HESSIAN * estimated_hessian_seconds(ref, True))
