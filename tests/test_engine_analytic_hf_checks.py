"""Analytic ∂α/∂x of closed-shell HF on more molecules, symmetries and basis sets (issue 19).

The molecules: ammonia (C3v) and methane (Td) at ASE's geometries, dichloromethane (C2v,
heavier atoms; built here) and fluoromethanol FCH2OH in its gauche conformation, which has no
symmetry element (C1; the engine finds C1), at its HF/3-21G minimum found with vibrapol's own
optimiser.  Basis sets 3-21G (small) and 6-31G* (medium, with d functions).

Independent checks, each named beside its numbers:

* vibrapol's two numerical routes, run as a user runs them (``run_engine``): ``cartesian``
  (central differences of the CPHF α at ±0.005 Å, symmetry-reduced) and ``field`` (analytic
  gradients in uniform fields of 0.001 au).  They share the SCF and the Hessian with the
  analytic route, nothing else.  Their own error is about 1e-4 in activities and up to a few
  1e-5 in ρ (docs/engine-routes.md), so they cannot check ρ to 1e-5; the measured reasons are
  beside ``ROUTE_CASES`` and in :func:`test_field_route_error_is_its_own_step_error`.
* a tight reference built from PySCF (the reference library) and SciPy alone: central
  differences (h = 0.001 Å, error O(h²) ≈ 1e-6 relative) of α from PySCF's coupled-perturbed
  HF operator (``gen_response``) solved by SciPy's conjugate gradients to a 1e-12 residual.
  This one reaches the issue's target (activities 1e-4 relative, ρ 1e-5) with a wide margin.
* each named term with d functions (spherical and Cartesian), densities held fixed, against
  differences of PySCF's integrals at displaced geometries.
"""

from __future__ import annotations

import functools

import numpy as np
import pytest
from ase import Atoms
from ase.build import molecule

from _analytic_terms import term_integrals
from vibrapol.engine.analytic import (
    analytic_polarizability_derivatives,
    derivative_terms,
    field_density_derivatives,
)
from vibrapol.units import BOHR2_TO_ANG2, BOHR_ANG

#: Cartesian step of the tight reference, Å.
STEP_ANG = 1e-3
#: Modes weaker than this fraction of the strongest activity are left out of relative checks
#: (their activity is set by the absolute error of ∂α/∂x, checked on the tensor itself).
SEEN = 1e-3


def dichloromethane() -> Atoms:
    """CH2Cl2 with C2v symmetry: C–Cl 1.772 Å, C–H 1.087 Å, ClCCl 111.8°, HCH 111.5°.

    Rounded literature values quoted from memory: the checks need a real molecule near its
    equilibrium, not the exact one.
    """
    rcl, rh = 1.772, 1.087
    acl, ah = np.deg2rad(111.8) / 2, np.deg2rad(111.5) / 2
    positions = [
        (0.0, 0.0, 0.0),
        (0.0, rcl * np.sin(acl), rcl * np.cos(acl)),
        (0.0, -rcl * np.sin(acl), rcl * np.cos(acl)),
        (rh * np.sin(ah), 0.0, -rh * np.cos(ah)),
        (-rh * np.sin(ah), 0.0, -rh * np.cos(ah)),
    ]
    return Atoms("CCl2H2", positions=positions)


def fluoromethanol() -> Atoms:
    """Gauche FCH2OH (C1), Å: the HF/3-21G minimum found by ``run_engine(..., optimize=True)``.

    Started from ASE's methanol with one out-of-plane methyl H replaced by F at 1.37 Å;
    vibrapol's optimiser converged it to a largest force of 8e-6 hartree/bohr with every
    harmonic wavenumber real (371–3877 cm⁻¹); rounded to 1e-4 Å here.
    """
    positions = [
        (-0.0616, 0.6678, -0.0154),
        (-0.0331, -0.7289, -0.0066),
        (-1.0956, 0.9522, 0.0007),
        (0.8698, -1.0736, 0.0073),
        (0.5694, 1.1897, 1.1127),
        (0.4374, 1.0843, -0.8765),
    ]
    return Atoms(["C", "O", "H", "H", "F", "H"], positions=positions)


