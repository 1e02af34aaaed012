"""Theoretical Raman spectra: sticks per band and broadened spectra on a grid.

``stick_spectrum`` turns a :class:`~vibrapol.modeset.ModeSet` into a :class:`StickSpectrum`: one
stick per degenerate set, with a height in each polarization channel
(:mod:`vibrapol.spectrum.channels`) for the chosen quantity, laser line, temperature and scattering
geometry. ``broaden`` samples it on a grid with a line shape (:mod:`vibrapol.spectrum.lineshapes`)
into a :class:`GridSpectrum`.

Broadening lives in :mod:`vibrapol.spectrum.broadening` and is re-exported here.

Stick heights are one of the quantities of :mod:`vibrapol.spectrum.quantities` (Raman activity,
relative intensity at a laser line and temperature, absolute cross section), Stokes or anti-Stokes.

Scaled wavenumbers (:mod:`vibrapol.spectrum.scaling`) are used for the band positions and in
every factor.
"""

from __future__ import annotations

import math
import re
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.errors import AccuracyWarning, ShapeError, VibrapolError
from vibrapol.invariants import DEGENERACY_TOL_CM1, check_degeneracy_tol, sum_over_sets
from vibrapol.modeset import ModeSet
from vibrapol.polarization import UNRESOLVED
from vibrapol.ramantable import RamanTable, raman_table, symmetry_table
from vibrapol.spectrum.broadening import (  # noqa: F401  (re-exported: the public spectrum API)
    ACTIVE_FRACTION,
    DEFAULT_LINESHAPE,
    HIDDEN_BAND_FRACTION,
    GridSpectrum,
    broaden,
    default_range,
    hidden_bands,
    make_grid,
    read_only,
)
from vibrapol.spectrum.channels import (
    RATIO_CHANNELS,
    check_geometry,
    depolarization_ratios,
    isotropic_channel_activity,
    with_base_channels,
)
from vibrapol.spectrum.orientation import Orientation, oriented_channel_activity
from vibrapol.spectrum.quantities import (
    DETECTOR_NOTES,
    QUANTITY_UNITS,
    SIDES,
    check_detector,
    quantity_factor,
    thermal_factor,
)
from vibrapol.spectrum.scaling import NO_SCALE, FrequencyScale

if TYPE_CHECKING:
    import pandas as pd


#: Bands below this wavenumber are suspicious (residual rotations/translations): warned.
LOW_BAND_CM1 = 10.0


@dataclass(frozen=True)
class Conditions:
    """What a spectrum was computed for (carried into headers and captions)."""

    quantity: str = "activity"
    laser_nm: float = 532.0
    temperature_k: float = 298.15
    geometry_deg: int = 90
    side: str = "stokes"
    scale: FrequencyScale = NO_SCALE
    orientation: str = "isotropic"
    detector: str = "photon"
    method: str = ""

    def __post_init__(self) -> None:
        check_detector(self.detector)
        if self.quantity not in QUANTITY_UNITS:
            raise VibrapolError(
                f"unknown quantity {self.quantity!r}; choose one of {', '.join(QUANTITY_UNITS)}"
            )
        if self.side not in SIDES:
            raise VibrapolError(f"side must be one of {', '.join(SIDES)}, got {self.side!r}")
        check_geometry(self.geometry_deg)
        if not (math.isfinite(self.laser_nm) and self.laser_nm > 0):
            raise VibrapolError(
                f"laser wavelength must be a positive number of nm, got {self.laser_nm}"
            )
        thermal_factor(np.ones(1), self.temperature_k)

    @property
    def unit(self) -> str:
        """Unit of a stick height."""
        return QUANTITY_UNITS[self.quantity]

    @property
    def detector_note(self) -> str:
        """The detector convention of the heights, in words."""
        if self.quantity == "intensity":
            return DETECTOR_NOTES[self.detector]
        if self.quantity == "cross-section":
            return "none (cross sections are energy based by definition)"
        return "none (activities)"

    def items(self) -> list[tuple[str, str]]:
        """(name, value) pairs of every condition, for file headers and captions."""
        return [
            ("quantity", f"{self.quantity} ({self.unit})"),
            ("laser", f"{self.laser_nm:g} nm"),
            ("temperature", f"{self.temperature_k:g} K"),
            ("geometry", f"{self.geometry_deg} deg scattering"),
            ("sample", self.orientation),
            ("side", self.side),
            ("detector", self.detector_note),
            ("scale", self.scale.describe()),
            ("method", self.method or "not recorded by the source"),
        ]

    def describe(self) -> str:
        """One line for headers and captions."""
        parts = [self.quantity]
        if self.quantity != "activity":
            parts += [f"laser {self.laser_nm:g} nm", f"{self.temperature_k:g} K"]
        if self.quantity == "intensity":
            parts.append(f"{self.detector} detector")
        parts += [
            f"{self.geometry_deg} deg scattering",
            self.side,
            self.scale.describe(),
            self.orientation,
        ]
        if self.method:
            parts.append(self.method)
        return "; ".join(parts)


