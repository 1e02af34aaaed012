"""Invented VV/VH spectra with known bands, for tests, benchmarks and demos.

Everything this module makes is invented data (label it so wherever it is shown): bands of
chosen position, width, area and depolarization ratio on a chosen axis, with optional noise,
baseline, cosmic-ray spikes and an instrument factor on the VH channel.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.measured.profiles import profile
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair


@dataclass(frozen=True)
class TrueBand:
    """A band of an invented spectrum.

    Attributes
    ----------
    position_cm1, fwhm_cm1 : float
    area : float
        VV area.
    rho : float
        True depolarization ratio: VH area = ``rho`` × VV area (before the instrument factor).
    eta : float
        Lorentzian fraction (pseudo-Voigt shape only).
    """

    position_cm1: float
    fwhm_cm1: float
    area: float
    rho: float = 0.75
    eta: float = 0.5


def band_sum(
    shift_cm1: np.ndarray, bands: Sequence[TrueBand], shape: str, channel: str = "VV"
) -> np.ndarray:
    """Noise-free sum of the bands (VV areas, or VH = rho × area)."""
    x = np.asarray(shift_cm1, dtype=float)
    total = np.zeros_like(x)
    for b in bands:
        area = b.area if channel == "VV" else b.rho * b.area
        total += area * profile(shape, x, b.position_cm1, b.fwhm_cm1, b.eta)
    return total


def synthetic_pair(
    shift_cm1: np.ndarray,
    bands: Sequence[TrueBand],
    *,
    shape: str = "lorentzian",
    noise_sigma: float = 0.0,
    vh_noise_sigma: float | None = None,
    baseline: np.ndarray | None = None,
    spikes: Sequence[tuple[int, float]] = (),
    instrument_factor: float = 1.0,
    rng: np.random.Generator | None = None,
) -> PolarizedPair:
    """Invented VV and VH spectra of the given bands.

    Parameters
    ----------
    shift_cm1 : ndarray
        Raman-shift axis (ascending; may be uneven).
    bands : sequence of TrueBand
    shape : str
        Band shape (see :mod:`vibrapol.measured.profiles`).
    noise_sigma, vh_noise_sigma : float
        Standard deviation of white Gaussian noise on VV and VH (VH defaults to VV's).
    baseline : ndarray, optional
        Added to both channels.
    spikes : sequence of (index, height)
        Cosmic-ray spikes added to VV at those points.
    instrument_factor : float
        Relative VH/VV throughput of the spectrometer: the measured VH is this times the true.
    rng : numpy Generator, optional
        Source of the noise (``np.random.default_rng(0)`` when omitted).
    """
    x = np.asarray(shift_cm1, dtype=float)
    rng = rng or np.random.default_rng(0)
    vv = band_sum(x, bands, shape, "VV")
    vh = instrument_factor * band_sum(x, bands, shape, "VH")
    if baseline is not None:
        vv, vh = vv + baseline, vh + baseline
    vv = vv + rng.normal(0.0, 1.0, x.size) * noise_sigma
    sigma_vh = noise_sigma if vh_noise_sigma is None else vh_noise_sigma
    vh = vh + rng.normal(0.0, 1.0, x.size) * sigma_vh
    for index, height in spikes:
        vv[index] += height
    note = "invented data (vibrapol.measured.synthetic)"
    return PolarizedPair(
        MeasuredSpectrum(x, vv, label="VV", notes=(note,)),
        MeasuredSpectrum(x, vh, label="VH", notes=(note,)),
    )
