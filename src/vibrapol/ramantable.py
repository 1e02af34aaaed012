"""The per-mode Raman table: invariants, activity, depolarization ratios, polarized or not."""

from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from vibrapol import invariants as inv
from vibrapol import tablechecks
from vibrapol.errors import AccuracyWarning, ShapeError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.polarization import POLARIZED, polarization_class, symmetry_prediction

if TYPE_CHECKING:
    import pandas as pd

    from vibrapol.symmetry import ModeSymmetry

#: Text of the note carried by tables of sources without any Raman data.
NO_RAMAN_NOTE = (
    "no Raman data in the source (a frequency job without Raman intensities): activities and "
    "ratios are empty; species, IR/Raman activity and polarization come from symmetry alone"
)


@dataclass(frozen=True, eq=False)
class RamanTable:
    """Per-mode Raman quantities of one :class:`ModeSet`.

    Attributes
    ----------
    freqs_cm1 : ndarray (n,)
    a2, gamma2 : ndarray (n,)
        Invariants of ∂α/∂Q, Å⁴ Da⁻¹ (NaN when the source gives only activities, or nothing).
    activity : ndarray (n,)
        S = 45a² + 7γ², Å⁴ Da⁻¹ (NaN when the source has no Raman data).
    rho_linear, rho_natural : ndarray (n,)
        Depolarization ratios of the mode's degenerate set (NaN for inactive modes, and for
        all modes when the source gives only activities).
    polarized : ndarray of bool (n,)
        Measurably polarized by the rule of :mod:`vibrapol.polarization`.
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
    ir_intensity_km_mol : ndarray (n,) or None
        IR intensities as the source gave them (None when unknown).
    purity : ndarray (n,) or None
        Quality of the species label of each mode's set, 1 = pure (None without symmetry).
    totally_symmetric : ndarray of bool (n,) or None
    polarization : tuple of str
        Outcome of :func:`vibrapol.polarization.polarization_class` per mode (or the
        prediction from symmetry when ρ is unknown; '' for inactive or unknown).
    shown_zero : ndarray of bool (n,) or None
        Raman-forbidden modes whose activity is numerical noise: shown as 0 (presentation only,
        the arrays above keep the values read).
    warnings, notes : tuple of str
        Everything an output of this table must repeat in its header: warnings (also sent to
        stderr) and notes.
    symmetrized : bool
        Whether the modes were averaged over the point group (only on request).
    descriptions : tuple of str
        What each mode does, in words with shares of the potential energy
        (:mod:`vibrapol.describe`); empty when not asked for, '' for a mode not described.

    Notes
    -----
    Shapes are checked when the table is made (one value per mode); the arrays are private
    read-only copies, so neither the caller's later edits nor edits through the table change
    it.  Use :func:`raman_table` to make one.
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
    ir_intensity_km_mol: np.ndarray | None = None
    purity: np.ndarray | None = None
    totally_symmetric: np.ndarray | None = None
    polarization: tuple[str, ...] = ()
    shown_zero: np.ndarray | None = None
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    symmetrized: bool = False
    descriptions: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        n = _column(self, "freqs_cm1", None, "f").shape[0]
        for name in ("a2", "gamma2", "activity", "rho_linear", "rho_natural"):
            _column(self, name, n, "f")
        _column(self, "polarized", n, "b")
        _column(self, "degenerate_set", n, "i")
        for name, kind in (
            ("ir_active", "b"),
            ("raman_active", "b"),
            ("totally_symmetric", "b"),
            ("shown_zero", "b"),
            ("ir_intensity_km_mol", "f"),
            ("purity", "f"),
        ):
            if getattr(self, name) is not None:
                _column(self, name, n, kind)
        _labels(self, "irreps", (n,))
        _labels(self, "polarization", (0, n))
        _labels(self, "descriptions", (0, n))
        _labels(self, "warnings", None)
        _labels(self, "notes", None)

    def __repr__(self) -> str:
        from vibrapol.display import table_lines

        return "\n".join(table_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import table_html

        return table_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The table as a pandas DataFrame, one row per mode.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.table_dataframe`.
        """
        from vibrapol.output.frames import table_dataframe

        return table_dataframe(self)

    @property
    def n_modes(self) -> int:
        """Number of modes in the table."""
        return int(self.freqs_cm1.shape[0])

    @property
    def has_raman_data(self) -> bool:
        """Whether the source gave any Raman numbers (activities at least)."""
        return bool(np.isfinite(self.activity).any())

    def sets(self) -> list[tuple[int, ...]]:
        """Mode indices of each degenerate set."""
        return [
            tuple(np.flatnonzero(self.degenerate_set == k)) for k in np.unique(self.degenerate_set)
        ]


_KINDS = {"f": (float, "numbers"), "b": (bool, "booleans"), "i": (int, "whole numbers")}


