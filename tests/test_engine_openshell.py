"""Open shells (UHF/UKS): α, field gradients, Hessian, routes, ⟨S²⟩ checks and refusals.

Outside references: PySCF's own UHF/UKS energies in a field, its analytic UHF gradients and
its ``spin_square``.  The methyl radical (9 electrons, a doublet) is the test molecule: at
UHF/STO-3G its ⟨S²⟩ is 0.765, well below the warning level; the allyl radical at UHF/STO-3G
(⟨S²⟩ ≈ 1.12) is the badly contaminated case.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from vibrapol.cli import main
from vibrapol.engine.compute import run_engine
from vibrapol.engine.evaluate import reference_calculation
from vibrapol.engine.fieldgrad import field_energy, field_gradient, field_scf, tighten_scf
from vibrapol.engine.openshell import (
    SpinContaminationError,
    check_symmetric_solution,
    refuse_level,
    spin_square_of_density,
    symmetry_deviation,
    ucphf_polarizability,
    warn_level,
)
from vibrapol.engine.polarizability import cphf_polarizability
from vibrapol.engine.scf import EngineInputError, MethodSpec, build_molecule, run_scf
from vibrapol.errors import OpenShellWarning
from vibrapol.symmetry import find_point_group
from vibrapol.units import BOHR_ANG

CH3_Z = np.array([6, 1, 1, 1])
#: Planar methyl radical (D3h), C–H 1.08 Å (our own model geometry, not optimised).
_S = 1.08 * np.sqrt(3.0) / 2.0
CH3_D3H_ANG = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 1.08], [_S, 0.0, -0.54], [-_S, 0.0, -0.54]])
#: The same radical bent and twisted to C1, so that every tensor component is independent.
CH3_C1_ANG = np.array(
    [[0.02, -0.01, 0.05], [0.05, 0.1, 1.07], [0.93, -0.12, -0.5], [-0.91, 0.2, -0.58]]
)
UHF = MethodSpec("hf", "sto-3g", 0, 2)
#: Triplet methylene, bent (our own model geometry, distorted to C1).
CH2_Z = np.array([6, 1, 1])
CH2_C1_ANG = np.array([[0.0, 0.02, 0.1], [0.03, 0.99, -0.45], [-0.05, -0.98, -0.5]])

#: Allyl radical, planar C2v model geometry (our own, C–C 1.42 Å, C–H 1.08 Å).
ALLYL_Z = np.array([6, 6, 6, 1, 1, 1, 1, 1])
ALLYL_ANG = np.array(
    [
        [0.0, 0.0, 0.0],
        [1.23, 0.7, 0.0],
        [-1.23, 0.7, 0.0],
        [0.0, -1.08, 0.0],
        [2.16, 0.15, 0.0],
        [1.25, 1.78, 0.0],
        [-2.16, 0.15, 0.0],
        [-1.25, 1.78, 0.0],
    ]
)


def _xyz(path, z, coords) -> str:
    symbols = {1: "H", 6: "C", 7: "N", 8: "O"}
    lines = [str(len(z)), "model geometry (our own)"]
    lines += [
        f"{symbols[int(a)]} {x:.6f} {y:.6f} {w:.6f}" for a, (x, y, w) in zip(z, coords, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


@pytest.mark.parametrize(
    ("method", "z", "coords", "multiplicity"),
    [
        ("hf", CH3_Z, CH3_C1_ANG, 2),
        ("hf", CH2_Z, CH2_C1_ANG, 3),
        pytest.param("b3lyp", CH3_Z, CH3_C1_ANG, 2, marks=pytest.mark.slow),
    ],
)
def test_unrestricted_cphf_alpha_matches_field_energy_differences(method, z, coords, multiplicity):
    # Check: α_ab = −∂²E/∂F_a∂F_b, by central differences (F = 1e-3 au) of PySCF's UHF/UKS
    # energy with +F·r in the core Hamiltonian (fieldgrad.field_energy); a doublet (CH3) and a
    # triplet (CH2).  The O(F²) truncation and SCF noise (1e-12 hartree / F²) stay below 1e-5
    # relative here.
    spec = MethodSpec(method, "sto-3g", 0, multiplicity)
    mol = build_molecule(z, coords, spec)
    mf = run_scf(mol, spec)
    alpha = cphf_polarizability(mf)  # dispatches to the unrestricted equations
    f = 1e-3
    dm0 = mf.make_rdm1()

    def energy(*components: tuple[int, float]) -> float:
        field = np.zeros(3)
        for axis, value in components:
            field[axis] += value
        return field_energy(mol, spec, field, dm0)

    e0 = energy()
    ff = np.zeros((3, 3))
    for a in range(3):
        ff[a, a] = -(energy((a, f)) - 2 * e0 + energy((a, -f))) / f**2
        for b in range(a):
            ff[a, b] = ff[b, a] = -(
                energy((a, f), (b, f))
                - energy((a, f), (b, -f))
                - energy((a, -f), (b, f))
                + energy((a, -f), (b, -f))
            ) / (4 * f**2)
    assert np.abs(alpha - ff).max() < 2e-5 * np.abs(ff).max()
    assert np.abs(alpha[np.triu_indices(3, 1)]).min() > 1e-3  # off-diagonals really checked


def test_unrestricted_equations_give_the_restricted_alpha_of_a_closed_shell():
    # Contract (the prefactor): for a closed shell U^α = U^β, so the unrestricted −2 Σ_σ must
    # equal the restricted −4; PySCF's UHF on a singlet water gives the RHF solution.
    from pyscf import scf

    spec = MethodSpec("hf", "sto-3g")
    z = np.array([8, 1, 1])
    coords = np.array([[0.03, 0.01, 0.1173], [0.0, 0.7772, -0.4192], [-0.04, -0.7572, -0.4692]])
    mol = build_molecule(z, coords, spec)
    rhf = run_scf(mol, spec)
    uhf = scf.UHF(mol)
    uhf.conv_tol = 1e-11
    uhf.kernel()
    np.testing.assert_allclose(ucphf_polarizability(uhf), cphf_polarizability(rhf), atol=1e-7)


@pytest.mark.parametrize("method", ["hf", "b3lyp"])
def test_field_gradient_of_open_shell_matches_energy_differences(method):
    # Check: dE(F)/dR of fieldgrad.field_gradient (PySCF's UHF/UKS gradient, which contracts the
    # core-Hamiltonian derivative with the total density, plus our field terms) against central
    # differences (h = 1e-4 bohr) of the UHF/UKS energy in the same field.
    spec = MethodSpec(method, "sto-3g", 0, 2)
    field = np.array([0.004, -0.003, 0.005])
    mol = build_molecule(CH3_Z, CH3_C1_ANG, spec)
    mf = field_scf(mol, spec, field)
    grad = field_gradient(mf, field)
    h = 1e-4 * BOHR_ANG
    for atom, axis in ((0, 2), (2, 0), (3, 1))[: 3 if spec.is_hf else 1]:
        energies = []
        for sign in (1, -1):
            moved = CH3_C1_ANG.copy()
            moved[atom, axis] += sign * h
            m = build_molecule(CH3_Z, moved, spec)
            energies.append(field_energy(m, spec, field, mf.make_rdm1()))
        fd = (energies[0] - energies[1]) / (2e-4)
        assert abs(grad[atom, axis] - fd) < 2e-7, (atom, axis, grad[atom, axis], fd)


@pytest.fixture(scope="module")
def ch3_reference():
    """UHF/STO-3G reference calculation of the planar methyl radical."""
    return reference_calculation(CH3_Z, CH3_D3H_ANG, UHF)


def test_unrestricted_hessian_matches_gradient_differences(ch3_reference):
    # Check: the analytic UHF Hessian (PySCF hessian.uhf) against central differences
    # (h = 1e-3 bohr) of PySCF's analytic UHF gradients (orbital gradient converged to 1e-9,
    # so that the noise of the difference stays near 1e-6); and the harmonic frequencies of
    # PySCF's own harmonic analysis agree with the difference Hessian's.
    from pyscf.hessian import thermo

    hess = ch3_reference.hessian_hartree_bohr2
    h = 1e-3
    fd = np.zeros_like(hess)
    for k in range(12):
        grads = []
        for sign in (1, -1):
            moved = CH3_D3H_ANG.copy()
            moved[k // 3, k % 3] += sign * h * BOHR_ANG
            mf = tighten_scf(run_scf(build_molecule(CH3_Z, moved, UHF), UHF), UHF)
            g = mf.nuc_grad_method()
            g.verbose = 0
            grads.append(np.asarray(g.kernel()).ravel())
        fd[k] = (grads[0] - grads[1]) / (2 * h)
    assert np.abs(hess - fd).max() < 1e-5 * np.abs(hess).max() + 1e-6
    mol = build_molecule(CH3_Z, CH3_D3H_ANG, UHF)

    def freqs(h2):
        n = len(CH3_Z)
        h4 = h2.reshape(n, 3, n, 3).transpose(0, 2, 1, 3)
        return np.sort(thermo.harmonic_analysis(mol, h4)["freq_wavenumber"].real)

    np.testing.assert_allclose(freqs(hess), freqs(fd), atol=0.5)


def test_spin_square_from_density_equals_pyscf():
    # Check against PySCF's spin_square: ⟨S²⟩ = S_z(S_z+1) + N_β − tr(D_α S D_β S).
    mol = build_molecule(CH3_Z, CH3_C1_ANG, UHF)
    mf = run_scf(mol, UHF)
    ours = spin_square_of_density(mf.make_rdm1(), mol.intor_symmetric("int1e_ovlp"))
    assert ours == pytest.approx(mf.spin_square()[0], abs=1e-10)
    assert 0.75 < ours < 0.75 + warn_level(2)  # a nearly pure doublet (common practice)


def test_thresholds_are_those_documented():
    # Contract with docs/limits.md: warning at 10 % of S(S+1), refusal at 10 % of the gap
    # 2S + 2 to the next multiplicity.
    assert warn_level(2) == pytest.approx(0.075) and refuse_level(2) == pytest.approx(0.3)
    assert warn_level(3) == pytest.approx(0.2) and refuse_level(3) == pytest.approx(0.4)


def test_open_shell_solution_keeps_the_nuclear_symmetry(ch3_reference):
    # Contract: a symmetric UHF solution passes the symmetry check of the reduced routes; the
    # same Hessian with one element changed (a broken-symmetry solution) is refused.
    group = find_point_group(CH3_Z, CH3_D3H_ANG)
    assert group.symbol == "D3h"
    ops, perms = group.operations, group.permutations
    hess, alpha = ch3_reference.hessian_hartree_bohr2, ch3_reference.alpha_ang3
    assert symmetry_deviation(ops, perms, hess, alpha) < 1e-7
    broken = hess.copy()
    broken[3, 3] *= 1.01
    with pytest.raises(EngineInputError, match="breaks the D3h symmetry.*--no-use-symmetry"):
        check_symmetric_solution(ops, perms, broken, alpha, UHF, group.symbol)


def test_field_route_agrees_with_cartesian_route_for_a_doublet():
    # Contract between routes: ∂α/∂x of the field route (UHF gradients in fields) and of the
    # Cartesian route (UHF + unrestricted CPHF at displaced geometries) agree; both use D3h.
    # The normal-mode route (∂α/∂Q only) gives the same Raman invariants.
    runs = {}
    for route in ("cartesian", "field", "normal-mode"):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", OpenShellWarning)
            runs[route] = run_engine(
                (CH3_Z, CH3_D3H_ANG), "hf", "sto-3g", multiplicity=2, route=route, optimize=False
            )
    a, b = runs["cartesian"].modes.dalpha_dx, runs["field"].modes.dalpha_dx
    assert runs["field"].point_group == "D3h"
    assert np.abs(a - b).max() < 2e-4 * np.abs(a).max()
    ref = np.array(runs["cartesian"].modes.raman_invariants())
    normal = np.array(runs["normal-mode"].modes.raman_invariants())
    assert np.abs(normal - ref).max() < 1e-3 * np.abs(ref).max()
    prov = runs["field"].modes.provenance
    assert prov.method == "UHF"
    assert any("multiplicity 2" in n and "<S^2> = 0.765" in n for n in prov.notes)


def test_compute_cli_reports_spin_square(tmp_path, capsys):
    # End to end: the ⟨S²⟩ line on stderr and in the written provenance.
    import json

    structure = _xyz(tmp_path / "ch3.xyz", CH3_Z, CH3_D3H_ANG)
    out = tmp_path / "ch3.modes.json"
    argv = ["compute", structure, "--basis", "sto-3g", "--multiplicity", "2", "--no-optimize"]
    with pytest.warns(OpenShellWarning, match=r"<S\^2> = 0\.765.*below the warning level 0\.075"):
        status = main([*argv, "--route", "field", "-o", str(out)])
    assert status == 0, capsys.readouterr().err
    data = json.loads(out.read_text())
    assert "UHF" in json.dumps(data["provenance"]) and "<S^2> = 0.765" in json.dumps(data)


def test_badly_contaminated_reference_is_refused(tmp_path, capsys):
    # The allyl radical at UHF/STO-3G: ⟨S²⟩ ≈ 1.12 (PySCF; UHF allyl is a common-practice
    # example of heavy spin contamination), deviation 0.37 > 0.3: one line, exit 2, no file.
    structure = _xyz(tmp_path / "allyl.xyz", ALLYL_Z, ALLYL_ANG)
    out = tmp_path / "allyl.modes.json"
    argv = ["compute", structure, "--basis", "sto-3g", "--multiplicity", "2", "--no-optimize"]
    assert main([*argv, "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "too spin-contaminated: <S^2> = 1.1" in err[0], err
    assert not out.exists()
    spec = MethodSpec("hf", "sto-3g", 0, 2)
    with pytest.raises(SpinContaminationError, match="deviation 0.3"):
        run_scf(build_molecule(ALLYL_Z, ALLYL_ANG, spec), spec)


@pytest.mark.parametrize(
    ("z", "charge", "multiplicity", "message"),
    [
        (CH3_Z, 0, 1, "9 electrons (charge 0) cannot be closed-shell"),
        (CH3_Z, 0, 3, "9 electrons (charge 0) cannot have multiplicity 3: an odd number"),
        (CH3_Z, 1, 2, "8 electrons (charge 1) cannot have multiplicity 2: an even number"),
        (np.array([1, 1, 1, 1]), 0, 7, "multiplicity 7 needs 6 unpaired electrons, but there"),
    ],
)
def test_charge_and_multiplicity_parity_errors(z, charge, multiplicity, message):
    # Contract: one line naming the electron count, charge and multiplicity.
    spec = MethodSpec("hf", "sto-3g", charge, multiplicity)
    with pytest.raises(EngineInputError) as info:
        build_molecule(z, CH3_D3H_ANG, spec)
    assert message in str(info.value) and "\n" not in str(info.value)


def test_resumed_run_reports_the_same_spin_square(tmp_path):
    # Contract: a rerun that takes the reference from the checkpoint (no SCF) reports the same
    # <S^2> (from the stored alpha and beta densities) and the same derivatives.
    runs = []
    for _ in range(2):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", OpenShellWarning)
            runs.append(
                run_engine(
                    (CH3_Z, CH3_D3H_ANG), "hf", "sto-3g", multiplicity=2, route="field",
                    optimize=False, checkpoint=tmp_path / "ch3.sqlite",
                )
            )  # fmt: skip
    assert runs[1].reused_reference and runs[1].tasks.n_reused == runs[1].tasks.n_tasks
    notes = [[n for n in r.modes.provenance.notes if "<S^2>" in n] for r in runs]
    assert notes[0] == notes[1] and len(notes[0]) == 1
    np.testing.assert_array_equal(runs[0].modes.dalpha_dx, runs[1].modes.dalpha_dx)