MOLECULES = {
    "NH3": lambda: molecule("NH3"),
    "CH4": lambda: molecule("CH4"),
    "CH2Cl2": dichloromethane,
    "FCH2OH": fluoromethanol,
}
POINT_GROUPS = {"NH3": "C3v", "CH4": "Td", "CH2Cl2": "C2v", "FCH2OH": "C1"}


@functools.cache
def _route_run(name: str, basis: str, route: str, field_au: float | None = None):
    from vibrapol.engine.compute import run_engine

    options = {} if field_au is None else {"field_au": field_au}
    return run_engine(MOLECULES[name](), "hf", basis, route=route, optimize=False, **options)


def _table(run):
    from vibrapol.ramantable import raman_table

    return raman_table(run.modes)


def _differences(analytic, reference) -> dict[str, float]:
    """Largest differences of analytic against reference runs (or arrays).

    ``activity``: relative, over modes above ``SEEN`` of the strongest; ``rho``: absolute, same
    modes; ``tensor``: max |Δ ∂α/∂x| / max |∂α/∂x|.
    """
    s_an, rho_an, dx_an = analytic
    s_ref, rho_ref, dx_ref = reference
    seen = s_ref > SEEN * s_ref.max()
    return {
        "activity": float((np.abs(s_an - s_ref)[seen] / s_ref[seen]).max()),
        "rho": float(np.abs(rho_an - rho_ref)[seen].max()),
        "tensor": float(np.abs(dx_an - dx_ref).max() / np.abs(dx_ref).max()),
    }


def _quantities(run):
    table = _table(run)
    return table.activity, table.rho_linear, run.modes.dalpha_dx


# Tolerances of the route comparisons: (activity, ρ, tensor) per route, each the measured
# figure (2026-12-05, in the comment) rounded up, with its reason.  The target is 1e-4
# in activities and 1e-5 in ρ; the numerical routes' own error is of that size, so where they
# miss it the tight reference below (test_against_a_tight_pyscf_reference) shows that the
# analytic numbers are the accurate ones.  Reasons, measured:
# * field route: at 0.001 au its error is noise (SCF residuals divided by F², see
#   test_field_route_error_is_its_own_step_error), and it scatters from run to run on the same
#   input (CH2Cl2 3-21G, three identical runs: activities 5.3e-5, 6.3e-5, 1.1e-4; ρ 2.3e-5 to
#   2.7e-5; thread-order rounding in the SCF, amplified by 1/F²): FIELD_SCATTER below;
# * Cartesian route: at its 0.005 Å step the O(h²) truncation is 1.1e-5 of max |∂α/∂x|.  For
#   CH2Cl2 the α of PySCF's ``cphf.solve`` at the displaced geometries had added 3.3e-5 (the
#   weak B1 mode at 1038 cm⁻¹ was off by 2.3e-4 in activity at 3-21G, 3.2e-4 at 6-31G*);
#   since those α come from our conjugate-gradient solver: 5.7e-5 / 5.3e-6 / 1.1e-5 (3-21G)
#   and 7.2e-5 / 7.2e-6 / 1.2e-5 (6-31G*).  ρ of NH3 and FCH2OH (1.0e-5, 1.5e-5) is the
#   step's own h² error.
FIELD_SCATTER = (3e-4, 5e-5, 5e-5)

