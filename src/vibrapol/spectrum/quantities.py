"""Quantities a stick can carry: activity, relative intensity, absolute cross section.

With A_c = 45⟨|e_s·α′·e_i|²⟩ the channel activity (:mod:`vibrapol.spectrum.channels`), ν̃₀ the
laser and ν̃_k the band wavenumber in cm⁻¹:

* ``"activity"``: A_c in Å⁴ amu⁻¹.
* ``"intensity"``: the signal a detector records, relative.  With ν̃_s = ν̃₀ ∓ ν̃_k the scattered
  wavenumber (− Stokes, + anti-Stokes), the thermal factor n_k = 1/(1 − e^(−x)) (Stokes) or
  1/(e^x − 1) (anti-Stokes), x = hcν̃_k/kT, and ν̃_ref = :data:`INTENSITY_REFERENCE_CM1` (only to
  keep the numbers of the order of the activity):

  - ``detector="photon"`` (default; CCD and InGaAs arrays count photons):
    A_c · ν̃₀ ν̃_s³ / ν̃_k · n_k / ν̃_ref³.  The scattered power goes as ν̃_s⁴; a photon carries
    hcν̃_s, so the photon rate goes as ν̃_s³, and ν̃₀ (the laser photon rate per unit power is
    ∝ 1/ν̃₀, fixed for one laser) only makes the number comparable between lasers.
  - ``detector="energy"`` (thermal detectors, or spectra corrected to power):
    A_c · ν̃_s⁴ / ν̃_k · n_k / ν̃_ref³, proportional to the cross section.

  Ratios between bands hold for the stated detector only, and neither includes the
  spectrometer's throughput or the detector's quantum efficiency.
* ``"cross-section"``: dσ/dΩ in cm² sr⁻¹ per molecule (:func:`cross_section_cm2_sr`): energy
  based by definition, whatever the detector.

References
----------
.. [Long] D. A. Long, *The Raman Effect*, Wiley (2002), ch. 4–5: frequency and population
   factors of Stokes and anti-Stokes scattering.
.. [Pol] P. L. Polavarapu, J. Phys. Chem. 94, 8106 (1990): absolute differential cross
   section from the Raman activity.
"""

from __future__ import annotations

import math

import numpy as np

from vibrapol import units
from vibrapol.errors import VibrapolError

#: Quantities a spectrum can show, with the unit of a stick height.
QUANTITY_UNITS = {
    "activity": "angstrom^4/amu",
    "intensity": "angstrom^4/amu (relative intensity, see vibrapol.spectrum)",
    "cross-section": "cm^2/sr",
}

#: Wavenumber that makes the relative intensity a number of the order of the activity.
INTENSITY_REFERENCE_CM1 = 1.0e4

#: Detector conventions of the relative intensity: photon counting or energy (power).
DETECTORS = ("photon", "energy")

#: What each detector convention means, for headers and captions.
DETECTOR_NOTES = {
    "photon": "photon-counting detector (CCD, InGaAs array): I ∝ ν0 (ν0 ∓ ν)^3",
    "energy": "energy (power) detector: I ∝ (ν0 ∓ ν)^4",
}

#: Stokes, anti-Stokes or both.
SIDES = ("stokes", "anti-stokes", "both")

#: Highest temperature accepted (K): far above where any molecule survives; beyond it the
#: population factors overflow.
MAX_TEMPERATURE_K = 1.0e5


def check_temperature(temperature_k: float) -> float:
    """The temperature as a float, checked to lie in 0–:data:`MAX_TEMPERATURE_K`.

    Raises
    ------
    VibrapolError
        For negative, NaN or absurdly high temperatures.
    """
    t = float(temperature_k)
    if not 0.0 <= t <= MAX_TEMPERATURE_K:  # also refuses NaN
        raise VibrapolError(f"temperature must be between 0 and {MAX_TEMPERATURE_K:g} K, got {t}")
    return t


