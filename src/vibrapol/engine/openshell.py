"""Open shells: spin contamination of UHF/UKS references and their static polarizability.

For a multiplicity M = 2S + 1 > 1 the engine runs spin-unrestricted Hartree–Fock or Kohn–Sham
(PySCF ``scf.UHF`` / ``dft.UKS``).  An unrestricted determinant is not an eigenfunction of Ŝ²:
its expectation value

    ⟨S²⟩ = S_z(S_z + 1) + N_β − Σ_ij |⟨φ_iα|φ_jβ⟩|²  = S_z(S_z + 1) + N_β − tr(D_α S D_β S)

(A. Szabo and N. S. Ostlund, *Modern Quantum Chemistry*, 1989, ch. 3, from memory; checked
against PySCF's ``spin_square`` in the tests; for UKS it is that of the Kohn–Sham determinant,
as PySCF reports it) exceeds
the exact S(S + 1) by the admixture of higher spin states.  Thresholds on the deviation
Δ = ⟨S²⟩ − S(S + 1):

* **warning** when Δ > 10 % of S(S + 1) (0.075 for a doublet, 0.2 for a triplet).  Common
  practice: a deviation of more than about 10 % is the usual rule of thumb for "significant
  spin contamination" in computational-chemistry texts (from memory, no single source);
* **refusal** when Δ > 0.1·(2S + 2), i.e. when the state holds more than about 10 % of the
  next spin multiplicity (S + 1) if that is the only contaminant (its ⟨S²⟩ is larger by
  2S + 2): 0.3 for a doublet, 0.4 for a triplet.  Our choice, on the same common-practice
  scale: with that much of another state, the energy surface, its Hessian and α belong to a
  mixture, UHF solutions at displaced geometries or in fields can change character, and the
  finite differences of the routes lose their meaning.  The allyl radical at UHF/STO-3G
  (⟨S²⟩ ≈ 1.12, Δ ≈ 0.37) is refused; the small radicals tried here (OH, NO₂, CH₃ at
UHF/STO-3G: Δ < 0.02) pass.

Every SCF of an open-shell run is checked against the refusal level (the reference, each
displaced geometry and each field), so that a task that converges onto a more contaminated
solution stops the run instead of giving a wrong difference.
"""

from __future__ import annotations

import numpy as np

from vibrapol.engine.scf import EngineInputError, MethodSpec

#: Warning level, as a fraction of S(S + 1) (common practice, see the module notes).
WARN_FRACTION = 0.10
#: Refusal level, as a fraction of the ⟨S²⟩ gap 2S + 2 to the next multiplicity (our choice).
REFUSE_FRACTION_OF_GAP = 0.10


class SpinContaminationError(EngineInputError):
    """An unrestricted reference too spin-contaminated for meaningful derivatives."""


def exact_spin_square(multiplicity: int) -> float:
    """S(S + 1) of a pure spin state of multiplicity 2S + 1."""
    s = 0.5 * (multiplicity - 1)
    return s * (s + 1.0)


def warn_level(multiplicity: int) -> float:
    """Deviation Δ of ⟨S²⟩ above which a warning is given."""
    return WARN_FRACTION * exact_spin_square(multiplicity)


def refuse_level(multiplicity: int) -> float:
    """Deviation Δ of ⟨S²⟩ above which the engine refuses the molecule."""
    s = 0.5 * (multiplicity - 1)
    return REFUSE_FRACTION_OF_GAP * (2.0 * s + 2.0)


def spin_square_of_density(density: np.ndarray, overlap: np.ndarray) -> float:
    """⟨S²⟩ of an unrestricted determinant from its (2, nao, nao) α and β densities."""
    d_a, d_b = np.asarray(density)
    n_a = float(np.einsum("pq,qp->", d_a, overlap))
    n_b = float(np.einsum("pq,qp->", d_b, overlap))
    sz = 0.5 * (n_a - n_b)
    overlap_ab = float(np.einsum("pq,qr,rs,sp->", d_a, overlap, d_b, overlap))
    return sz * (sz + 1.0) + n_b - overlap_ab


