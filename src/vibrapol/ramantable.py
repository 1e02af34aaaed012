"""The per-mode Raman table: invariants, activity, depolarization ratios, polarized or not."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vibrapol import invariants as inv
from vibrapol.modeset import ModeSet, Provenance

if TYPE_CHECKING:
    from vibrapol.symmetry import ModeSymmetry

#: A band is called polarized when ρ_linear < 3/4 − POLARIZED_MARGIN (and it has activity).
#: Non-totally-symmetric modes have ρ_linear = 3/4 exactly (D. A. Long, The Raman Effect, 2002,
#: ch. 5); printed ratios carry 3–4 decimals, so 0.01 separates "3/4 within print precision"
#: from a genuinely polarized band.
POLARIZED_MARGIN = 0.01


@dataclass(frozen=True, eq=False)
class RamanTable:
    """Per-mode Raman quantities of one :class:`ModeSet`.

    Attributes
    ----------
    freqs_cm1 : ndarray (n,)
    a2, gamma2 : ndarray (n,)
        Invariants of ∂α/∂Q, Å⁴ Da⁻¹ (NaN when the source gives only activities).
    activity : ndarray (n,)
        S = 45a² + 7γ², Å⁴ Da⁻¹.
    rho_linear, rho_natural : ndarray (n,)
        Depolarization ratios of the mode's degenerate set (NaN for inactive modes, and for
        all modes when the source gives only activities).
    polarized : ndarray of bool (n,)
        ρ_linear < 3/4 − :data:`POLARIZED_MARGIN` and the mode is Raman-active.
    degenerate_set : ndarray of int (n,)
        Index (1-based, ascending frequency) of the degenerate set the mode belongs to.
    irreps : tuple of str
        Irreducible representation of each mode ('' when symmetry is not known).
    point_group : str
        Schoenflies symbol ('' when not known).
    provenance : Provenance
    ir_active, raman_active : ndarray of bool (n,) or None
        Selection rules of each mode's species (None when symmetry is not known).
    symmetry_convention : str
        Axis convention behind the species names ('' when not known).
    """

    freqs_cm1: np.ndarray
    a2: np.ndarray
    gamma2: np.ndarray
    activity: np.ndarray
    rho_linear: np.ndarray
    rho_natural: np.ndarray
    polarized: np.ndarray
    degenerate_set: np.ndarray
    irreps: tuple[str, ...]
    point_group: str
    provenance: Provenance
    ir_active: np.ndarray | None = None
    raman_active: np.ndarray | None = None
    symmetry_convention: str = ""

    @property
    def n_modes(self) -> int:
        """Number of modes in the table."""
        return int(self.freqs_cm1.shape[0])

    def sets(self) -> list[tuple[int, ...]]:
        """Mode indices of each degenerate set."""
        return [
            tuple(np.flatnonzero(self.degenerate_set == k)) for k in np.unique(self.degenerate_set)
        ]


def raman_table(
    modes: ModeSet,
    *,
    sets: list[tuple[int, ...]] | None = None,
    degeneracy_tol_cm1: float = inv.DEGENERACY_TOL_CM1,
    irreps: tuple[str, ...] | None = None,
    point_group: str = "",
    symmetry: ModeSymmetry | None = None,
) -> RamanTable:
    """Compute the per-mode Raman table of ``modes``.

    Parameters
    ----------
    modes : ModeSet
        Must carry ∂α (tensors), (a², γ²), or at least the activities (then a², γ² and ρ are
        NaN and no band is called polarized).
    sets : list of tuple of int, optional
        Degenerate sets (from symmetry).  Default: grouping by frequency within
        ``degeneracy_tol_cm1`` (:func:`vibrapol.invariants.degenerate_sets`).
    irreps, point_group : optional
        Symmetry labels to carry into the table.
    symmetry : ModeSymmetry, optional
        Result of :func:`vibrapol.symmetry.analyse_modes` for these modes (pass
        ``symmetry.modes`` as ``modes`` when it was symmetrized).  Its degenerate sets, species,
        point group and selection rules are used and ``sets``, ``irreps`` and ``point_group``
        must not be given.

    Notes
    -----
    a², γ² and the activity are per mode; ρ is computed from the invariants summed over each
    degenerate set and given to every member, since only the sum is independent of the basis
    chosen inside the set (D. A. Long, The Raman Effect, 2002, ch. 5).  Modes whose set activity
    is below :data:`vibrapol.invariants.INACTIVE_FRACTION` of the largest get ρ = NaN.
    """
    rules: dict = {}
    if symmetry is not None:
        if sets is not None or irreps is not None or point_group:
            raise ValueError("give either symmetry or sets/irreps/point_group, not both")
        if symmetry.n_modes != modes.n_modes:
            raise ValueError(
                f"symmetry is for {symmetry.n_modes} modes, the mode set has {modes.n_modes}"
            )
        sets = [tuple(s) for s in symmetry.sets]
        irreps, point_group = symmetry.irreps, symmetry.group.symbol
        rules = {
            "ir_active": symmetry.ir_active.copy(),
            "raman_active": symmetry.raman_active.copy(),
            "symmetry_convention": symmetry.group.convention,
        }
    if modes.activity is not None and not modes.has_raman:
        s = modes.activity.copy()
        a2 = np.full(modes.n_modes, np.nan)
        gamma2 = np.full(modes.n_modes, np.nan)
    else:
        a2, gamma2 = modes.raman_invariants()
        s = inv.activity(a2, gamma2)
    if sets is None:
        sets = inv.degenerate_sets(modes.freqs_cm1, degeneracy_tol_cm1)
    set_index = np.zeros(modes.n_modes, dtype=int)
    rho_l = np.full(modes.n_modes, np.nan)
    rho_n = np.full(modes.n_modes, np.nan)
    set_a2 = inv.sum_over_sets(a2, sets)
    set_g2 = inv.sum_over_sets(gamma2, sets)
    set_s = inv.sum_over_sets(s, sets)
    inactive = inv.inactive_mask(set_s)
    for k, members in enumerate(sets):
        idx = list(members)
        set_index[idx] = k + 1
        if not inactive[k]:
            rho_l[idx] = inv.rho_linear(set_a2[k], set_g2[k])
            rho_n[idx] = inv.rho_natural(set_a2[k], set_g2[k])
    polarized = np.nan_to_num(rho_l, nan=1.0) < 0.75 - POLARIZED_MARGIN
    return RamanTable(
        freqs_cm1=modes.freqs_cm1.copy(),
        a2=a2,
        gamma2=gamma2,
        activity=s,
        rho_linear=rho_l,
        rho_natural=rho_n,
        polarized=polarized,
        degenerate_set=set_index,
        irreps=tuple(irreps) if irreps is not None else ("",) * modes.n_modes,
        point_group=point_group,
        provenance=modes.provenance,
        **rules,
    )


def symmetry_table(
    modes: ModeSet,
    *,
    tolerance_ang: float | None = None,
    symmetrize: str = "auto",
    degeneracy_tol_cm1: float = inv.DEGENERACY_TOL_CM1,
) -> tuple[ModeSet, RamanTable]:
    """Raman table with species and degenerate sets from the point group of the structure.

    The point group is found from the coordinates (:func:`vibrapol.symmetry.mode_symmetry`);
    with ``symmetrize="auto"`` impure modes are first averaged over the group, so the modes
    returned may differ slightly from those given (the table's provenance says so).  A single
    atom gets the table without symmetry, sets from ``degeneracy_tol_cm1``.

    Returns
    -------
    (ModeSet, RamanTable)
        The modes the table describes, and the table.
    """
    from vibrapol.symmetry import DEFAULT_TOLERANCE_ANG, mode_symmetry

    inv.check_degeneracy_tol(degeneracy_tol_cm1)  # refused even when symmetry makes the sets
    if modes.n_atoms < 2:
        return modes, raman_table(modes, degeneracy_tol_cm1=degeneracy_tol_cm1)
    tol = DEFAULT_TOLERANCE_ANG if tolerance_ang is None else tolerance_ang
    sym = mode_symmetry(modes, tolerance_ang=tol, symmetrize=symmetrize)
    return sym.modes, raman_table(sym.modes, symmetry=sym)
