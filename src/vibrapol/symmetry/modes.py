"""Symmetry species of normal modes and of degenerate sets; symmetrization over the group.

A symmetry operation R acts on the 3N displacements by rotating each atom's displacement and
moving it to the partner atom: (D(R) u)_π(i) = R u_i.  Equivalent atoms have equal masses, so
D(R) acts the same way on mass-weighted vectors.  The weight of mode L in species Γ is
⟨L|P_Γ|L⟩ with the projector P_Γ = d_Γ / (g ⟨χ_Γ, χ_Γ⟩) Σ_R χ_Γ(R) D(R) (F. A. Cotton,
*Chemical Applications of Group Theory*, 3rd ed., 1990, ch. 6; the ⟨χ_Γ, χ_Γ⟩ factor covers
real species made of two complex or subgroup species).

Degenerate sets come from symmetry, not from frequencies: the partners of a mode are the modes
of the same species onto which the operations carry it, i.e. with the largest
Σ_R ⟨L_j|D(R)|L_k⟩².  A set is pure when its span is invariant under every operation.
"""

from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import AccuracyWarning, ChangedValuesWarning, ShapeError, VibrapolError
from vibrapol.modeset import ModeSet
from vibrapol.symmetry.characters import species_rules
from vibrapol.symmetry.pointgroup import (
    DEFAULT_TOLERANCE_ANG,
    PointGroup,
    find_point_group,
    symmetrize_coordinates,
)
from vibrapol.symmetry.printed import compare_program_species
from vibrapol.units import cm1_to_hessian_eigenvalue

#: A set whose species weight or invariance is below this is called impure (mixed): its modes
#: are named in a warning.  Modes of an exactly symmetric Hessian reach 1 − 1e-12; modes printed
#: to 2–3 decimals about 0.98–0.999.
PURITY_MIN = 0.95


def apply_operation(group: PointGroup, k: int, vectors: np.ndarray) -> np.ndarray:
    """D(R_k) applied to displacement vectors of shape (..., 3N)."""
    v = np.asarray(vectors, dtype=float)
    u = v.reshape(*v.shape[:-1], group.n_atoms, 3)
    out = np.empty_like(u)
    out[..., group.permutations[k], :] = u @ group.operations[k].T
    return out.reshape(v.shape)


def operation_overlaps(group: PointGroup, modes: np.ndarray) -> np.ndarray:
    """⟨L_j|D(R)|L_k⟩ for every operation, shape (g, n, n)."""
    m = np.asarray(modes, dtype=float)
    return np.array([m @ apply_operation(group, k, m).T for k in range(group.order)])


def species_weights(group: PointGroup, overlaps: np.ndarray) -> np.ndarray:
    """Weight ⟨L|P_Γ|L⟩ of every mode in every species, shape (n_modes, n_irreps)."""
    diag = np.einsum("gkk->kg", overlaps)
    factor = group.dims / (group.order * group.norms)
    return diag @ group.op_characters.T * factor[None, :]


@dataclass(frozen=True, eq=False)
class ModeSymmetry:
    """Symmetry species of each mode of a :class:`ModeSet`.

    Attributes
    ----------
    group : PointGroup
    modes : ModeSet
        The modes the labels belong to (symmetrized when :attr:`symmetrized`).
    irreps : tuple of str
        Species of each mode (that of its set).
    sets : tuple of tuple of int
        Degenerate sets from symmetry, in ascending order of their lowest frequency.
    set_irreps : tuple of str
    set_purity : ndarray (n_sets,)
        Weight of the set's span in its species (1 = pure).
    set_invariance : ndarray (n_sets,)
        (1/(d g)) Σ_R ‖V_Sᵀ D(R) V_S‖², 1 when the operations map the set onto itself.
    ir_active, raman_active, totally_symmetric : ndarray of bool (n_modes,)
    symmetrized : bool
        Whether the Hessian and tensors were averaged over the group first (only on request).
    notes : tuple of str
    warnings : tuple of str
        Warnings raised while labelling (mixed modes, averaging done), for output headers.
    """

    group: PointGroup
    modes: ModeSet
    irreps: tuple[str, ...]
    sets: tuple[tuple[int, ...], ...]
    set_irreps: tuple[str, ...]
    set_purity: np.ndarray
    set_invariance: np.ndarray
    ir_active: np.ndarray
    raman_active: np.ndarray
    totally_symmetric: np.ndarray
    symmetrized: bool
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        n = self.modes.n_modes
        members = sorted(k for s in self.sets for k in s)
        if len(self.irreps) != n or members != list(range(n)):
            raise ShapeError(f"species and sets must cover the {n} modes exactly once")
        if not (
            len(self.set_irreps)
            == len(self.set_purity)
            == len(self.set_invariance)
            == len(self.sets)
        ):
            raise ShapeError("one species, purity and invariance per set")
        for name in (
            "set_purity",
            "set_invariance",
            "ir_active",
            "raman_active",
            "totally_symmetric",
        ):
            value = np.array(getattr(self, name), copy=True)
            if name in ("ir_active", "raman_active", "totally_symmetric") and value.shape != (n,):
                raise ShapeError(f"{name} should have shape ({n},), got {value.shape}")
            value.setflags(write=False)
            object.__setattr__(self, name, value)

    @property
    def n_modes(self) -> int:
        """Number of modes."""
        return len(self.irreps)

    @property
    def set_quality(self) -> np.ndarray:
        """min(purity, invariance) of each set."""
        return np.minimum(self.set_purity, self.set_invariance)

    @property
    def purity(self) -> np.ndarray:
        """Quality of the set each mode belongs to, per mode."""
        out = np.zeros(self.n_modes)
        for s, q in zip(self.sets, self.set_quality, strict=True):
            out[list(s)] = q
        return out

    def counts(self) -> dict[str, int]:
        """Number of sets of each species (equals Γ_vib for a complete, pure mode set)."""
        out = {name: 0 for name in self.group.irreps}
        for name in self.set_irreps:
            out[name] += 1
        return {k: v for k, v in out.items() if v}