def thermal_factor(freqs_cm1: np.ndarray, temperature_k: float, side: str = "stokes") -> np.ndarray:
    """Population factor of a harmonic mode: n̄ + 1 (Stokes) or n̄ (anti-Stokes) [Long]_.

    n̄ = 1/(e^x − 1) with x = hcν̃/kT is the Bose–Einstein occupation; at T = 0 the Stokes factor
    is 1 and the anti-Stokes factor 0.
    """
    nu = np.asarray(freqs_cm1, dtype=float)
    temperature_k = check_temperature(temperature_k)
    if temperature_k == 0:
        return np.ones_like(nu) if side == "stokes" else np.zeros_like(nu)
    x = units.HC_OVER_K_CM_K * nu / temperature_k
    if side == "stokes":
        return 1.0 / -np.expm1(-x)
    return 1.0 / np.expm1(x)


def scattered_cm1(freqs_cm1: np.ndarray, laser_nm: float, side: str = "stokes") -> np.ndarray:
    """Absolute wavenumber of the scattered light, ν̃₀ − ν̃_k (Stokes) or ν̃₀ + ν̃_k (anti-Stokes)."""
    nu0 = float(units.wavelength_nm_to_cm1(laser_nm))
    nu = np.asarray(freqs_cm1, dtype=float)
    out = nu0 - nu if side == "stokes" else nu0 + nu
    if np.any(out <= 0):
        raise VibrapolError(
            f"a {laser_nm:g} nm laser ({nu0:.0f} cm-1) cannot excite Stokes lines up to "
            f"{nu.max():.0f} cm-1; "
            "choose a shorter wavelength or a smaller range"
        )
    return out


def cross_section_cm2_sr(
    channel_activity: np.ndarray,
    freqs_cm1: np.ndarray,
    laser_nm: float,
    temperature_k: float,
    side: str = "stokes",
) -> np.ndarray:
    """Absolute differential Raman cross section dσ/dΩ in cm² sr⁻¹ per molecule [Pol]_.

    dσ/dΩ = (2π)⁴ ν̃_s⁴ · h/(8π² c ν̃_k) · n_k · A/45, in Gaussian units, where ν̃_s = ν̃₀ ∓ ν̃_k,
    n_k the thermal factor and A the channel activity; for A = S (V-polarized light, no analyzer,
    90°) this is Polavarapu's formula.  The factor h/(8π²cν̃_k) = ħ/(2ω_k) is |⟨1|Q|0⟩|² of the
    harmonic oscillator in the mass-weighted coordinate, and A/45 = ⟨|e_s·α′·e_i|²⟩.

    Parameters
    ----------
    channel_activity : ndarray
        A in Å⁴ amu⁻¹.
    freqs_cm1 : ndarray
        ν̃_k (same shape), > 0.
    laser_nm, temperature_k, side
        Laser vacuum wavelength, temperature, ``"stokes"`` or ``"anti-stokes"``.
    """
    nu_k = np.asarray(freqs_cm1, dtype=float)
    nu_s = scattered_cm1(nu_k, laser_nm, side)
    # Step 1: activity Å⁴ amu⁻¹ → cm⁴ g⁻¹ (1 Å = 1e-8 cm; 1 amu = DALTON_KG · 1e3 g).
    a_cgs = np.asarray(channel_activity, dtype=float) * (1e-8) ** 4 / (units.DALTON_KG * 1e3)
    # Step 2: ⟨|e_s·α′·e_i|²⟩ in cm⁴ g⁻¹.
    mean_square = a_cgs / 45.0
    # Step 3: |⟨1|Q|0⟩|² = h / (8π² c ν̃_k) in g cm², with h in erg s (1 J = 1e7 erg), c in cm s⁻¹.
    h_erg_s = units.PLANCK_J_S * 1e7
    q2 = h_erg_s / (8.0 * math.pi**2 * units.C_CM_S * nu_k)
    # Step 4: (2π ν̃_s)⁴ in cm⁻⁴ times the transition polarizability squared (cm⁶) → cm².
    return (
        (2.0 * math.pi * nu_s) ** 4 * mean_square * q2 * thermal_factor(nu_k, temperature_k, side)
    )


def check_detector(detector: str) -> str:
    """The detector convention, checked to be one of :data:`DETECTORS`."""
    if detector not in DETECTORS:
        raise VibrapolError(
            f"detector must be one of {', '.join(DETECTORS)}, got {detector!r} "
            "(photon: counting detectors such as CCD and InGaAs arrays; energy: power detectors)"
        )
    return detector