def spin_square(mf) -> float:  # noqa: ANN001
    """⟨S²⟩ of a converged UHF/UKS object (PySCF's ``spin_square``)."""
    return float(mf.spin_square()[0])


def spin_note(s2: float, spec: MethodSpec) -> str:
    """One sentence on ⟨S²⟩ for stderr and the provenance."""
    exact = exact_spin_square(spec.multiplicity)
    deviation = s2 - exact
    level = warn_level(spec.multiplicity)
    verdict = (
        f"above the warning level {level:.3g}: spin-contaminated reference, treat the "
        "modes and activities with caution"
        if deviation > level
        else f"below the warning level {level:.3g}"
    )
    return (
        f"open shell, multiplicity {spec.multiplicity} ({spec.label()}, unrestricted): "
        f"<S^2> = {s2:.4f} at the reference geometry, exact S(S+1) = {exact:.4f}, "
        f"deviation {deviation:.4f}, {verdict} "
        f"(refusal above {refuse_level(spec.multiplicity):.3g})"
    )


def check_spin_contamination(s2: float, spec: MethodSpec, where: str) -> None:
    """Raise :class:`SpinContaminationError` when ⟨S²⟩ is beyond the refusal level."""
    exact = exact_spin_square(spec.multiplicity)
    limit = refuse_level(spec.multiplicity)
    if s2 - exact > limit:
        raise SpinContaminationError(
            f"{spec.label()} SCF at the {where} is too spin-contaminated: <S^2> = "
            f"{s2:.4f} against S(S+1) = {exact:.4f} (deviation {s2 - exact:.3f} > {limit:.3g}, "
            "docs/limits.md); try a functional (UKS) instead of UHF, or another program "
            "(ROHF-based or multireference)"
        )


def check_scf_spin(mf, spec: MethodSpec, where: str) -> None:  # noqa: ANN001
    """:func:`check_spin_contamination` of a converged SCF object (no-op for closed shells)."""
    if spec.is_unrestricted:
        check_spin_contamination(spin_square(mf), spec, where)


def ucphf_polarizability(mf) -> np.ndarray:  # noqa: ANN001
    """Static polarizability of a converged UHF/UKS object, bohr³ (a.u.).

    The spin-unrestricted counterpart of
    :func:`~vibrapol.engine.polarizability.cphf_polarizability`: the perturbation h¹ = r
    (origin at the centre of nuclear charge) acts on the α and β orbitals alike; PySCF's
    ``ucphf.solve`` with the SCF object's ``gen_response`` (which couples the two spins and,
    for UKS, includes the exchange–correlation kernel) gives the occupied–virtual responses
    U^α and U^β, and

        α_xy = −2 Σ_σ Σ_ai h¹_x,ai^σ U^σ_y,ai

    (1 for single occupancy × 2 for the symmetric density response; the closed-shell −4 is
    this with U^α = U^β).  Checked against finite differences of the UHF dipole in a field.
    """
    from pyscf.scf import ucphf

    from vibrapol.engine.polarizability import CPHF_MAX_CYCLE, CPHF_TOL, _charge_center

    mol = mf.mol
    with mol.with_common_orig(_charge_center(mol)):
        dipole_ints = mol.intor_symmetric("int1e_r", comp=3)
    orbs = []
    for c, occ in zip(mf.mo_coeff, mf.mo_occ, strict=True):
        orbs.append((c[:, occ > 0], c[:, occ == 0]))
    h1 = [np.einsum("xpq,pa,qi->xai", dipole_ints, v, o) for o, v in orbs]
    sizes = [v.shape[1] * o.shape[1] for o, v in orbs]
    from vibrapol.engine.solvent import response_function

    response = response_function(mf)  # with a solvent: the optical (ε∞) response

    def fvind(x: np.ndarray) -> np.ndarray:
        x = x.reshape(-1, sizes[0] + sizes[1])
        dms = []
        for (o, v), part in zip(orbs, (x[:, : sizes[0]], x[:, sizes[0] :]), strict=True):
            u = part.reshape(-1, v.shape[1], o.shape[1])
            dm = np.einsum("xai,pa,qi->xpq", u, v, o)
            dms.append(dm + dm.transpose(0, 2, 1))
        v1 = response(np.array(dms))
        out = [
            np.einsum("xpq,pa,qi->xai", v1[s], v, o).reshape(x.shape[0], -1)
            for s, (o, v) in enumerate(orbs)
        ]
        return np.hstack(out)

    (u_a, u_b), _ = ucphf.solve(
        fvind,
        mf.mo_energy,
        mf.mo_occ,
        h1,
        None,
        max_cycle=CPHF_MAX_CYCLE,
        tol=CPHF_TOL,
        verbose=0,
    )
    alpha = -2.0 * (np.einsum("xai,yai->xy", h1[0], u_a) + np.einsum("xai,yai->xy", h1[1], u_b))
    return 0.5 * (alpha + alpha.T)


