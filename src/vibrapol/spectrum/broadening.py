"""Broadened spectra: sticks sampled on a Raman-shift grid with a line shape.

:func:`broaden` turns a :class:`~vibrapol.spectrum.StickSpectrum` into a :class:`GridSpectrum`.
The default range holds every Raman-active band (:func:`default_range`); an explicit range that
leaves out a strong band is warned (:func:`hidden_bands`).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.errors import AccuracyWarning, ShapeError, VibrapolError
from vibrapol.spectrum.lineshapes import LineShape

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from vibrapol.spectrum import StickSpectrum

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


def read_only(
    value: np.ndarray, name: str, shape: tuple[int | None, ...], dtype: type = float
) -> np.ndarray:
    """A read-only copy of ``value`` with the given shape (None: any length), else ShapeError."""
    arr: np.ndarray = np.array(value, dtype=dtype, copy=True)
    if arr.ndim != len(shape) or any(
        s is not None and s != a for s, a in zip(shape, arr.shape, strict=False)
    ):
        raise ShapeError(f"{name} should have shape {shape}, got {arr.shape}")
    arr.setflags(write=False)
    return arr


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
        object.__setattr__(self, "shift_cm1", read_only(self.shift_cm1, "shift_cm1", (m,)))
        object.__setattr__(
            self, "values", read_only(self.values, "values", (m, len(self.channels)))
        )

    def __repr__(self) -> str:
        from vibrapol.display import grid_lines

        return "\n".join(grid_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import grid_html

        return grid_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The spectrum as a pandas DataFrame, one row per grid point.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.grid_dataframe`.
        """
        from vibrapol.output.frames import grid_dataframe

        return grid_dataframe(self)

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