ROUTE_CASES = [
    # (molecule, basis, {route: (activity, rho, tensor)})
    pytest.param(
        "NH3",
        "3-21g",
        # measured: cartesian 3.2e-5, 1.0e-5, 9.9e-6; field 8.2e-5, 2.6e-6, 3.3e-5 (identical
        # in five runs)
        {"cartesian": (1e-4, 2e-5, 2e-5), "field": (1e-4, 1e-5, 5e-5)},
        id="NH3-C3v-3-21g",
    ),
    pytest.param(
        "CH4",
        "3-21g",
        # measured: cartesian 3.3e-5, 1e-16, 2.3e-5; field 8.1e-6, 0, 6.7e-6 (ρ is 0 for the
        # totally symmetric stretch and 3/4 for the others by symmetry)
        {"cartesian": (1e-4, 1e-5, 5e-5), "field": (1e-4, 1e-5, 5e-5)},
        id="CH4-Td-3-21g",
    ),
    pytest.param(
        "FCH2OH",
        "3-21g",
        # measured: cartesian 4.9e-5, 1.5e-5, 3.9e-5; field 3.3e-5, 8.9e-6, 1.2e-5
        {"cartesian": (1e-4, 3e-5, 1e-4), "field": FIELD_SCATTER},
        id="FCH2OH-C1-3-21g",
        marks=pytest.mark.slow,
    ),
    pytest.param(
        "CH2Cl2",
        "3-21g",
        # measured: cartesian 5.7e-5, 5.3e-6, 1.1e-5 (2.3e-4, 5.2e-6, 3.3e-5 with cphf.solve);
        # field up to 1.1e-4, 2.7e-5, 2.5e-5
        {"cartesian": (1e-4, 1e-5, 2e-5), "field": FIELD_SCATTER},
        id="CH2Cl2-C2v-3-21g",
        marks=pytest.mark.slow,
    ),
    pytest.param(
        "NH3",
        "6-31g*",
        # measured: cartesian 4.4e-5, 2.0e-5, 8.3e-6; field 3.7e-5, 1.6e-5, 1.6e-5
        {"cartesian": (1e-4, 4e-5, 2e-5), "field": FIELD_SCATTER},
        id="NH3-C3v-6-31g*",
        marks=pytest.mark.slow,
    ),
    pytest.param(
        "FCH2OH",
        "6-31g*",
        # measured: cartesian 6.3e-5, 9.0e-6, 2.7e-5; field 1.5e-4, 7.4e-6, 1.3e-5
        {"cartesian": (2e-4, 3e-5, 1e-4), "field": FIELD_SCATTER},
        id="FCH2OH-C1-6-31g*",
        marks=pytest.mark.slow,
    ),
    pytest.param(
        "CH2Cl2",
        "6-31g*",
        # measured: cartesian 7.2e-5, 7.2e-6, 1.2e-5 (3.2e-4, 7.1e-6, 1.9e-5 with
        # cphf.solve); field 3.7e-5, 1.2e-5, 1.1e-5
        {"cartesian": (1e-4, 1e-5, 2e-5), "field": FIELD_SCATTER},
        id="CH2Cl2-C2v-6-31g*",
        marks=pytest.mark.slow,
    ),
]


@pytest.mark.parametrize(("name", "basis", "tolerances"), ROUTE_CASES)
def test_analytic_route_against_numerical_routes(name, basis, tolerances):
    """Activities, ρ and ∂α/∂x of the analytic route against the field and Cartesian routes.

    Source: vibrapol's numerical routes (independent of the analytic derivative terms), with
    one shared Hessian, so the frequencies agree to rounding.
    """
    analytic = _route_run(name, basis, "analytic")
    assert analytic.point_group == POINT_GROUPS[name]
    for route, (s_tol, rho_tol, dx_tol) in tolerances.items():
        run = _route_run(name, basis, route)
        # the same Hessian from separately converged SCFs: measured up to 4.8e-7 cm⁻¹ apart
        np.testing.assert_allclose(_table(analytic).freqs_cm1, _table(run).freqs_cm1, atol=1e-5)
        got = _differences(_quantities(analytic), _quantities(run))
        assert got["activity"] < s_tol, (route, got)
        assert got["rho"] < rho_tol, (route, got)
        assert got["tensor"] < dx_tol, (route, got)


def _rhf(atoms: Atoms, basis: str, cart: bool = False):
    from pyscf import gto, scf

    symbols = atoms.get_chemical_symbols()
    mol = gto.M(
        atom=[(s, tuple(x)) for s, x in zip(symbols, atoms.positions, strict=True)],
        basis=basis,
        unit="Angstrom",
        cart=cart,
        verbose=0,
    )
    mf = scf.RHF(mol)
    mf.conv_tol, mf.conv_tol_grad = 1e-12, 1e-9
    mf.kernel()
    assert mf.converged
    return mf