def reference_spin_note(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    density: np.ndarray,
) -> str | None:
    """The ⟨S²⟩ sentence of an open-shell reference (None for a closed shell).

    ⟨S²⟩ is taken from the reference's stored (2, nao, nao) density, so that a reference read
    back from a checkpoint gets the same note and the same refusal check.

    Raises
    ------
    SpinContaminationError
        Beyond the refusal level.
    """
    if not spec.is_unrestricted:
        return None
    from vibrapol.engine.scf import build_molecule

    mol = build_molecule(atomic_numbers, coordinates_ang, spec)
    s2 = spin_square_of_density(density, mol.intor_symmetric("int1e_ovlp"))
    check_spin_contamination(s2, spec, "reference geometry")
    return spin_note(s2, spec)


#: Largest relative deviation of the reference Hessian and α from the point group's symmetry
#: accepted for an open shell (the closed-shell references meet it by far: SCF noise ≈ 1e-9).
SYMMETRY_TOLERANCE = 1e-5


def symmetry_deviation(
    operations: np.ndarray,
    permutations: np.ndarray,
    hessian: np.ndarray,
    alpha: np.ndarray,
) -> float:
    """Largest relative deviation of the Hessian and α from the given operations.

    A solution with the nuclei's symmetry has H_{π(i)π(j)} = R H_ij Rᵀ for every operation R
    carrying atom i onto π(i), and R α Rᵀ = α.
    """
    n = hessian.shape[0] // 3
    h = np.asarray(hessian).reshape(n, 3, n, 3).transpose(0, 2, 1, 3)
    a = np.asarray(alpha)
    worst = 0.0
    for r, perm in zip(operations, permutations, strict=True):
        image = np.einsum("ab,ijbc,dc->ijad", r, h, r)
        moved = np.empty_like(h)
        moved[np.ix_(perm, perm)] = image
        worst = max(worst, float(np.abs(moved - h).max() / max(np.abs(h).max(), 1e-300)))
        worst = max(worst, float(np.abs(r @ a @ r.T - a).max() / max(np.abs(a).max(), 1e-300)))
    return worst


def check_symmetric_solution(
    operations: np.ndarray,
    permutations: np.ndarray,
    hessian: np.ndarray,
    alpha: np.ndarray,
    spec: MethodSpec,
    group_symbol: str,
) -> None:
    """Refuse an open-shell reference whose solution breaks the symmetry the tasks will use.

    A UHF/UKS solution can have lower symmetry than the nuclei (symmetry breaking); the
    symmetry-reduced routes would then rebuild ∂α from the wrong images.

    Raises
    ------
    EngineInputError
        When :func:`symmetry_deviation` exceeds :data:`SYMMETRY_TOLERANCE`.
    """
    deviation = symmetry_deviation(operations, permutations, hessian, alpha)
    if deviation > SYMMETRY_TOLERANCE:
        raise EngineInputError(
            f"the {spec.label()} solution breaks the {group_symbol} symmetry of the nuclei "
            f"(Hessian or alpha off by {deviation:.1e} relative): rerun with --no-use-symmetry"
        )
