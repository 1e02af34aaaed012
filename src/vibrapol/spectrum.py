"""Theoretical Raman spectra: sticks per band and broadened spectra on a grid.

``stick_spectrum`` turns a :class:`~vibrapol.modeset.ModeSet` into a :class:`StickSpectrum`: one
stick per degenerate set, with a height in each polarization channel (:mod:`vibrapol.channels`)
for the chosen quantity, laser line, temperature and scattering geometry.  ``broaden`` samples it
on a grid with a line shape (:mod:`vibrapol.lineshapes`) into a :class:`GridSpectrum`.

Stick heights are one of the quantities of :mod:`vibrapol.quantities` (Raman activity, relative
intensity at a laser line and temperature, absolute cross section), Stokes or anti-Stokes.

Scaled wavenumbers (:mod:`vibrapol.scaling`) are used for the band positions and in every factor.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.channels import (
    RATIO_CHANNELS,
    check_geometry,
    depolarization_ratios,
    isotropic_channel_activity,
    with_base_channels,
)
from vibrapol.errors import AccuracyWarning, ShapeError, VibrapolError
from vibrapol.invariants import DEGENERACY_TOL_CM1, check_degeneracy_tol, sum_over_sets
from vibrapol.lineshapes import LineShape
from vibrapol.modeset import ModeSet
from vibrapol.orientation import Orientation, oriented_channel_activity
from vibrapol.quantities import (
    DETECTOR_NOTES,
    QUANTITY_UNITS,
    SIDES,
    check_detector,
    quantity_factor,
    thermal_factor,
)
from vibrapol.ramantable import RamanTable, raman_table, symmetry_table
from vibrapol.scaling import NO_SCALE, FrequencyScale

#: Bands below this wavenumber are suspicious (residual rotations/translations): warned.
LOW_BAND_CM1 = 10.0

#: Line shape used when none is given: Lorentzian, FWHM 8 cm⁻¹.
DEFAULT_LINESHAPE = LineShape()

#: A band counts as Raman-active for the default range when its height in some channel exceeds
#: this fraction of the strongest height (forbidden bands print numerical noise far below it).
ACTIVE_FRACTION = 1e-6

#: An explicit range that leaves out a band stronger than this fraction of the strongest is
#: warned.
HIDDEN_BAND_FRACTION = 0.05

#: Default range margin beyond the outermost active bands, in FWHM at that band (a Lorentzian
#: holds 94 % of its area within ±5 FWHM), rounded outwards to :data:`RANGE_ROUNDING_CM1`.
RANGE_MARGIN_FWHM = 5.0
RANGE_ROUNDING_CM1 = 50.0

#: Where a default Stokes range starts at the latest (cm⁻¹): usual for measured spectra.
RANGE_START_CM1 = 100.0


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


def _ro(
    value: np.ndarray, name: str, shape: tuple[int | None, ...], dtype: type = float
) -> np.ndarray:
    arr = np.array(value, dtype=dtype, copy=True)
    if arr.ndim != len(shape) or any(
        s is not None and s != a for s, a in zip(shape, arr.shape, strict=False)
    ):
        raise ShapeError(f"{name} should have shape {shape}, got {arr.shape}")
    arr.setflags(write=False)
    return arr


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
        Channel names (:mod:`vibrapol.channels`); ``vv`` and ``vh`` come first.
    harmonic_cm1 : ndarray (n,)
        Unscaled harmonic wavenumber (mean over the set).
    mode_sets : tuple of tuple of int
        The modes (0-based, in the ModeSet of the component) behind each band.
    irreps : tuple of str
        Irreducible representation of each band ('' when symmetry is not known).
    rho_linear, rho_natural : ndarray (n,)
        Depolarization ratios of the band for the spectrum's geometry and sample: VH/VV
        (linearly polarized incident light) and NH/NV (natural light), from the channels
        computed (:func:`vibrapol.channels.depolarization_ratios`); NaN when inactive.  At 90°
        for an isotropic sample these are the usual ρ_linear and ρ_natural; at 180° the
        natural-light ratio of an isotropic sample is 1.
    polarized : ndarray of bool (n,)
    component : ndarray of int (n,)
        Index into ``components`` (the conformer a band belongs to; 0 for a single molecule).
    components : tuple of str
        Label of each component.
    weights : tuple of float
        Population weight of each component (already applied to the heights).
    conditions : Conditions
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

    def __post_init__(self) -> None:
        n = np.asarray(self.positions_cm1).shape[0]
        set_ = object.__setattr__
        set_(self, "positions_cm1", _ro(self.positions_cm1, "positions_cm1", (n,)))
        set_(self, "heights", _ro(self.heights, "heights", (n, len(self.channels))))
        for name in ("harmonic_cm1", "rho_linear", "rho_natural"):
            set_(self, name, _ro(getattr(self, name), name, (n,)))
        set_(self, "polarized", _ro(self.polarized, "polarized", (n,), bool))
        set_(self, "component", _ro(self.component, "component", (n,), int))
        if len(self.mode_sets) != n or len(self.irreps) != n:
            raise ShapeError(f"mode_sets and irreps need one entry per band ({n})")
        if len(self.components) != len(self.weights):
            raise ShapeError("components and weights must have the same length")

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
        Oriented sample (:mod:`vibrapol.orientation`); default: isotropic (closed form).
    table : RamanTable, optional
        Supplies the degenerate sets, ρ and irreps.  Default: with ``symmetry`` the table of
        :func:`vibrapol.ramantable.symmetry_table` (species and sets from the point group; the
        modes may be averaged over the group when their labels are impure), else
        ``raman_table(modes)`` with sets from ``degeneracy_tol_cm1``.
    symmetry : bool
        Label the bands by symmetry species when no ``table`` is given (default True).
    detector : str
        ``"photon"`` (counting detectors, default) or ``"energy"``: the convention of the
        relative intensity (:func:`vibrapol.quantities.frequency_factor`).

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
    chans = with_base_channels(channels)
    where = modes.provenance.source_file or "this mode set"
    scale.check_belongs(modes.provenance.method, modes.provenance.basis, where)
    desc = "isotropic" if orientation is None else orientation.description
    method = "/".join(x for x in (modes.provenance.method, modes.provenance.basis) if x)
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
        warnings.warn(
            f"{modes.provenance.source_file or 'mode set'}: "
            f"{int(np.sum(modes.freqs_cm1 < 0))} imaginary "
            "mode(s) left out of the spectrum (the structure is not a minimum)",
            AccuracyWarning,
            stacklevel=2,
        )
    sets = [s for s, k in zip(sets, keep, strict=True) if k]
    pos = pos[keep]
    if quantity != "activity" and np.any(pos < LOW_BAND_CM1):
        warnings.warn(
            f"{modes.provenance.source_file or 'mode set'}: band(s) below {LOW_BAND_CM1:g} cm-1 "
            "(residual rotations or translations?) get a huge thermal factor and may dominate",
            AccuracyWarning,
            stacklevel=2,
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
        component=np.zeros(len(sets) * rep, dtype=int),
        components=(label or modes.provenance.source_file,),
        conditions=cond,
    )


@dataclass(frozen=True, eq=False)
class GridSpectrum:
    """A spectrum sampled on a Raman-shift grid.

    Attributes
    ----------
    shift_cm1 : ndarray (m,)
        Raman shift of each point.
    values : ndarray (m, n_channels)
        Spectral density in each channel: stick unit per cm⁻¹ (each band's area equals its stick).
    channels : tuple of str
    lineshape : LineShape
    sticks : StickSpectrum
        The sticks that were broadened.
    """

    shift_cm1: np.ndarray
    values: np.ndarray
    channels: tuple[str, ...]
    lineshape: LineShape
    sticks: StickSpectrum

    def __post_init__(self) -> None:
        m = np.asarray(self.shift_cm1).shape[0]
        object.__setattr__(self, "shift_cm1", _ro(self.shift_cm1, "shift_cm1", (m,)))
        object.__setattr__(self, "values", _ro(self.values, "values", (m, len(self.channels))))

    @property
    def unit(self) -> str:
        """Unit of the values."""
        return f"{self.sticks.conditions.unit} per cm^-1"

    def channel(self, name: str) -> np.ndarray:
        """Values in one channel (a copy)."""
        try:
            return self.values[:, self.channels.index(name.lower())].copy()
        except ValueError:
            raise VibrapolError(
                f"channel {name!r} not computed (have {', '.join(self.channels)})"
            ) from None


def make_grid(start_cm1: float, stop_cm1: float, step_cm1: float) -> np.ndarray:
    """Evenly spaced shifts from ``start_cm1`` to ``stop_cm1`` inclusive."""
    if not (step_cm1 > 0 and math.isfinite(step_cm1)):
        raise VibrapolError(f"grid step must be a positive number of cm-1, got {step_cm1}")
    if not stop_cm1 > start_cm1:
        raise VibrapolError(f"grid range must run from low to high, got {start_cm1:g}:{stop_cm1:g}")
    n = int(math.floor((stop_cm1 - start_cm1) / step_cm1 + 1e-9)) + 1
    if n > 2_000_000:
        raise VibrapolError(
            f"grid of {n} points is too large; use a larger step or a smaller range"
        )
    return start_cm1 + step_cm1 * np.arange(n)


def _strength(sticks: StickSpectrum) -> np.ndarray:
    """Each band's largest height over the channels, relative to the strongest (0 when none)."""
    h = np.nan_to_num(np.abs(sticks.heights), nan=0.0)
    per_band = h.max(axis=1) if h.size else np.zeros(sticks.n_bands)
    top = float(per_band.max()) if per_band.size else 0.0
    return per_band / top if top > 0 else np.zeros_like(per_band)


def default_range(
    sticks: StickSpectrum, lineshape: LineShape = DEFAULT_LINESHAPE
) -> tuple[float, float]:
    """A range that holds every Raman-active band with room for its line width.

    From the lowest to the highest band whose height exceeds :data:`ACTIVE_FRACTION` of the
    strongest, widened by :data:`RANGE_MARGIN_FWHM` line widths and rounded outwards to
    :data:`RANGE_ROUNDING_CM1`; a Stokes-only spectrum starts at :data:`RANGE_START_CM1` or
    lower (never below 0).
    """
    active = _strength(sticks) > ACTIVE_FRACTION
    if not np.any(active):
        raise VibrapolError("the spectrum has no Raman-active band; give the range explicitly")
    pos = sticks.positions_cm1[active]
    margin = RANGE_MARGIN_FWHM * lineshape.widths_cm1(pos)
    r = RANGE_ROUNDING_CM1
    lo = math.floor(float(np.min(pos - margin)) / r) * r
    hi = math.ceil(float(np.max(pos + margin)) / r) * r
    if np.all(sticks.positions_cm1 >= 0):
        lo = max(min(lo, RANGE_START_CM1), 0.0)
    return lo, hi


def hidden_bands(sticks: StickSpectrum, range_cm1: tuple[float, float]) -> list[int]:
    """Bands outside ``range_cm1`` stronger than :data:`HIDDEN_BAND_FRACTION` of the strongest."""
    pos = sticks.positions_cm1
    outside = (pos < range_cm1[0]) | (pos > range_cm1[1])
    return [int(i) for i in np.flatnonzero(outside & (_strength(sticks) > HIDDEN_BAND_FRACTION))]


def broaden(
    sticks: StickSpectrum,
    lineshape: LineShape = DEFAULT_LINESHAPE,
    *,
    range_cm1: tuple[float, float] | None = None,
    step_cm1: float = 0.5,
    grid_cm1: np.ndarray | None = None,
) -> GridSpectrum:
    """Broaden every stick with ``lineshape`` and sum on a grid (``grid_cm1`` or range and step).

    Each line is a unit-area profile times its stick height, so its area over the whole axis
    equals the stick; a grid step above half the FWHM undersamples the peaks (warned).  The
    default range holds every Raman-active band (:func:`default_range`).

    Warns
    -----
    AccuracyWarning
        When the grid is coarse for the line width, or when the range (or grid) leaves out a
        band stronger than :data:`HIDDEN_BAND_FRACTION` of the strongest (named in the message).
    """
    if grid_cm1 is None:
        x = make_grid(*(range_cm1 or default_range(sticks, lineshape)), step_cm1)
    else:
        x = np.asarray(grid_cm1, dtype=float)
    if x.ndim != 1 or x.size < 2:
        raise VibrapolError("the grid needs at least two points")
    step = float(np.max(np.diff(x)))
    hidden = hidden_bands(sticks, (float(x.min()), float(x.max())))
    if hidden:
        strength = _strength(sticks)
        names = ", ".join(
            f"{sticks.positions_cm1[i]:.0f} cm-1"
            + (f" ({sticks.irreps[i]})" if sticks.irreps[i] else "")
            + f" at {100 * strength[i]:.0f} % of the strongest"
            for i in hidden
        )
        warnings.warn(
            f"the range {x.min():g}:{x.max():g} cm-1 leaves out {names}; "
            "widen the range (or leave it out: the default holds every band)",
            AccuracyWarning,
            stacklevel=2,
        )
    widths = lineshape.widths_cm1(sticks.positions_cm1)
    if widths.size and step > 0.5 * widths.min():
        warnings.warn(
            f"grid step {step:g} cm-1 is coarse for FWHM {widths.min():g} cm-1: "
            "peak heights are undersampled",
            AccuracyWarning,
            stacklevel=2,
        )
    values = np.zeros((x.size, len(sticks.channels)))
    for start in range(0, sticks.n_bands, 256):  # bounded memory for large mixtures
        chunk = slice(start, start + 256)
        values += lineshape.profiles(x, sticks.positions_cm1[chunk]).T @ sticks.heights[chunk]
    return GridSpectrum(x, values, sticks.channels, lineshape, sticks)
