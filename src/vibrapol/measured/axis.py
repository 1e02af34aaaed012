"""Axis kinds of measured spectra and their conversion to Raman shift.

A file's x axis is one of

``"shift"``
    Raman shift ν̃₀ − ν̃ in cm⁻¹ (what most Raman software writes);
``"wavenumber"``
    absolute wavenumber ν̃ of the scattered light in cm⁻¹;
``"wavelength"``
    wavelength λ of the scattered light in nm.

The last two need the excitation line ``laser_nm``: ν̃₀ = 10⁷/λ₀ and the Raman shift is
ν̃₀ − 10⁷/λ (Stokes side positive).  Laser and axis wavelengths must be in the same medium
(both vacuum or both air).  Mixing them shifts every band by about 3·10⁻⁴ of ν̃ (≈5 cm⁻¹
at 532 nm), which no later step can repair; both in air leaves only ≈3·10⁻⁴ of the shift.

Only Stokes spectra are accepted: a laser line inside or beyond the range of a wavelength
axis is almost always the wrong line and is reported as an error, as are shifts beyond the
range of molecular vibrations.

Safety: laser radiation can injure eyes and skin; follow the laser safety rules of your
institution and local regulations when recording spectra.
"""

from __future__ import annotations

import re
from typing import Literal

import numpy as np

from vibrapol.errors import VibrapolError
from vibrapol.units import wavelength_nm_to_cm1

AxisKind = Literal["shift", "wavenumber", "wavelength"]

#: Axis kinds accepted by the readers ("auto" = from the units in the file, else shift).
AXIS_KINDS: tuple[str, ...] = ("auto", "shift", "wavenumber", "wavelength")

#: Largest Raman shift (cm⁻¹) accepted by default after conversion.  Fundamentals of molecules
#: end near 4160 cm⁻¹ (the H₂ stretch, common practice); more than this almost always means a
#: wrong laser line.  Callers can raise it (overtone work, fluorescence studies).
MAX_SHIFT_CM1 = 4500.0

#: Plausible excitation wavelengths in nm (deep UV to mid IR lasers used for Raman).
LASER_NM_RANGE = (150.0, 2500.0)

_UNIT_PATTERNS: tuple[tuple[str, AxisKind, float], ...] = (
    # (regular expression on the lower-cased units text, kind, factor to nm or cm⁻¹)
    (r"raman\s*shift", "shift", 1.0),
    (r"absolute\s*wavenumber", "wavenumber", 1.0),
    (r"\bnm\b|nanomet", "wavelength", 1.0),
    (r"micromet|\bum\b|\bµm\b|\bμm\b|\bmicrons?\b", "wavelength", 1000.0),
    (r"1\s*/\s*cm|cm\s*\^?\s*-\s*1|cm⁻¹|\bwavenumbers?\b|\bshift\b", "shift", 1.0),
)


def axis_from_units(units: str) -> tuple[AxisKind, float] | None:
    """Axis kind and scale factor (to nm or cm⁻¹) named by a units text, or None.

    ``"1/CM"``, ``"cm-1"``, ``"Raman shift"`` and ``"Wavenumber"`` are taken as Raman shift (the
    usual meaning in Raman files; an absolute wavenumber axis must be asked for);
    ``"NANOMETERS"``, ``"nm"``, ``"Wavelength (nm)"`` as wavelength; micrometres are scaled
    to nm.
    """
    text = units.strip().lower()
    for pattern, kind, factor in _UNIT_PATTERNS:
        if re.search(pattern, text):
            return kind, factor
    return None