@dataclass(frozen=True, eq=False)
class StickSpectrum:
    """One stick per band (a degenerate set of modes), with a height in each channel.

    Attributes
    ----------
    positions_cm1 : ndarray (n,)
        Raman shift of each band after scaling; anti-Stokes bands are negative.
    heights : ndarray (n, n_channels)
        Height in each channel, in ``conditions.unit``.
    channels : tuple of str
        Channel names (:mod:`vibrapol.spectrum.channels`); ``vv`` and ``vh`` come first.
    harmonic_cm1 : ndarray (n,)
        Unscaled harmonic wavenumber (mean over the set).
    mode_sets : tuple of tuple of int
        The modes (0-based, in the ModeSet of the component) behind each band.
    irreps : tuple of str
        Irreducible representation of each band ('' when symmetry is not known).
    rho_linear, rho_natural : ndarray (n,)
        Depolarization ratios of the band for the spectrum's geometry and sample: VH/VV
        (linearly polarized incident light) and NH/NV (natural light), from the channels
        computed (:func:`vibrapol.spectrum.channels.depolarization_ratios`); NaN when inactive.

        At 90°
        for an isotropic sample these are the usual ρ_linear and ρ_natural; at 180° the
        natural-light ratio of an isotropic sample is 1.
    polarized : ndarray of bool (n,)
        Measurably polarized by the rule of :mod:`vibrapol.polarization`.
    component : ndarray of int (n,)
        Index into ``components`` (the conformer a band belongs to; 0 for a single molecule).
    components : tuple of str
        Label of each component.
    weights : tuple of float
        Population weight of each component (already applied to the heights).
    conditions : Conditions
    unresolved : ndarray of bool (n,)
        Totally symmetric, but ρ too close to 3/4 for a measurement to tell it from a
        depolarized band (:mod:`vibrapol.polarization`); all False when not given.
    warnings : tuple of str
        What :func:`stick_spectrum` warned of while making it (modes left out, α computed at
        another laser line, …), repeated in the header of every file and figure made from it.
    """

    positions_cm1: np.ndarray
    heights: np.ndarray
    channels: tuple[str, ...]
    harmonic_cm1: np.ndarray
    mode_sets: tuple[tuple[int, ...], ...]
    irreps: tuple[str, ...]
    rho_linear: np.ndarray
    rho_natural: np.ndarray
    polarized: np.ndarray
    component: np.ndarray
    components: tuple[str, ...] = ("",)
    weights: tuple[float, ...] = (1.0,)
    conditions: Conditions = Conditions()
    unresolved: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        n = np.asarray(self.positions_cm1).shape[0]
        set_ = object.__setattr__
        given = np.asarray(self.unresolved, dtype=bool)
        flags = np.zeros(n, dtype=bool) if given.size == 0 else given
        set_(self, "unresolved", read_only(flags, "unresolved", (n,), bool))
        set_(self, "positions_cm1", read_only(self.positions_cm1, "positions_cm1", (n,)))
        set_(self, "heights", read_only(self.heights, "heights", (n, len(self.channels))))
        for name in ("harmonic_cm1", "rho_linear", "rho_natural"):
            set_(self, name, read_only(getattr(self, name), name, (n,)))
        set_(self, "polarized", read_only(self.polarized, "polarized", (n,), bool))
        set_(self, "component", read_only(self.component, "component", (n,), int))
        if len(self.mode_sets) != n or len(self.irreps) != n:
            raise ShapeError(f"mode_sets and irreps need one entry per band ({n})")
        if len(self.components) != len(self.weights):
            raise ShapeError("components and weights must have the same length")

    def __repr__(self) -> str:
        from vibrapol.display import sticks_lines

        return "\n".join(sticks_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import sticks_html

        return sticks_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The sticks as a pandas DataFrame, one row per band.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.sticks_dataframe`.
        """
        from vibrapol.output.frames import sticks_dataframe

        return sticks_dataframe(self)

    @property
    def n_bands(self) -> int:
        """Number of sticks."""
        return int(self.positions_cm1.shape[0])

    def channel(self, name: str) -> np.ndarray:
        """Heights in one channel (a copy)."""
        try:
            return self.heights[:, self.channels.index(name.lower())].copy()
        except ValueError:
            raise VibrapolError(
                f"channel {name!r} not computed (have {', '.join(self.channels)})"
            ) from None

    def strongest(self, count: int, channel: str = "vv") -> np.ndarray:
        """Indices of the ``count`` tallest bands in ``channel``, tallest first."""
        order = np.argsort(-self.channel(channel), kind="stable")
        return order[: max(0, int(count))]

    def nearest(self, position_cm1: float) -> int:
        """Index of the band closest to ``position_cm1``."""
        if self.n_bands == 0:
            raise VibrapolError("the spectrum has no bands")
        return int(np.argmin(np.abs(self.positions_cm1 - position_cm1)))


#: The provenance note of an engine ModeSet computed with α(ω) (:mod:`vibrapol.engine.laser`).
_DYNAMIC_NOTE = re.compile(
    r"^polarizability: dynamic alpha\(-omega; omega\) at the laser line ([0-9.]+(?:e[+-]?\d+)?) nm"
)


def dynamic_alpha_nm(modes: ModeSet) -> float | None:
    """The laser wavelength (nm) at which the engine computed α(ω) for ``modes``, else None."""
    for note in modes.provenance.notes:
        found = _DYNAMIC_NOTE.match(note)
        if found:
            return float(found.group(1))
    return None


def _band_irrep(irreps: Sequence[str], members: Sequence[int]) -> str:
    labels = [irreps[i] for i in members if irreps[i]]
    return "/".join(dict.fromkeys(labels))


def _default_table(
    modes: ModeSet, symmetry: bool, degeneracy_tol_cm1: float
) -> tuple[ModeSet, RamanTable]:
    check_degeneracy_tol(degeneracy_tol_cm1)
    if symmetry:
        try:
            return symmetry_table(modes, degeneracy_tol_cm1=degeneracy_tol_cm1)
        except VibrapolError as exc:
            warnings.warn(
                f"{modes.provenance.source_file or 'mode set'}: no symmetry species ({exc}); "
                "degenerate sets from frequencies",
                AccuracyWarning,
                stacklevel=3,
            )
    return modes, raman_table(modes, degeneracy_tol_cm1=degeneracy_tol_cm1)


def stick_spectrum(
    modes: ModeSet,
    *,
    channels: Sequence[str] = (),
    quantity: str = "activity",
    laser_nm: float = 532.0,
    temperature_k: float = 298.15,
    geometry_deg: int = 90,
    side: str = "stokes",
    scale: FrequencyScale = NO_SCALE,
    orientation: Orientation | None = None,
    table: RamanTable | None = None,
    degeneracy_tol_cm1: float = DEGENERACY_TOL_CM1,
    label: str = "",
    symmetry: bool = True,
    detector: str = "photon",
) -> StickSpectrum:
    """Sticks of one molecule: one band per degenerate set, heights per channel.

    Parameters
    ----------
    modes : ModeSet
        Any source with Raman data; oriented samples need the tensors ∂α/∂Q.
    channels : sequence of str
        Channels in addition to ``vv`` and ``vh`` (which are always computed first).
    quantity, laser_nm, temperature_k, geometry_deg, side
        See the module notes and :class:`Conditions`.
    scale : FrequencyScale
        Applied to every mode before grouping the set's position and computing the factors.
    orientation : Orientation, optional
        Oriented sample (:mod:`vibrapol.spectrum.orientation`); default: isotropic (closed form).
    table : RamanTable, optional
        Supplies the degenerate sets, ρ and irreps.  Default: with ``symmetry`` the table of
        :func:`vibrapol.ramantable.symmetry_table` (species and sets from the point group; the
        numbers stay the source's), else
        ``raman_table(modes)`` with sets from ``degeneracy_tol_cm1``.
    symmetry : bool
        Label the bands by symmetry species when no ``table`` is given (default True).
    detector : str
        ``"photon"`` (counting detectors, default) or ``"energy"``: the convention of the
        relative intensity (:func:`vibrapol.spectrum.quantities.frequency_factor`).

    Raises
    ------
    VibrapolError
        When ``scale`` is a published factor for another method or basis than the source's.

    Warns
    -----
    AccuracyWarning
        When imaginary modes are dropped, when (for intensities and cross sections) a band lies
        below :data:`LOW_BAND_CM1`, or when a published factor cannot be checked because the
        source records no method or basis.
    """
    if quantity == "cross-section" and modes.provenance.raman_scale == "relative":
        raise VibrapolError(
            f"{modes.provenance.source_file or 'mode set'}: the source gives only relative Raman "
            "intensities, so absolute cross sections cannot be computed; use the activity or "
            "the intensity quantity"
        )
    chans = with_base_channels(channels)
    where = modes.provenance.source_file or "this mode set"
    scale.check_belongs(modes.provenance.method, modes.provenance.basis, where)
    desc = "isotropic" if orientation is None else orientation.description
    said: list[str] = []  # every warning, for the headers of what is made from the spectrum

    def warn(message: str) -> None:
        said.append(message)
        warnings.warn(message, AccuracyWarning, stacklevel=3)

    method = modes.provenance.level_of_theory()
    alpha_nm = dynamic_alpha_nm(modes)
    if alpha_nm is not None:  # the method line says "alpha at … nm" (level_of_theory)
        if abs(alpha_nm - laser_nm) > 0.5:
            warn(
                f"{where}: its polarizability derivatives were computed at {alpha_nm:g} nm, "
                f"this spectrum is for a {laser_nm:g} nm laser (only the frequency factor "
                "follows the new line)"
            )
    cond = Conditions(
        quantity, laser_nm, temperature_k, geometry_deg, side, scale, desc, detector, method
    )
    if table is None:
        modes, table = _default_table(modes, symmetry, degeneracy_tol_cm1)
    every = (*chans, *(c for c in RATIO_CHANNELS if c not in chans))
    if orientation is None:
        a2, gamma2 = modes.raman_invariants()
        per_mode = isotropic_channel_activity(a2, gamma2, every, geometry_deg)
    else:
        if modes.dalpha_dq is None:
            raise VibrapolError(
                f"{where}: oriented samples need polarizability derivatives, not only activities"
            )
        per_mode = oriented_channel_activity(modes.dalpha_dq, every, orientation, geometry_deg)
    sets = sorted(table.sets(), key=lambda s: float(np.mean(modes.freqs_cm1[list(s)])))
    scaled = scale.apply(modes.freqs_cm1)
    pos = np.array([np.mean(scaled[list(s)]) for s in sets])
    keep = pos > 0
    if np.any(modes.freqs_cm1 < 0):
        warn(
            f"{modes.provenance.source_file or 'mode set'}: "
            f"{int(np.sum(modes.freqs_cm1 < 0))} imaginary "
            "mode(s) left out of the spectrum (the structure is not a minimum)"
        )
    sets = [s for s, k in zip(sets, keep, strict=True) if k]
    pos = pos[keep]
    if quantity != "activity" and np.any(pos < LOW_BAND_CM1):
        warn(
            f"{modes.provenance.source_file or 'mode set'}: band(s) below {LOW_BAND_CM1:g} cm-1 "
            "(residual rotations or translations?) get a huge thermal factor and may dominate"
        )
    summed = sum_over_sets(per_mode, sets).reshape(len(sets), len(every))
    heights = summed[:, : len(chans)]
    rho_lin, rho_nat = depolarization_ratios(summed, every)
    first = [s[0] for s in sets]
    inactive = ~np.isfinite(table.rho_linear[first]) if sets else np.zeros(0, bool)
    rho_lin[inactive] = np.nan
    rho_nat[inactive] = np.nan
    sides = ["stokes", "anti-stokes"] if side == "both" else [side]
    parts = []
    for sd in sides:
        factor = quantity_factor(quantity, pos, laser_nm, temperature_k, sd, detector)
        parts.append((pos if sd == "stokes" else -pos, heights * factor[:, None]))
    rep = len(sides)
    return StickSpectrum(
        positions_cm1=np.concatenate([p for p, _ in parts]),
        heights=np.concatenate([h for _, h in parts]),
        channels=chans,
        harmonic_cm1=np.tile([np.mean(modes.freqs_cm1[list(s)]) for s in sets], rep),
        mode_sets=tuple(tuple(int(i) for i in s) for s in sets) * rep,
        irreps=tuple(_band_irrep(table.irreps, s) for s in sets) * rep,
        rho_linear=np.tile(rho_lin, rep),
        rho_natural=np.tile(rho_nat, rep),
        polarized=np.tile(table.polarized[first], rep) if sets else np.zeros(0, bool),
        unresolved=np.tile(
            np.array([table.polarization[i] == UNRESOLVED for i in first], dtype=bool), rep
        )
        if sets and table.polarization
        else np.zeros(0, dtype=bool),
        component=np.zeros(len(sets) * rep, dtype=int),
        components=(label or modes.provenance.source_file,),
        conditions=cond,
        warnings=tuple(said),
    )