def classify_modes(group: PointGroup, modes_mw: np.ndarray, freqs_cm1: np.ndarray) -> tuple:
    """Species, degenerate sets and their purity for mass-weighted orthonormal modes.

    Returns
    -------
    sets, set_irreps, set_purity, set_invariance : see :class:`ModeSymmetry`.
    """
    modes_mw = np.asarray(modes_mw, dtype=float)
    freqs = np.asarray(freqs_cm1, dtype=float)
    overlaps = operation_overlaps(group, modes_mw)
    weights = species_weights(group, overlaps)
    best = np.argmax(weights, axis=1)
    dims = group.dims
    sets: list[tuple[int, ...]] = []
    for r in range(len(group.irreps)):
        members = [int(k) for k in np.argsort(freqs, kind="stable") if best[k] == r]
        d = int(dims[r])
        while members:
            start = members.pop(0)
            if d > 1 and members:
                score = np.sum(overlaps[:, members, start] ** 2, axis=0)
                chosen = [members[i] for i in np.argsort(-score, kind="stable")[: d - 1]]
                members = [m for m in members if m not in chosen]
                sets.append(tuple(sorted([start, *chosen])))
            else:
                sets.append((start,))
    sets.sort(key=lambda s: (min(freqs[list(s)]), s[0]))
    set_irreps, purity, invariance = [], [], []
    for s in sets:
        r = int(np.bincount(best[list(s)], minlength=len(group.irreps)).argmax())
        d = int(dims[r])
        idx = list(s)
        set_irreps.append(group.irreps[r])
        purity.append(float(np.sum(weights[idx, r]) / d))
        block = overlaps[:, idx][:, :, idx]
        invariance.append(float(np.sum(block**2) / (d * group.order)))
    return tuple(sets), tuple(set_irreps), np.array(purity), np.array(invariance)


def mixed_modes_warning(
    sets: tuple[tuple[int, ...], ...],
    quality: np.ndarray,
    group: PointGroup,
    where: str,
    has_tensors: bool = True,
) -> str:
    """The warning for sets whose purity is below :data:`PURITY_MIN` ('' when none is).

    Names every such mode with its purity, so a user can tell which labels to doubt, and says
    whether averaging over the group could be asked for (only with derivative tensors).
    """
    bad = [(k, float(q)) for s, q in zip(sets, quality, strict=True) if q < PURITY_MIN for k in s]
    if not bad:
        return ""
    listed = ", ".join(f"{k + 1} ({q:.2f})" for k, q in sorted(bad))
    n = len(bad)
    return (
        f"{where}: {n} mode{'s look' if n > 1 else ' looks'} mixed, not pure species of "
        f"{group.symbol} (purity below {PURITY_MIN}): mode{'s' if n > 1 else ''} {listed}; "
        "their labels are uncertain and their numbers are the source's "
        + (
            "(averaging over the group is opt-in: --symmetrize)"
            if has_tensors
            else "(without derivative tensors they cannot be averaged over the group)"
        )
    )