def _reference_alpha(mf) -> np.ndarray:
    """Static α (bohr³) from PySCF's response matrix, solved by SciPy to a 1e-12 residual.

    Each field component alone (single right-hand sides: the multi-vector solver of PySCF's
    ``cphf.solve`` leaves ~3e-7 au in small components, docs/analytic-raman.md), conjugate
    gradients preconditioned with the orbital-energy differences; the operator is PySCF's
    ``gen_response``.  Shares no code with vibrapol's response solver.
    """
    from scipy.sparse.linalg import LinearOperator, cg

    from vibrapol.engine.fieldgrad import dipole_integrals

    c, occ = mf.mo_coeff, mf.mo_occ > 0
    co, cv = c[:, occ], c[:, ~occ]
    delta = (mf.mo_energy[~occ][:, None] - mf.mo_energy[occ][None, :]).ravel()
    shape = (cv.shape[1], co.shape[1])
    response = mf.gen_response(hermi=1)

    def matvec(x):
        dm = 2.0 * cv @ x.reshape(shape) @ co.T
        return delta * x + (cv.T @ response(dm + dm.T) @ co).ravel()

    n = delta.size
    a = LinearOperator((n, n), matvec=matvec, dtype=float)
    m = LinearOperator((n, n), matvec=lambda x: x / delta, dtype=float)
    h1 = np.array([(cv.T @ r @ co).ravel() for r in dipole_integrals(mf.mol)])
    u = np.empty_like(h1)
    for k in range(3):
        u[k], info = cg(a, -h1[k], M=m, rtol=1e-12, atol=0.0, maxiter=500)
        assert info == 0
        assert np.linalg.norm(matvec(u[k]) + h1[k]) < 1e-9 * np.linalg.norm(h1[k])
    return -4.0 * h1 @ u.T