def _column(table: RamanTable, name: str, n: int | None, kind: str) -> np.ndarray:
    """Store a private read-only copy of one per-mode column after checking its shape."""
    dtype, what = _KINDS[kind]
    raw = np.asarray(getattr(table, name))
    allowed = {"f": "iuf", "b": "b", "i": "iu"}[kind]
    if raw.size and raw.dtype.kind not in allowed:
        raise ShapeError(f"RamanTable.{name} should hold {what}, got {raw.dtype}")
    arr: np.ndarray = np.array(raw, dtype=dtype, copy=True)
    want = "(n_modes,)" if n is None else f"({n},), one value per mode"
    if arr.ndim != 1 or (n is not None and arr.shape[0] != n):
        raise ShapeError(f"RamanTable.{name} should have shape {want}, got {arr.shape}")
    arr.setflags(write=False)
    object.__setattr__(table, name, arr)
    return arr


def _labels(table: RamanTable, name: str, lengths: tuple[int, ...] | None) -> None:
    """Store a tuple of strings after checking how many there are."""
    value: Any = getattr(table, name)
    if not isinstance(value, (tuple, list)) or not all(isinstance(x, str) for x in value):
        raise ShapeError(f"RamanTable.{name} should be a tuple of strings, got {value!r}")
    labels = tuple(value)
    if lengths is not None and len(labels) not in lengths:
        want = " or ".join(str(k) for k in lengths)
        raise ShapeError(
            f"RamanTable.{name} should hold {want} labels (one per mode), got {len(labels)}"
        )
    object.__setattr__(table, name, labels)


def raman_table(
    modes: ModeSet,
    *,
    sets: list[tuple[int, ...]] | None = None,
    degeneracy_tol_cm1: float = inv.DEGENERACY_TOL_CM1,
    irreps: tuple[str, ...] | None = None,
    point_group: str = "",
    symmetry: ModeSymmetry | None = None,
    describe: bool = False,
) -> RamanTable:
    """Compute the per-mode Raman table of ``modes``.

    Parameters
    ----------
    modes : ModeSet
        Any source: with ∂α (tensors), (a², γ²), only activities (then a², γ² and ρ are NaN),
        or no Raman data at all (then the activities are NaN too and, with ``symmetry``, the
        polarization column holds the species' prediction).
    sets : list of tuple of int, optional
        Degenerate sets (from symmetry).  Default: grouping by frequency within
        ``degeneracy_tol_cm1`` (:func:`vibrapol.invariants.degenerate_sets`).
    irreps, point_group : optional
        Symmetry labels to carry into the table.
    symmetry : ModeSymmetry, optional
        Result of :func:`vibrapol.symmetry.analyse_modes` for these modes (pass
        ``symmetry.modes`` as ``modes`` when it was symmetrized).  Its degenerate sets, species,
        point group, purity, selection rules and warnings are used and ``sets``, ``irreps`` and
        ``point_group`` must not be given.
    describe : bool
        Describe every mode by internal coordinates (:func:`vibrapol.describe.describe_modes`)
        into :attr:`RamanTable.descriptions`; when it cannot (an incomplete set of modes, part
        of a motion the connectivity misses) a note in :attr:`RamanTable.notes` says why.

    Warns
    -----
    AccuracyWarning
        When vibrations are missing (fewer than 3N − 6, 3N − 5 linear), several modes are
        imaginary, or every activity is zero.  The texts are also kept in
        :attr:`RamanTable.warnings`.

    Notes
    -----
    a², γ² and the activity are per mode; ρ is computed from the invariants summed over each
    degenerate set and given to every member, since only the sum is independent of the basis
    chosen inside the set (D. A. Long, The Raman Effect, 2002, ch. 5).  Modes whose set activity
    is below :data:`vibrapol.invariants.INACTIVE_FRACTION` of the largest get ρ = NaN.  No
    number of the source is changed; Raman-forbidden modes whose activity is numerical noise
    are only marked (:attr:`RamanTable.shown_zero`) for the formatters.
    """
    extra: dict = {}
    found: list[str] = []
    notes: list[str] = []
    linear = None
    if symmetry is not None:
        if sets is not None or irreps is not None or point_group:
            raise ValueError("give either symmetry or sets/irreps/point_group, not both")
        if symmetry.n_modes != modes.n_modes:
            raise ValueError(
                f"symmetry is for {symmetry.n_modes} modes, the mode set has {modes.n_modes}"
            )
        sets = [tuple(s) for s in symmetry.sets]
        irreps, point_group = symmetry.irreps, symmetry.group.symbol
        linear = symmetry.group.linear
        extra = {
            "ir_active": symmetry.ir_active.copy(),
            "raman_active": symmetry.raman_active.copy(),
            "totally_symmetric": symmetry.totally_symmetric.copy(),
            "purity": symmetry.purity,
            "symmetry_convention": symmetry.group.convention,
            "symmetrized": bool(symmetry.symmetrized),
        }
        found += symmetry.warnings
    nan = np.full(modes.n_modes, np.nan)
    if modes.has_raman:
        a2, gamma2 = modes.raman_invariants()
        s = inv.activity(a2, gamma2)
    else:
        a2, gamma2 = nan.copy(), nan.copy()
        s = nan.copy() if modes.activity is None else modes.activity.copy()
        if modes.activity is None:
            notes.append(NO_RAMAN_NOTE if symmetry is not None else NO_RAMAN_NOTE.split(";")[0])
    if sets is None:
        sets = inv.degenerate_sets(modes.freqs_cm1, degeneracy_tol_cm1)
    set_index = np.zeros(modes.n_modes, dtype=int)
    rho_l = nan.copy()
    rho_n = nan.copy()
    set_a2 = inv.sum_over_sets(a2, sets)
    set_g2 = inv.sum_over_sets(gamma2, sets)
    inactive = inv.inactive_mask(inv.sum_over_sets(np.nan_to_num(s), sets))
    for k, members in enumerate(sets):
        idx = list(members)
        set_index[idx] = k + 1
        if not inactive[k]:
            rho_l[idx] = inv.rho_linear(set_a2[k], set_g2[k])
            rho_n[idx] = inv.rho_natural(set_a2[k], set_g2[k])
    ts = extra.get("totally_symmetric")
    if np.isfinite(a2).any() or symmetry is None:
        polarization = polarization_class(rho_l, ts)
    else:
        polarization = symmetry_prediction(symmetry.totally_symmetric, symmetry.raman_active)
    irreps = tuple(irreps) if irreps is not None else ("",) * modes.n_modes
    shown_zero, zero_notes = tablechecks.forbidden_noise(
        s, extra.get("raman_active"), irreps, point_group
    )
    notes += zero_notes
    own = [tablechecks.missing_modes_warning(modes, linear), tablechecks.all_zero_warning(modes, s)]
    imaginary, loud = tablechecks.imaginary_modes_text(modes)
    own.append(imaginary if loud else "")
    if imaginary and not loud:
        notes.append(imaginary)
    for text in filter(None, own):
        warnings.warn(text, AccuracyWarning, stacklevel=2)
        found.append(text)
    descriptions: tuple[str, ...] = ()
    if describe:
        from vibrapol.describe import descriptions_with_notes

        described, why = descriptions_with_notes(modes)
        descriptions = tuple(described)
        notes += why
    ir = modes.ir_intensity_km_mol
    return RamanTable(
        freqs_cm1=modes.freqs_cm1.copy(),
        a2=a2,
        gamma2=gamma2,
        activity=s,
        rho_linear=rho_l,
        rho_natural=rho_n,
        polarized=np.array([p == POLARIZED for p in polarization], dtype=bool),
        degenerate_set=set_index,
        irreps=irreps,
        point_group=point_group,
        provenance=modes.provenance,
        ir_intensity_km_mol=None if ir is None else ir.copy(),
        polarization=tuple(str(p) for p in polarization),
        shown_zero=shown_zero,
        warnings=tuple(found),
        notes=tuple(notes),
        descriptions=descriptions,
        **extra,
    )