def analyse_modes(
    modes: ModeSet,
    group: PointGroup,
    *,
    symmetrize: bool = False,
) -> ModeSymmetry:
    """Assign every mode and every degenerate set of ``modes`` to a species of ``group``.

    Parameters
    ----------
    modes : ModeSet
    group : PointGroup
        From :func:`~vibrapol.symmetry.find_point_group` on ``modes``' own coordinates.
    symmetrize : bool
        Average the Hessian (rebuilt from frequencies and modes) and the Raman tensors over the
        group before the analysis (:func:`symmetrize_modeset`; refused for sources that give
        only a², γ² or activities).  Default False: the labels describe the modes as given.

    Returns
    -------
    ModeSymmetry

    Warns
    -----
    AccuracyWarning
        When some set is not a pure species (:data:`PURITY_MIN`), naming the modes; the same
        text is kept in :attr:`ModeSymmetry.warnings`.
    """
    if not isinstance(symmetrize, bool | np.bool_):
        raise TypeError(f"symmetrize must be True or False, got {symmetrize!r}")
    if group.n_atoms != modes.n_atoms:
        raise ShapeError(f"point group is for {group.n_atoms} atoms, the modes for {modes.n_atoms}")
    notes: list[str] = []
    found: list[str] = []
    where = modes.provenance.source_file or "mode set"
    if symmetrize:
        modes = symmetrize_modeset(modes, group)
        notes.append(modes.provenance.notes[-1])
        found.append(f"{where}: {modes.provenance.notes[-1]} (asked for with --symmetrize)")
        warnings.warn(found[-1], ChangedValuesWarning, stacklevel=2)
    sets, set_irreps, purity, invariance = classify_modes(group, modes.modes, modes.freqs_cm1)
    quality = np.minimum(purity, invariance)
    has_tensors = modes.dalpha_dq is not None or not modes.has_activity
    mixed = mixed_modes_warning(sets, quality, group, where, has_tensors)
    if mixed:
        found.append(mixed)
        warnings.warn(mixed, AccuracyWarning, stacklevel=2)
    rules = {r.irrep: r for r in species_rules(group)}
    irreps = [""] * modes.n_modes
    for s, name in zip(sets, set_irreps, strict=True):
        for k in s:
            irreps[k] = name
    if modes.program_irreps is not None:
        notes.append(compare_program_species(group, irreps, modes.program_irreps, where))
    return ModeSymmetry(
        group=group,
        modes=modes,
        irreps=tuple(irreps),
        sets=sets,
        set_irreps=set_irreps,
        set_purity=purity,
        set_invariance=invariance,
        ir_active=np.array([rules[n].ir_active for n in irreps], dtype=bool),
        raman_active=np.array([rules[n].raman_active for n in irreps], dtype=bool),
        totally_symmetric=np.array([rules[n].totally_symmetric for n in irreps], dtype=bool),
        symmetrized=symmetrize,
        notes=tuple(notes),
        warnings=tuple(found),
    )


def mode_symmetry(
    modes: ModeSet,
    *,
    tolerance_ang: float = DEFAULT_TOLERANCE_ANG,
    symmetrize: bool = False,
) -> ModeSymmetry:
    """Point group of ``modes``' structure and the species of every mode, in one call.

    See :func:`~vibrapol.symmetry.find_point_group` and :func:`analyse_modes`.
    """
    group = find_point_group(
        modes.atomic_numbers,
        modes.coordinates_ang,
        modes.masses_da,
        tolerance_ang=tolerance_ang,
        where=modes.provenance.source_file,
    )
    return analyse_modes(modes, group, symmetrize=symmetrize)


def cartesian_operator(group: PointGroup, k: int) -> np.ndarray:
    """The (3N, 3N) matrix D(R_k) on Cartesian displacements."""
    return apply_operation(group, k, np.eye(3 * group.n_atoms)).T


def symmetrize_hessian(hessian: np.ndarray, group: PointGroup) -> np.ndarray:
    """Group average (1/g) Σ_R D(R) H D(R)ᵀ of a (3N, 3N) Cartesian Hessian (any unit)."""
    h = np.asarray(hessian, dtype=float)
    n3 = 3 * group.n_atoms
    h = h.reshape(n3, n3)
    total = np.zeros_like(h)
    for k in range(group.order):
        d = cartesian_operator(group, k)
        total += d @ h @ d.T
    return total / group.order