def _tight_reference(atoms: Atoms, basis: str, cart: bool = False) -> np.ndarray:
    """∂α/∂x (Å²) by central differences (h = 0.001 Å) of :func:`_reference_alpha`."""
    n = 3 * len(atoms)
    out = np.zeros((n, 3, 3))
    for i in range(n):
        alphas = []
        for sign in (1, -1):
            moved = atoms.copy()
            moved.positions[i // 3, i % 3] += sign * STEP_ANG
            alphas.append(_reference_alpha(_rhf(moved, basis, cart)))
        out[i] = (alphas[0] - alphas[1]) / (2 * STEP_ANG / BOHR_ANG)
    return out * BOHR2_TO_ANG2


def _mode_quantities(mf, dalpha_dx_ang2: np.ndarray, modes):
    from vibrapol.invariants import activity, rho_linear, tensor_invariants
    from vibrapol.vibrations import project_dalpha

    masses = mf.mol.atom_mass_list(isotope_avg=True)
    a2, g2 = tensor_invariants(project_dalpha(dalpha_dx_ang2, modes.modes, masses))
    return activity(a2, g2), rho_linear(a2, g2), dalpha_dx_ang2


def _against_tight_reference(name: str, basis: str, cart: bool = False) -> dict[str, float]:
    from vibrapol.engine.hessian import analytic_hessian
    from vibrapol.vibrations import harmonic_analysis

    atoms = MOLECULES[name]()
    mf = _rhf(atoms, basis, cart)
    masses = mf.mol.atom_mass_list(isotope_avg=True)
    modes = harmonic_analysis(analytic_hessian(mf), masses, atoms.positions)
    analytic = analytic_polarizability_derivatives(mf).dalpha_dx_ang2
    reference = _tight_reference(atoms, basis, cart)
    return _differences(
        _mode_quantities(mf, analytic, modes), _mode_quantities(mf, reference, modes)
    )


def test_field_route_error_is_its_own_step_error():
    """The field route's difference from the analytic route is the field route's own error.

    Source: vibrapol's field route at four field strengths (NH3 HF/3-21G).  A central
    difference has truncation error ∝ F² and noise ∝ ε/F² (ε the SCF residual); their sum is
    least near 0.002 au.  Measured max |Δ ∂α/∂x| / max |∂α/∂x| against the analytic route:
    6.8e-5 (0.0005 au), 3.3e-5 (0.001), 1.1e-5 (0.002), 6.2e-5 (0.004).  Were the analytic
    terms wrong, the difference would level off at their error instead of falling to 1e-5
    at the best field and rising on both sides.
    """
    analytic = _quantities(_route_run("NH3", "3-21g", "analytic"))
    diff = {
        f: _differences(analytic, _quantities(_route_run("NH3", "3-21g", "field", f)))["tensor"]
        for f in (5e-4, 2e-3, 4e-3)
    }
    assert diff[2e-3] < 2e-5
    assert diff[5e-4] > 3 * diff[2e-3]  # noise: 4× per halving of F
    assert diff[4e-3] > 3 * diff[2e-3]  # truncation: 4× per doubling of F


TIGHT_CASES = [
    pytest.param("NH3", "3-21g", False, id="NH3-C3v-3-21g"),
    pytest.param("NH3", "6-31g*", True, id="NH3-C3v-6-31g*-6d"),
    pytest.param("CH4", "3-21g", False, id="CH4-Td-3-21g", marks=pytest.mark.slow),
    pytest.param("FCH2OH", "6-31g*", False, id="FCH2OH-C1-6-31g*", marks=pytest.mark.slow),
    pytest.param("CH2Cl2", "6-31g*", False, id="CH2Cl2-C2v-6-31g*", marks=pytest.mark.slow),
]


@pytest.mark.parametrize(("name", "basis", "cart"), TIGHT_CASES)
def test_against_a_tight_pyscf_reference(name, basis, cart):
    """Activities, ρ and ∂α/∂x against central differences of a tightly solved CPHF α.

    Source: PySCF (SCF to 1e-12, its response operator, solved by SciPy to a 1e-12 residual;
    :func:`_reference_alpha`), h = 0.001 Å.  Same Hessian (PySCF's analytic one) for both.
    Measured (spherical d unless 6d): activities 1.4e-6 to 2.9e-6 relative, ρ at most 7e-7,
    tensor at most 1.5e-6 (the h² error of the reference is about 1e-6): the issue's target,
    1e-4 and 1e-5, is met with a margin of more than ten.  FCH2OH and CH2Cl2 at 3-21G gave
    the same (2.0e-6 / 6.1e-7 / 1.5e-6 and 2.6e-6 / 2.2e-7 / 4.1e-7) and are left out to
    keep the slow suite short; their 6-31G* cases stay.
    """
    got = _against_tight_reference(name, basis, cart)
    assert got["activity"] < 1e-5, got
    assert got["rho"] < 2e-6, got
    assert got["tensor"] < 5e-6, got


def _by_displacement(mol, quantity, step_ang: float = 2e-4) -> np.ndarray:
    """Central differences of ``quantity(mol)`` over every Cartesian coordinate, per bohr."""
    x0 = mol.atom_coords(unit="Angstrom").ravel()
    out = []
    for i in range(x0.size):
        values = []
        for sign in (1, -1):
            x = x0.copy()
            x[i] += sign * step_ang
            moved = mol.set_geom_(x.reshape(-1, 3), unit="Angstrom", inplace=False)
            values.append(quantity(moved))
        out.append((values[0] - values[1]) / (2 * step_ang / BOHR_ANG))
    return np.array(out)


@pytest.mark.parametrize(
    ("name", "cart"),
    [
        pytest.param("NH3", False, id="NH3-spherical-d"),
        pytest.param("NH3", True, id="NH3-cartesian-6d"),
    ],
)
def test_each_term_with_d_functions(name, cart):
    """Every named term, densities held fixed, is the x-derivative of its integrals (d shells).

    Source: PySCF's integrals (``get_hcore``, ``get_jk``, ``int1e_ovlp``, ``int1e_r``) at
    displaced geometries, central differences of 2e-4 Å.  The existing term check uses
    STO-3G (s and p only); this one is ammonia HF/6-31G*, whose d shells the derivative
    integrals must move with their atoms, in both the spherical (5d) and the Cartesian (6d)
    form.  Measured: at most 7.2e-8 of each term's largest element, the differences' own h²
    error (it falls to 1.9e-8 at 1e-4 Å; fluoromethanol 6-31G*, 20 s, gave 3.4e-8).
    """
    mf = _rhf(MOLECULES[name](), "6-31g*", cart)
    dens = field_density_derivatives(mf)
    terms, _ = derivative_terms(mf, dens)
    expected = term_integrals(dens)
    for name, quantity in expected.items():
        fd = _by_displacement(mf.mol, quantity)
        analytic = getattr(terms, name).reshape(fd.shape)
        err = np.abs(fd - analytic).max() / np.abs(analytic).max()
        assert err < 3e-7, (name, err)