def frequency_factor(
    freqs_cm1: np.ndarray, laser_nm: float, side: str = "stokes", detector: str = "photon"
) -> np.ndarray:
    """ν̃₀ ν̃_s³ (photon counting) or ν̃_s⁴ (energy), in cm⁻⁴, with ν̃_s = ν̃₀ ∓ ν̃_k [Long]_.

    The scattered power of a band goes as ν̃_s⁴; a detector that counts photons records the
    power divided by the photon energy hcν̃_s, i.e. ∝ ν̃_s³; the extra ν̃₀ is the usual
    convention for photon-counting spectra (common practice) and cancels between bands.
    """
    check_detector(detector)
    nu_s = scattered_cm1(freqs_cm1, laser_nm, side)
    if detector == "energy":
        return nu_s**4
    nu0 = float(units.wavelength_nm_to_cm1(laser_nm))
    return nu0 * nu_s**3


def anti_stokes_ratio(
    freqs_cm1: np.ndarray, laser_nm: float, temperature_k: float, detector: str = "photon"
) -> np.ndarray:
    """Anti-Stokes to Stokes signal ratio of a band: (ν̃_as/ν̃_s)^p e^(−hcν̃/kT), p = 3 or 4.

    p = 3 for a photon-counting detector, 4 for an energy detector; the thermal factors
    n̄/(n̄ + 1) = e^(−x) and the activity cancel in the ratio [Long]_.
    """
    nu = np.asarray(freqs_cm1, dtype=float)
    stokes = frequency_factor(nu, laser_nm, "stokes", detector)
    anti = frequency_factor(nu, laser_nm, "anti-stokes", detector)
    return (
        anti
        / stokes
        * thermal_factor(nu, temperature_k, "anti-stokes")
        / thermal_factor(nu, temperature_k, "stokes")
    )


def temperature_from_anti_stokes(
    ratio: float, freq_cm1: float, laser_nm: float, detector: str = "photon"
) -> float:
    """Sample temperature (K) from a measured anti-Stokes/Stokes ratio of one band.

    Inverts :func:`anti_stokes_ratio`: T = hcν̃/k / (p ln(ν̃_as/ν̃_s) − ln R).
    """
    check_detector(detector)
    if not (math.isfinite(ratio) and ratio > 0):
        raise VibrapolError(f"anti-Stokes/Stokes ratio must be a positive number, got {ratio}")
    nu0 = float(units.wavelength_nm_to_cm1(laser_nm))
    power = 3.0 if detector == "photon" else 4.0
    q = (nu0 + freq_cm1) / float(scattered_cm1(np.array([freq_cm1]), laser_nm)[0])
    denominator = power * math.log(q) - math.log(ratio)
    if denominator <= 0:
        raise VibrapolError(
            f"anti-Stokes/Stokes ratio {ratio:g} of the {freq_cm1:g} cm-1 band is too high for "
            "thermal populations"
        )
    return units.HC_OVER_K_CM_K * freq_cm1 / denominator


def quantity_factor(
    quantity: str,
    freqs_cm1: np.ndarray,
    laser_nm: float,
    temperature_k: float,
    side: str = "stokes",
    detector: str = "photon",
) -> np.ndarray:
    """Factor that turns a channel activity into ``quantity`` for bands at ``freqs_cm1`` (> 0).

    ``detector`` matters only for ``"intensity"`` (:func:`frequency_factor`); cross sections
    are energy based by definition.
    """
    nu = np.asarray(freqs_cm1, dtype=float)
    check_detector(detector)
    if quantity == "activity":
        return np.ones_like(nu)
    if quantity == "intensity":
        freq = frequency_factor(nu, laser_nm, side, detector)
        return freq / nu * thermal_factor(nu, temperature_k, side) / INTENSITY_REFERENCE_CM1**3
    if quantity == "cross-section":
        return cross_section_cm2_sr(np.ones_like(nu), nu, laser_nm, temperature_k, side)
    raise VibrapolError(f"unknown quantity {quantity!r}; choose one of {', '.join(QUANTITY_UNITS)}")
