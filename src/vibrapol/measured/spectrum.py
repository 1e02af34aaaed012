"""Measured spectra as immutable data: one channel (:class:`MeasuredSpectrum`) and a VV/VH pair.

Inside vibrapol a measured spectrum always has a strictly ascending Raman-shift axis in cm⁻¹;
readers convert wavelength or absolute-wavenumber axes and reverse descending ones at the
boundary (:func:`MeasuredSpectrum.from_arrays`), and say so in ``notes``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError, ShapeError, VibrapolError

#: Fewest points accepted for a spectrum: below this neither a baseline nor a band fit means
#: anything.
MIN_POINTS = 5


def _vector(value: object, name: str, where: str) -> np.ndarray:
    arr = np.array(value, dtype=float, copy=True)
    if arr.ndim != 1:
        raise ShapeError(f"{where}: {name} should be a 1-D array, got shape {arr.shape}")
    arr.setflags(write=False)
    return arr


def check_axis(
    x: np.ndarray, where: str, lines: np.ndarray | None = None, name: str = "x value"
) -> None:
    """Check that a raw axis is finite and strictly monotonic (ascending or descending).

    Parameters
    ----------
    x : ndarray, shape (n,)
        Axis values as read.
    where : str
        File name (or label) for the message.
    lines : ndarray of int, optional
        Line number of each value in the file, to point at the offending line.
    name : str
        What the values are called in the message.

    Raises
    ------
    InputFormatError
        One line saying which value is NaN, duplicated or out of order, and where.
    """

    def at(i: int) -> str:
        return f"line {int(lines[i])}" if lines is not None else f"point {i + 1}"

    if x.size < MIN_POINTS:
        raise InputFormatError(
            f"{where}: only {x.size} data point(s); a spectrum needs at least {MIN_POINTS}"
        )
    bad = np.flatnonzero(~np.isfinite(x))
    if bad.size:
        raise InputFormatError(f"{where}: {at(bad[0])}: {name} is NaN or infinite")
    d = np.diff(x)
    same = np.flatnonzero(d == 0)
    if same.size:
        i = int(same[0])
        raise InputFormatError(
            f"{where}: {name} {x[i]:g} appears twice ({at(i)} and {at(i + 1)}); "
            "remove the duplicate or average the two points"
        )
    direction = np.sign(d[0])
    back = np.flatnonzero(np.sign(d) != direction)
    if back.size:
        i = int(back[0])
        order = "ascending" if direction > 0 else "descending"
        raise InputFormatError(
            f"{where}: {at(i + 1)}: {name} {x[i + 1]:g} after {x[i]:g} breaks the {order} "
            "order; the axis must be monotonic (one scan, not several joined)"
        )


def check_range(low_cm1: float, high_cm1: float, what: str = "range") -> tuple[float, float]:
    """Validate a (low, high) wavenumber range and return it as floats.

    Raises
    ------
    VibrapolError
        When a bound is not finite or the range is reversed or empty.
    """
    lo, hi = float(low_cm1), float(high_cm1)
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise VibrapolError(f"{what} ({lo:g}, {hi:g}) must have finite bounds")
    if lo >= hi:
        raise VibrapolError(f"{what} ({lo:g}, {hi:g}) is reversed or empty; give (low, high)")
    return lo, hi


@dataclass(frozen=True, eq=False)
class MeasuredSpectrum:
    """One measured Raman channel on a strictly ascending Raman-shift axis.

    Parameters
    ----------
    shift_cm1 : array, shape (n,)
        Raman shift ν̃₀ − ν̃ in cm⁻¹, strictly ascending, finite; n ≥ :data:`MIN_POINTS`.
        Spacing may be uneven.
    intensity : array, shape (n,)
        Intensity in the file's units (counts, arbitrary units), finite.
    label : str
        Channel name, e.g. ``"VV"``, ``"VH"`` or the column header.
    source_file : str
        File it was read from ('' when built in memory).
    laser_nm : float, optional
        Excitation wavelength in nm when known (needed only for wavelength axes).
    notes : tuple of str
        What the reader or a cleaning step did (axis reversed, converted, baseline removed …).

    Notes
    -----
    Never mutated: arrays are private read-only copies; :meth:`with_intensity` and
    :meth:`crop` return new objects.  Build from raw (possibly descending) arrays with
    :meth:`from_arrays`.
    """

    shift_cm1: np.ndarray
    intensity: np.ndarray
    label: str = ""
    source_file: str = ""
    laser_nm: float | None = None
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        where = self.where
        x = _vector(self.shift_cm1, "shift_cm1", where)
        y = _vector(self.intensity, "intensity", where)
        if x.shape != y.shape:
            raise ShapeError(f"{where}: shift_cm1 has {x.size} points but intensity has {y.size}")
        check_axis(x, where, name="Raman shift")
        if x[1] < x[0]:
            raise ShapeError(
                f"{where}: shift_cm1 must be ascending; use MeasuredSpectrum.from_arrays "
                "for descending data"
            )
        if not np.all(np.isfinite(y)):
            i = int(np.flatnonzero(~np.isfinite(y))[0])
            raise InputFormatError(f"{where}: intensity at {x[i]:g} cm-1 is NaN or infinite")
        object.__setattr__(self, "shift_cm1", x)
        object.__setattr__(self, "intensity", y)
        object.__setattr__(self, "notes", tuple(self.notes))

    @classmethod
    def from_arrays(
        cls,
        shift_cm1: object,
        intensity: object,
        *,
        label: str = "",
        source_file: str = "",
        laser_nm: float | None = None,
        notes: tuple[str, ...] = (),
    ) -> MeasuredSpectrum:
        """Build a spectrum from an ascending or descending shift axis.

        A descending axis is reversed (with the intensities) and a note says so.
        """
        where = source_file or label or "spectrum"
        x = _vector(shift_cm1, "shift_cm1", where)
        y = _vector(intensity, "intensity", where)
        if x.shape != y.shape:
            raise ShapeError(f"{where}: shift_cm1 has {x.size} points but intensity has {y.size}")
        check_axis(x, where, name="Raman shift")
        if x[1] < x[0]:
            x, y = x[::-1], y[::-1]
            notes = (*notes, "descending axis reversed")
        return cls(x, y, label, source_file, laser_nm, notes)

    @property
    def where(self) -> str:
        """Name used in messages: the file, else the label."""
        return self.source_file or self.label or "spectrum"

    def __len__(self) -> int:
        return int(self.shift_cm1.size)

    @property
    def spacing_cm1(self) -> float:
        """Median point spacing in cm⁻¹."""
        return float(np.median(np.diff(self.shift_cm1)))

    def with_intensity(self, intensity: np.ndarray, note: str) -> MeasuredSpectrum:
        """A copy with new intensities on the same axis and one more note."""
        return dataclasses.replace(self, intensity=intensity, notes=(*self.notes, note))

    def crop(self, low_cm1: float, high_cm1: float) -> MeasuredSpectrum:
        """The part of the spectrum with low_cm1 ≤ shift ≤ high_cm1.

        Raises
        ------
        VibrapolError
            For a reversed range or one holding fewer than :data:`MIN_POINTS` points.
        """
        lo, hi = check_range(low_cm1, high_cm1, "crop range")
        keep = (self.shift_cm1 >= lo) & (self.shift_cm1 <= hi)
        if keep.sum() < MIN_POINTS:
            raise VibrapolError(
                f"{self.where}: crop range ({lo:g}, {hi:g}) cm-1 holds {int(keep.sum())} points "
                f"of a spectrum spanning {self.shift_cm1[0]:g}–{self.shift_cm1[-1]:g} cm-1"
            )
        return dataclasses.replace(
            self,
            shift_cm1=self.shift_cm1[keep],
            intensity=self.intensity[keep],
            notes=(*self.notes, f"cropped to {lo:g}–{hi:g} cm-1"),
        )


@dataclass(frozen=True, eq=False)
class PolarizedPair:
    """A parallel (VV) spectrum and, optionally, the crossed (VH) one on the same axis.

    Parameters
    ----------
    vv : MeasuredSpectrum
        Scattered light polarized parallel to the incident polarization.
    vh : MeasuredSpectrum, optional
        Scattered light polarized perpendicular to it; same shift axis as ``vv``
        (use :func:`align_pair` to put it there).
    """

    vv: MeasuredSpectrum
    vh: MeasuredSpectrum | None = None

    def __post_init__(self) -> None:
        if self.vh is None:
            return
        a, b = self.vv.shift_cm1, self.vh.shift_cm1
        tol = 1e-6 * max(self.vv.spacing_cm1, 1e-12)
        if a.shape != b.shape or np.max(np.abs(a - b)) > tol:
            raise ShapeError(
                f"VV ({self.vv.where}) and VH ({self.vh.where}) have different axes; "
                "put VH on the VV axis with align_pair"
            )


def align_pair(vv: MeasuredSpectrum, vh: MeasuredSpectrum) -> PolarizedPair:
    """Put VH on the VV shift axis (linear interpolation) over the range both cover.

    When the axes already agree the spectra are returned unchanged.  Otherwise both are cut
    to the common range and VH is linearly interpolated at the VV points; a note records it.

    Raises
    ------
    VibrapolError
        When the two spectra share fewer than :data:`MIN_POINTS` VV points.
    """
    a, b = vv.shift_cm1, vh.shift_cm1
    if a.shape == b.shape and np.max(np.abs(a - b)) <= 1e-6 * vv.spacing_cm1:
        return PolarizedPair(vv, dataclasses.replace(vh, shift_cm1=a))
    lo, hi = max(a[0], b[0]), min(a[-1], b[-1])
    keep = (a >= lo) & (a <= hi)
    if keep.sum() < MIN_POINTS:
        raise VibrapolError(
            f"VV ({vv.where}, {a[0]:g}–{a[-1]:g} cm-1) and VH ({vh.where}, {b[0]:g}–{b[-1]:g} "
            "cm-1) hardly overlap; were they recorded over the same range?"
        )
    x = a[keep]
    note = f"interpolated onto the VV axis ({x.size} points, {x[0]:g}–{x[-1]:g} cm-1)"
    new_vv = dataclasses.replace(vv, shift_cm1=x, intensity=vv.intensity[keep])
    if keep.sum() < a.size:
        new_vv = dataclasses.replace(new_vv, notes=(*vv.notes, "cut to the range VH covers"))
    new_vh = dataclasses.replace(
        vh, shift_cm1=x, intensity=np.interp(x, b, vh.intensity), notes=(*vh.notes, note)
    )
    return PolarizedPair(new_vv, new_vh)