def symmetrize_dalpha_dx(dalpha_dx: np.ndarray, group: PointGroup) -> np.ndarray:
    """Group average of Cartesian polarizability derivatives (3N, 3, 3).

    ∂α/∂x transforms as a displacement index times a second-rank tensor:
    (R·T)_{π(i)a, bc} = Σ R_aa′ R_bb′ R_cc′ T_{ia′, b′c′}.
    """
    t = np.asarray(dalpha_dx, dtype=float).reshape(group.n_atoms, 3, 3, 3)
    total = np.zeros_like(t)
    for r, perm in zip(group.operations, group.permutations, strict=True):
        total[perm] += np.einsum("ap,bq,cs,ipqs->iabc", r, r, r, t)
    return (total / group.order).reshape(3 * group.n_atoms, 3, 3)


def symmetrize_modeset(modes: ModeSet, group: PointGroup) -> ModeSet:
    """A ModeSet averaged over ``group``: geometry, Hessian, tensors, then new modes.

    The mass-weighted Hessian is rebuilt from the frequencies and modes (Σ λ_k L_k L_kᵀ),
    averaged over the group and diagonalised again at the symmetrized geometry with
    :func:`vibrapol.vibrations.harmonic_analysis`.  ∂α/∂x (or ∂α/∂Q re-expanded on the
    Cartesians) is averaged the same way.  New modes keep the order of the old ones (best
    overlap).

    Raises
    ------
    VibrapolError
        If the mode set is not complete (3N − 6 or 3N − 5 modes), or if the source gives only
        the scalar invariants a², γ² or activities: those of mixed modes cannot be un-mixed (the
        signs and cross terms of the tensors are lost), so averaging would invent numbers.
    """
    from vibrapol.vibrations import harmonic_analysis

    n = modes.n_atoms
    masses = modes.masses_da
    assert masses is not None  # a ModeSet fills in default masses
    where = modes.provenance.source_file or "mode set"
    if modes.dalpha_dq is None and (modes.a2 is not None or modes.activity is not None):
        raise VibrapolError(
            f"{where}: --symmetrize refused: the source gives only activities and ratios (scalar "
            "invariants), and those of mixed modes cannot be un-mixed by averaging over the group; "
            "symmetrizing needs polarizability derivative tensors"
        )
    expected = 3 * n - (5 if group.linear else 6)
    if modes.n_modes != expected:
        raise VibrapolError(
            f"{where}: --symmetrize needs all {expected} vibrations, the source has {modes.n_modes}"
        )
    coords = symmetrize_coordinates(modes.coordinates_ang, group)
    lam = cm1_to_hessian_eigenvalue(modes.freqs_cm1)  # hartree bohr⁻² Da⁻¹, as harmonic_analysis
    sqrt_m = np.repeat(np.sqrt(masses), 3)
    h_mw = modes.modes.T @ (lam[:, None] * modes.modes)
    h_cart = sqrt_m[:, None] * h_mw * sqrt_m[None, :]
    h_cart = symmetrize_hessian(h_cart, group)
    harmonic = harmonic_analysis(h_cart, masses, coords)
    overlap = harmonic.modes @ modes.modes.T  # (new, old)
    from scipy.optimize import linear_sum_assignment  # here: SciPy is slow to import

    rows, cols = linear_sum_assignment(-(overlap**2))
    order = rows[np.argsort(cols)]
    new_modes = harmonic.modes[order]
    new_freqs = harmonic.freqs_cm1[order]
    extra: dict = {"dalpha_dx": None, "dalpha_dq": None, "ir_intensity_km_mol": None}
    if modes.dalpha_dx is not None:
        extra["dalpha_dx"] = symmetrize_dalpha_dx(modes.dalpha_dx, group)
    elif modes.dalpha_dq is not None:
        dadx = np.einsum("ki,kab->iab", modes.modes, modes.dalpha_dq) * sqrt_m[:, None, None]
        dadx = symmetrize_dalpha_dx(dadx, group)
        extra["dalpha_dq"] = np.einsum("ki,iab->kab", new_modes, dadx / sqrt_m[:, None, None])
    shift = float(np.max(np.linalg.norm(coords - modes.coordinates_ang, axis=1)))
    dropped = "; IR intensities dropped" if modes.ir_intensity_km_mol is not None else ""
    note = (
        f"symmetrized over {group.symbol}: atoms moved by ≤ {shift:.2g} Å, Hessian"
        + (" and Raman tensors" if modes.has_raman else "")
        + f" averaged over the group; largest frequency change "
        f"{np.max(np.abs(new_freqs - modes.freqs_cm1)):.2g} cm⁻¹{dropped}"
    )
    return dataclasses.replace(
        modes,
        coordinates_ang=coords,
        freqs_cm1=new_freqs,
        modes=new_modes,
        provenance=modes.provenance.with_note(note),
        **extra,
    )