def with_warnings(table: RamanTable, texts: list[str] | tuple[str, ...]) -> RamanTable:
    """The same table with more warnings for its header (duplicates dropped, order kept)."""
    merged = tuple(dict.fromkeys((*table.warnings, *texts)))
    return dataclasses.replace(table, warnings=merged)


def symmetry_table(
    modes: ModeSet,
    *,
    tolerance_ang: float | None = None,
    symmetrize: bool = False,
    degeneracy_tol_cm1: float = inv.DEGENERACY_TOL_CM1,
    describe: bool = False,
) -> tuple[ModeSet, RamanTable]:
    """Raman table with species and degenerate sets from the point group of the structure.

    The point group is found from the coordinates (:func:`vibrapol.symmetry.mode_symmetry`).
    The numbers are the source's; only with ``symmetrize=True`` are the Hessian and tensors
    averaged over the group first (refused for sources with only a², γ² or activities), so
    that the modes returned differ slightly from those given (announced on stderr and in the
    table's provenance and warnings).  A single atom gets the table without symmetry, sets from
    ``degeneracy_tol_cm1``.  ``describe``: as for :func:`raman_table`.

    Returns
    -------
    (ModeSet, RamanTable)
        The modes the table describes, and the table.
    """
    from vibrapol.symmetry import DEFAULT_TOLERANCE_ANG, mode_symmetry

    inv.check_degeneracy_tol(degeneracy_tol_cm1)  # refused even when symmetry makes the sets
    if modes.n_atoms < 2:
        return modes, raman_table(modes, degeneracy_tol_cm1=degeneracy_tol_cm1, describe=describe)
    tol = DEFAULT_TOLERANCE_ANG if tolerance_ang is None else tolerance_ang
    sym = mode_symmetry(modes, tolerance_ang=tol, symmetrize=symmetrize)
    return sym.modes, raman_table(sym.modes, symmetry=sym, describe=describe)
