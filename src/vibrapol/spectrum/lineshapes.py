"""Line shapes of unit area, parameterised by their full width at half maximum (FWHM) in cm⁻¹.

Every profile here integrates to 1 over the whole axis, so a broadened line keeps the area of
its stick.  Widths are always FWHM; the Gaussian σ and the Lorentzian half width are derived
inside and never exposed.

References
----------
.. [Voigt] The Voigt profile is the convolution of a Gaussian and a Lorentzian; it is evaluated
   with :func:`scipy.special.voigt_profile` (Faddeeva function).
.. [OL] J. J. Olivero and R. L. Longbothum, J. Quant. Spectrosc. Radiat. Transfer 17, 233
   (1977): f_V ≈ 0.5346 f_L + sqrt(0.2166 f_L² + f_G²), used only as the starting bracket for
   the exact FWHM solved here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from vibrapol.errors import VibrapolError

#: FWHM of a Gaussian in units of its standard deviation σ: 2√(2 ln 2).
GAUSS_FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))

#: Names of the available shapes.
SHAPES = ("lorentzian", "gaussian", "voigt")

#: Widest line accepted (cm⁻¹): wider than the whole vibrational range, so nothing real is
#: lost, while absurd widths (whose squares overflow) are refused.
MAX_FWHM_CM1 = 1.0e4


def lorentzian(x: np.ndarray, center: np.ndarray | float, fwhm: np.ndarray | float) -> np.ndarray:
    """Area-normalised Lorentzian (Cauchy) profile.

    L(x) = (Γ/2π) / ((x − x₀)² + (Γ/2)²) with Γ the FWHM; ∫L dx = 1.
    Arguments broadcast against each other.
    """
    hw = 0.5 * np.asarray(fwhm, dtype=float)
    d = np.asarray(x, dtype=float) - np.asarray(center, dtype=float)
    return hw / np.pi / (d**2 + hw**2)


def gaussian(x: np.ndarray, center: np.ndarray | float, fwhm: np.ndarray | float) -> np.ndarray:
    """Area-normalised Gaussian profile with σ = FWHM / (2√(2 ln 2)); ∫G dx = 1."""
    sigma = np.asarray(fwhm, dtype=float) / GAUSS_FWHM_PER_SIGMA
    d = np.asarray(x, dtype=float) - np.asarray(center, dtype=float)
    return np.exp(-0.5 * (d / sigma) ** 2) / (sigma * math.sqrt(2.0 * math.pi))


@lru_cache(maxsize=64)
def voigt_fwhm_unit(lorentzian_share: float) -> float:
    """Exact FWHM of a Voigt profile whose component FWHMs are f_L = s and f_G = 1 − s.

    Solved by root finding on :func:`scipy.special.voigt_profile` (bracketed with the
    Olivero–Longbothum estimate [OL]_).  The Voigt profile scales with its widths, so the FWHM
    for components (s·w, (1−s)·w) is ``w * voigt_fwhm_unit(s)``.
    """
    s = float(lorentzian_share)
    if s <= 0.0:
        return 1.0
    if s >= 1.0:
        return 1.0
    from scipy.optimize import brentq  # here: SciPy's optimizer package is slow to import
    from scipy.special import voigt_profile

    f_l, f_g = s, 1.0 - s
    sigma, gamma = f_g / GAUSS_FWHM_PER_SIGMA, 0.5 * f_l
    half = 0.5 * float(voigt_profile(0.0, sigma, gamma))
    estimate = 0.5346 * f_l + math.sqrt(0.2166 * f_l**2 + f_g**2)
    root = brentq(
        lambda x: float(voigt_profile(x, sigma, gamma)) - half,
        0.25 * estimate,
        estimate,
        xtol=1e-14,
    )
    return 2.0 * root


def voigt(
    x: np.ndarray, center: np.ndarray, fwhm: np.ndarray, lorentzian_share: float = 0.5
) -> np.ndarray:
    """Area-normalised Voigt profile of total FWHM ``fwhm`` [Voigt]_.

    Parameters
    ----------
    x, center, fwhm : array_like
        Axis, line positions and total FWHM (same unit), broadcast against each other.
    lorentzian_share : float
        s in [0, 1]: the Lorentzian and Gaussian components have FWHMs in the ratio s : (1 − s);
        0 gives a Gaussian and 1 a Lorentzian.  The components are scaled so that the total
        FWHM is exactly ``fwhm``.
    """
    s = float(lorentzian_share)
    if not 0.0 <= s <= 1.0:
        raise VibrapolError(f"lorentzian_share must be between 0 and 1, got {s}")
    if s == 0.0:
        return gaussian(x, center, fwhm)
    if s == 1.0:
        return lorentzian(x, center, fwhm)
    from scipy.special import voigt_profile  # here: only Voigt lines need scipy.special

    w = np.asarray(fwhm, dtype=float) / voigt_fwhm_unit(s)
    sigma = (1.0 - s) * w / GAUSS_FWHM_PER_SIGMA
    gamma = 0.5 * s * w
    d = np.asarray(x, dtype=float) - np.asarray(center, dtype=float)
    return voigt_profile(d, sigma, gamma)


@dataclass(frozen=True)
class LineShape:
    """How each stick is broadened.

    Attributes
    ----------
    shape : str
        ``"lorentzian"``, ``"gaussian"`` or ``"voigt"``.
    fwhm_cm1 : float
        FWHM in cm⁻¹ (of the whole profile, also for the Voigt).
    fwhm_slope : float
        Optional growth of the width with wavenumber: the FWHM of a line at |ν̃| is
        ``fwhm_cm1 + fwhm_slope * |ν̃|`` (dimensionless; e.g. 0.002 adds 6 cm⁻¹ at 3000 cm⁻¹).
    lorentzian_share : float
        Voigt only: share of the Lorentzian component in the width (see :func:`voigt`).
    """

    shape: str = "lorentzian"
    fwhm_cm1: float = 8.0
    fwhm_slope: float = 0.0
    lorentzian_share: float = 0.5

    def __post_init__(self) -> None:
        if self.shape not in SHAPES:
            raise VibrapolError(
                f"unknown line shape {self.shape!r}; choose one of {', '.join(SHAPES)}"
            )
        if not 0 < self.fwhm_cm1 <= MAX_FWHM_CM1:  # also refuses NaN
            raise VibrapolError(
                f"fwhm_cm1 must be a positive number of cm⁻¹ up to {MAX_FWHM_CM1:g}, "
                f"got {self.fwhm_cm1}"
            )
        if not 0 <= self.fwhm_slope <= 1:
            raise VibrapolError(f"fwhm_slope must be between 0 and 1, got {self.fwhm_slope}")
        if not 0.0 <= self.lorentzian_share <= 1.0:
            raise VibrapolError(
                f"lorentzian_share must be between 0 and 1, got {self.lorentzian_share}"
            )

    def widths_cm1(self, positions_cm1: np.ndarray) -> np.ndarray:
        """FWHM of the line at each position, in cm⁻¹."""
        return self.fwhm_cm1 + self.fwhm_slope * np.abs(np.asarray(positions_cm1, dtype=float))

    def profiles(self, x_cm1: np.ndarray, positions_cm1: np.ndarray) -> np.ndarray:
        """Unit-area profile of every line on the axis, shape (n_lines, n_points), in 1/cm⁻¹."""
        x = np.asarray(x_cm1, dtype=float)[None, :]
        pos = np.asarray(positions_cm1, dtype=float)[:, None]
        fwhm = self.widths_cm1(pos)
        if self.shape == "lorentzian":
            return lorentzian(x, pos, fwhm)
        if self.shape == "gaussian":
            return gaussian(x, pos, fwhm)
        return voigt(x, pos, fwhm, self.lorentzian_share)

    def describe(self) -> str:
        """One line for headers and captions."""
        text = f"{self.shape}, FWHM {self.fwhm_cm1:g} cm-1"
        if self.fwhm_slope:
            text += f" + {self.fwhm_slope:g} x shift"
        if self.shape == "voigt":
            text += f", Lorentzian share {self.lorentzian_share:g}"
        return text


def measured_fwhm(x: np.ndarray, y: np.ndarray) -> float:
    """FWHM of a single sampled peak, by linear interpolation of the half-maximum crossings.

    Raises
    ------
    VibrapolError
        If the peak does not fall below half its maximum on both sides within the axis.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    i = int(np.argmax(y))
    half = 0.5 * y[i]
    left = np.flatnonzero(y[:i] < half)
    right = np.flatnonzero(y[i:] < half)
    if left.size == 0 or right.size == 0:
        raise VibrapolError(
            "peak does not fall to half its maximum inside the axis; widen the range"
        )
    j, k = left[-1], i + right[0]
    xl = x[j] + (half - y[j]) * (x[j + 1] - x[j]) / (y[j + 1] - y[j])
    xr = x[k - 1] + (half - y[k - 1]) * (x[k] - x[k - 1]) / (y[k] - y[k - 1])
    return float(xr - xl)
