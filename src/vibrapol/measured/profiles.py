"""Area-normalized band profiles and their derivatives, for fitting measured bands.

Every profile integrates to 1 over the whole axis and is parametrized by its centre ``x0`` and
full width at half maximum ``fwhm`` (both cm⁻¹), so a fitted amplitude *is* the band area.
The Lorentzian and Gaussian themselves are those of :mod:`vibrapol.spectrum.lineshapes` (re-exported
here under the same names).
"""

from __future__ import annotations

import numpy as np

from vibrapol.errors import VibrapolError
from vibrapol.spectrum.lineshapes import gaussian, lorentzian

__all__ = ["SHAPES", "gaussian", "height_factor", "lorentzian", "profile", "profile_derivatives"]

#: Band shapes the fitter knows.
SHAPES: tuple[str, ...] = ("lorentzian", "gaussian", "pseudo_voigt")

_A = 4.0 * np.log(2.0)  # Gaussian: exp(-4 ln2 t²) is ½ at t = ±½


def profile(shape: str, x: np.ndarray, x0: float, fwhm: float, eta: float = 0.5) -> np.ndarray:
    """Area-normalized profile of a band.

    Parameters
    ----------
    shape : {"lorentzian", "gaussian", "pseudo_voigt"}
    x : ndarray
        Raman shift in cm⁻¹.
    x0, fwhm : float
        Centre and full width at half maximum in cm⁻¹.
    eta : float
        Lorentzian fraction of a pseudo-Voigt band (ignored by the other shapes).

    References
    ----------
    Pseudo-Voigt as η L + (1 − η) G with a common FWHM: G. K. Wertheim, M. A. Butler,
    K. W. West and D. N. E. Buchanan, Rev. Sci. Instrum. 45, 1369 (1974) (from memory).
    """
    if shape == "lorentzian":
        return lorentzian(x, x0, fwhm)
    if shape == "gaussian":
        return gaussian(x, x0, fwhm)
    if shape == "pseudo_voigt":
        return eta * lorentzian(x, x0, fwhm) + (1.0 - eta) * gaussian(x, x0, fwhm)
    raise VibrapolError(f"unknown band shape {shape!r}; use one of {', '.join(SHAPES)}")


def profile_derivatives(
    shape: str, x: np.ndarray, x0: float, fwhm: float, eta: float = 0.5
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Profile P and its derivatives ∂P/∂x0, ∂P/∂w, ∂P/∂η (zero unless pseudo-Voigt).

    With u = 2(x − x0)/w: ∂L/∂x0 = L·4u/(w(1 + u²)), ∂L/∂w = (L/w)(u² − 1)/(1 + u²); with
    t = (x − x0)/w: ∂G/∂x0 = G·2at/w, ∂G/∂w = (G/w)(2at² − 1), a = 4 ln 2.
    """
    x = np.asarray(x, dtype=float)
    u = 2.0 * (x - x0) / fwhm
    lor = lorentzian(x, x0, fwhm)
    lor_x0 = lor * 4.0 * u / (fwhm * (1.0 + u * u))
    lor_w = lor / fwhm * (u * u - 1.0) / (1.0 + u * u)
    if shape == "lorentzian":
        return lor, lor_x0, lor_w, np.zeros_like(x)
    t = (x - x0) / fwhm
    gau = gaussian(x, x0, fwhm)
    gau_x0 = gau * 2.0 * _A * t / fwhm
    gau_w = gau / fwhm * (2.0 * _A * t * t - 1.0)
    if shape == "gaussian":
        return gau, gau_x0, gau_w, np.zeros_like(x)
    if shape == "pseudo_voigt":
        return (
            eta * lor + (1 - eta) * gau,
            eta * lor_x0 + (1 - eta) * gau_x0,
            eta * lor_w + (1 - eta) * gau_w,
            lor - gau,
        )
    raise VibrapolError(f"unknown band shape {shape!r}; use one of {', '.join(SHAPES)}")


def height_factor(shape: str, eta: float = 0.5) -> float:
    """Peak height of the unit-area profile times its FWHM (height = area·factor/FWHM)."""
    lor, gau = 2.0 / np.pi, np.sqrt(_A / np.pi)
    return {"lorentzian": lor, "gaussian": gau}.get(shape, eta * lor + (1 - eta) * gau)