def check_laser_nm(laser_nm: float | None, where: str) -> float:
    """Validate an excitation wavelength in nm.

    Raises
    ------
    VibrapolError
        When it is missing, not a number, or outside :data:`LASER_NM_RANGE`.
    """
    if laser_nm is None:
        raise VibrapolError(
            f"{where}: the x axis is not a Raman shift; give the laser line in nm (laser_nm, "
            "--laser-nm) to convert it"
        )
    try:
        value = float(laser_nm)
    except (TypeError, ValueError) as exc:
        raise VibrapolError(f"{where}: laser line {laser_nm!r} is not a number (nm)") from exc
    lo, hi = LASER_NM_RANGE
    if not (lo <= value <= hi):
        raise VibrapolError(
            f"{where}: laser line {value:g} nm is outside {lo:g}–{hi:g} nm; give it in nm"
        )
    return value


def to_raman_shift(
    x: np.ndarray,
    kind: AxisKind,
    laser_nm: float | None,
    *,
    where: str,
    max_shift_cm1: float = MAX_SHIFT_CM1,
) -> tuple[np.ndarray, str]:
    """Convert an axis to Raman shift in cm⁻¹.

    Parameters
    ----------
    x : ndarray
        Axis values in the unit of ``kind`` (cm⁻¹ or nm), monotonic, any direction.
    kind : {"shift", "wavenumber", "wavelength"}
    laser_nm : float or None
        Excitation wavelength in nm; required unless ``kind == "shift"``.
    where : str
        File name for messages.
    max_shift_cm1 : float
        Largest shift accepted after conversion (see :data:`MAX_SHIFT_CM1`).

    Returns
    -------
    shift_cm1 : ndarray
        ν̃₀ − ν̃ (same order as ``x``; it may be descending).
    note : str
        One line saying what was done ('' for a shift axis).

    Raises
    ------
    VibrapolError
        Missing or implausible laser line; laser line inside or beyond the axis range; shifts
        beyond ``max_shift_cm1``; a "shift" axis that looks like absolute wavenumbers.

    References
    ----------
    Raman shift definition: D. A. Long, *The Raman Effect*, Wiley (2002), ch. 1.
    """
    x = np.asarray(x, dtype=float)
    lo, hi = float(np.min(x)), float(np.max(x))
    if kind == "shift":
        if lo > max_shift_cm1:
            raise VibrapolError(
                f"{where}: x runs {lo:g}–{hi:g}, beyond Raman shifts of molecules; if these are "
                "absolute wavenumbers pass axis='wavenumber' (--axis wavenumber) and the laser line"
            )
        return x.copy(), ""
    laser = check_laser_nm(laser_nm, where)
    nu0 = float(wavelength_nm_to_cm1(laser))
    if kind == "wavelength":
        if lo <= 0:
            raise VibrapolError(f"{where}: wavelength axis has non-positive values ({lo:g} nm)")
        if lo <= laser:
            inside = "inside" if hi > laser else "above"
            raise VibrapolError(
                f"{where}: laser line {laser:g} nm is {inside} the wavelength range "
                f"{lo:g}–{hi:g} nm; Stokes spectra need a laser line shorter than every "
                "wavelength (wrong laser line, or crop the anti-Stokes side first)"
            )
        shift = nu0 - wavelength_nm_to_cm1(x)
        note = f"converted from wavelength (nm) with laser line {laser:g} nm"
    elif kind == "wavenumber":
        if hi >= nu0:
            raise VibrapolError(
                f"{where}: laser line {laser:g} nm ({nu0:.1f} cm-1) lies inside or below the "
                f"absolute-wavenumber range {lo:g}–{hi:g} cm-1; Stokes spectra need ν̃ < ν̃₀ "
                "(wrong laser line?)"
            )
        shift = nu0 - x
        note = f"converted from absolute wavenumber with laser line {laser:g} nm"
    else:
        raise VibrapolError(f"{where}: unknown axis kind {kind!r}; use one of {AXIS_KINDS}")
    top = float(np.max(shift))
    if top > max_shift_cm1:
        raise VibrapolError(
            f"{where}: with laser line {laser:g} nm the shifts reach {top:.0f} cm-1, beyond "
            f"{max_shift_cm1:g} cm-1; check the laser line (or raise max_shift_cm1)"
        )
    return np.asarray(shift, dtype=float), note
