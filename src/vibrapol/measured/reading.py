"""Read measured Raman spectra: delimited text or JCAMP-DX, any axis kind, single or VV/VH pairs.

Entry points: :func:`read_spectra` (every intensity column or block of a file),
:func:`read_spectrum` (one of them) and :func:`read_pair` (VV and VH, from two files or from
two columns/blocks of one file).  Each returns spectra on an ascending Raman-shift axis in
cm⁻¹ whatever the file held (shift, absolute wavenumber or wavelength; ascending or
descending; even or uneven spacing).

Safety: laser radiation can injure eyes and skin; follow the laser safety rules of your
institution and local regulations.  Handle samples and solvents per their safety data sheets.
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path
from typing import Any, TextIO

import numpy as np

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.measured.axis import (
    AXIS_KINDS,
    MAX_SHIFT_CM1,
    AxisKind,
    axis_from_units,
    to_raman_shift,
)
from vibrapol.measured.delimited import read_delimited
from vibrapol.measured.jcamp import looks_like_jcamp, read_jcamp
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair, align_pair, check_axis
from vibrapol.textio import MAX_SPECTRUM_BYTES, read_text

Source = str | Path | TextIO

#: Largest |intensity| accepted.  Detector counts and arbitrary units stay far below it;
#: larger numbers are a damaged file, and their squares overflow in the baseline and band fits.
MAX_ABS_INTENSITY = 1.0e50

#: Smallest "largest |intensity|" of a channel accepted (see :func:`_with_signal`).
MIN_SIGNAL = 1.0e-50

#: Header words that mark the parallel and crossed channels of a two-column file.
_VV_NAMES = re.compile(r"\bvv\b|parallel|\bpar\b|\bzz\b|∥|\|\|", re.IGNORECASE)
_VH_NAMES = re.compile(r"\bvh\b|\bhv\b|perpendicular|crossed|\bperp\b|\bzx\b|⊥", re.IGNORECASE)


def _text(source: Source) -> tuple[str, str]:
    if hasattr(source, "read"):
        text = source.read()
        where = str(getattr(source, "name", "<text stream>"))
        if not text.strip():
            raise InputFormatError(f"{where}: file is empty")
        return text, where
    return read_text(source, MAX_SPECTRUM_BYTES, "measured spectrum"), str(source)


def _axis_kind(axis: str, units: str, where: str) -> tuple[AxisKind, float, str]:
    if axis not in AXIS_KINDS:
        raise VibrapolError(f"{where}: axis {axis!r} is not one of {', '.join(AXIS_KINDS)}")
    found = axis_from_units(units) if units else None
    if axis != "auto":
        factor = found[1] if found and found[0] == axis else 1.0
        return axis, factor, ""  # type: ignore[return-value]
    if found is None:
        return "shift", 1.0, "no axis units in the file; x taken as Raman shift (cm-1)"
    return found[0], found[1], ""


def _spectrum(
    x: np.ndarray,
    y: np.ndarray,
    lines: np.ndarray,
    *,
    units: str,
    label: str,
    where: str,
    axis: str,
    laser_nm: float | None,
    max_shift_cm1: float,
) -> MeasuredSpectrum:
    check_axis(x, where, lines)
    bad = np.flatnonzero(~np.isfinite(y))
    if bad.size:
        raise InputFormatError(f"{where}: line {int(lines[bad[0]])}: intensity is NaN or infinite")
    big = np.flatnonzero(np.abs(y) > MAX_ABS_INTENSITY)
    if big.size:
        raise InputFormatError(
            f"{where}: line {int(lines[big[0]])}: intensity {y[big[0]]:.3g} is beyond "
            f"{MAX_ABS_INTENSITY:g}; the file is damaged (or rescale the intensities)"
        )
    kind, factor, note = _axis_kind(axis, units, where)
    shift, conversion = to_raman_shift(
        x * factor, kind, laser_nm, where=where, max_shift_cm1=max_shift_cm1
    )
    notes = tuple(n for n in (note, conversion) if n)
    return MeasuredSpectrum.from_arrays(
        shift, y, label=label, source_file=where, laser_nm=laser_nm, notes=notes
    )


def read_spectra(
    source: Source,
    *,
    axis: str = "auto",
    laser_nm: float | None = None,
    file_format: str = "auto",
    delimiter: str | None = "auto",
    decimal: str = "auto",
    max_shift_cm1: float = MAX_SHIFT_CM1,
) -> tuple[MeasuredSpectrum, ...]:
    """Read every spectrum in a file: each intensity column, or each JCAMP-DX data block.

    Parameters
    ----------
    source : str, Path or text file object
        The file (a ``StringIO`` works too).
    axis : {"auto", "shift", "wavenumber", "wavelength"}
        Kind of x axis (see :mod:`vibrapol.measured.axis`).  ``"auto"`` takes it from the units
        in the file (JCAMP ``##XUNITS``, or the x column header): nm or µm → wavelength,
        "absolute wavenumber" → wavenumber, cm⁻¹ or "Raman shift" → shift; without units the
        axis is taken as Raman shift (and a note says so).  An absolute-wavenumber axis whose
        units say only cm⁻¹ must be asked for.
    laser_nm : float, optional
        Excitation wavelength in nm; required for wavelength and absolute-wavenumber axes.
    file_format : {"auto", "jcamp", "delimited"}
        ``"auto"``: JCAMP-DX when the file starts with ``##``, else delimited text.
    delimiter, decimal : str
        For delimited text (see :func:`vibrapol.measured.delimited.read_delimited`).
    max_shift_cm1 : float
        Largest Raman shift accepted after conversion (catches wrong laser lines).

    Returns
    -------
    tuple of MeasuredSpectrum
        One per intensity column (labelled with the column header) or JCAMP block (labelled
        with its title), each on an ascending Raman-shift axis.

    Raises
    ------
    InputFormatError
        A file that cannot be read (one line naming the file and the line).
    VibrapolError
        A missing, wrong or implausible laser line for the axis; an unknown axis kind.
    """
    text, where = _text(source)
    common: dict[str, Any] = dict(
        where=where, axis=axis, laser_nm=laser_nm, max_shift_cm1=max_shift_cm1
    )
    fmt = file_format
    if fmt == "auto":
        fmt = "jcamp" if looks_like_jcamp(text) else "delimited"
    if fmt == "jcamp":
        blocks = read_jcamp(text, where)
        return tuple(
            _spectrum(b.x, b.y, b.lines, units=b.x_units, label=b.title, **common) for b in blocks
        )
    if fmt != "delimited":
        raise VibrapolError(f"{where}: file_format {file_format!r} is not auto, jcamp or delimited")
    table = read_delimited(text, where, delimiter=delimiter, decimal=decimal)
    x = table.values[:, 0]
    x_units = table.names[0] if not table.names[0].startswith("column ") else ""
    return tuple(
        _spectrum(x, table.values[:, c], table.lines, units=x_units, label=table.names[c], **common)
        for c in range(1, table.values.shape[1])
    )


def _select(
    spectra: tuple[MeasuredSpectrum, ...], column: int | str, where: str
) -> MeasuredSpectrum:
    labels = [s.label for s in spectra]
    if isinstance(column, int):
        if not 1 <= column <= len(spectra):
            raise VibrapolError(
                f"{where}: column {column} does not exist; intensity columns are 1–{len(spectra)} "
                f"({', '.join(labels)})"
            )
        return spectra[column - 1]
    for s in spectra:
        if s.label.strip().lower() == str(column).strip().lower():
            return s
    raise VibrapolError(f"{where}: no column or block named {column!r}; found {', '.join(labels)}")


def read_spectrum(
    source: Source, *, column: int | str | None = None, **options: Any
) -> MeasuredSpectrum:
    """Read one spectrum from a file.

    Parameters
    ----------
    source : str, Path or text file object
    column : int or str, optional
        Which intensity column (1 = first after x) or JCAMP block (1 = first; or the column
        header / block title).  Needed only when the file holds more than one.
    **options
        Passed to :func:`read_spectra` (``axis``, ``laser_nm``, ``decimal`` …).

    Raises
    ------
    VibrapolError
        When the file holds several spectra and ``column`` is not given, or names none.
    """
    spectra = read_spectra(source, **options)
    where = spectra[0].where
    if column is None:
        if len(spectra) > 1:
            raise VibrapolError(
                f"{where}: holds {len(spectra)} spectra ({', '.join(s.label for s in spectra)}); "
                "choose one with column="
            )
        return spectra[0]
    return _select(spectra, column, where)


def _vv_vh_columns(spectra: tuple[MeasuredSpectrum, ...], where: str) -> tuple[int, int]:
    vv = [i for i, s in enumerate(spectra) if _VV_NAMES.search(s.label)]
    vh = [i for i, s in enumerate(spectra) if _VH_NAMES.search(s.label)]
    if len(vv) == 1 and len(vh) == 1 and vv != vh:
        return vv[0] + 1, vh[0] + 1
    if len(spectra) == 2:
        return 1, 2
    raise VibrapolError(
        f"{where}: holds {len(spectra)} spectra ({', '.join(s.label for s in spectra)}); say which "
        "are VV and VH with vv_column= and vh_column="
    )


def read_pair(
    vv_source: Source,
    vh_source: Source | None = None,
    *,
    vv_column: int | str | None = None,
    vh_column: int | str | None = None,
    **options: Any,
) -> PolarizedPair:
    """Read a parallel (VV) and crossed (VH) spectrum.

    Parameters
    ----------
    vv_source : str, Path or text file object
        File with the VV spectrum, or with both (two intensity columns or two JCAMP blocks).
    vh_source : optional
        Separate file with the VH spectrum.
    vv_column, vh_column : int or str, optional
        Columns/blocks to use (see :func:`read_spectrum`).  For a single file with two
        intensity columns the default is: the columns whose headers say VV and VH (also
        "parallel", "perpendicular", "crossed"), else the first as VV and the second as VH.
    **options
        Passed to :func:`read_spectra` (``axis``, ``laser_nm`` …) for both files.

    Returns
    -------
    PolarizedPair
        VV and VH on the VV axis (VH interpolated when the files' axes differ, with a note);
        ``vh`` is None when only a one-column VV file is given.

    Raises
    ------
    InputFormatError
        What :func:`read_spectra` raises, and a channel whose intensities are all the same.
    """
    spectra = read_spectra(vv_source, **options)
    where = spectra[0].where
    if vh_source is not None:
        if vv_column is not None:
            vv = _select(spectra, vv_column, where)
        elif len(spectra) == 1:
            vv = spectra[0]
        else:
            raise VibrapolError(
                f"{where}: holds {len(spectra)} spectra ({', '.join(s.label for s in spectra)}); "
                "choose VV with vv_column="
            )
        vh = read_spectrum(vh_source, column=vh_column, **options)
    elif len(spectra) == 1 and vh_column is None:
        return PolarizedPair(_rename(_with_signal(spectra[0]), "VV"))
    else:
        if vv_column is None or vh_column is None:
            default_vv, default_vh = _vv_vh_columns(spectra, where)
            vv_column = default_vv if vv_column is None else vv_column
            vh_column = default_vh if vh_column is None else vh_column
        vv = _select(spectra, vv_column, where)
        vh = _select(spectra, vh_column, where)
    return align_pair(_rename(_with_signal(vv), "VV"), _rename(_with_signal(vh), "VH"))


def _with_signal(spectrum: MeasuredSpectrum) -> MeasuredSpectrum:
    """The spectrum itself; raises when it holds no signal the later steps can work with.

    That is: every intensity the same (no spectrum recorded), or all of them so small (below
    :data:`MIN_SIGNAL`) that their squares underflow in the baseline and noise estimates.
    """
    y = spectrum.intensity
    label = spectrum.label if not spectrum.label.startswith("column ") else ""
    column = f" ({label})" if label else ""
    if np.all(y == y[0]):
        raise InputFormatError(
            f"{spectrum.where}: every intensity{column} is {y[0]:g}; the file holds no spectrum"
        )
    top = float(np.max(np.abs(y)))
    if top < MIN_SIGNAL:
        raise InputFormatError(
            f"{spectrum.where}: the largest intensity{column} is {top:.3g}, below {MIN_SIGNAL:g}; "
            "multiply the intensities by a constant (band positions and ρ do not change)"
        )
    return spectrum


def _rename(spectrum: MeasuredSpectrum, channel: str) -> MeasuredSpectrum:
    label = spectrum.label
    if label.startswith("column "):
        label = ""
    if label and label.strip().upper() != channel:
        label = f"{channel} ({label.strip()})"
    return dataclasses.replace(spectrum, label=label or channel)
