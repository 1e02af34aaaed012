"""Line shapes: unit area, exact FWHM, limits of the Voigt profile."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

from spectrum_helpers import analytic_modeset
from vibrapol.errors import VibrapolError
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import (
    LineShape,
    gaussian,
    lorentzian,
    measured_fwhm,
    voigt,
    voigt_fwhm_unit,
)

SHAPES = [("lorentzian", 0.5), ("gaussian", 0.5), ("voigt", 0.5), ("voigt", 0.2), ("voigt", 0.8)]


@pytest.mark.parametrize(("shape", "share"), SHAPES)
def test_profile_has_unit_area_analytically(shape, share):
    # Mathematical fact: each profile is a probability density; scipy.integrate.quad over the
    # whole line must give 1 (to quad's tolerance, 1e-8).
    ls = LineShape(shape, 7.0, lorentzian_share=share)
    area, _ = quad(
        lambda x: float(ls.profiles(np.array([x]), np.array([0.0]))[0, 0]),
        -np.inf,
        np.inf,
        limit=400,
    )
    assert area == pytest.approx(1.0, abs=1e-7)


@pytest.mark.parametrize(("shape", "share"), SHAPES)
def test_broadened_line_keeps_stick_area_and_fwhm(shape, share):
    # Issue requirement: a broadened line integrates to its stick height within 0.5 % over a
    # wide range, and the FWHM measured on the grid equals the requested one within one step.
    # A Lorentzian loses 1 − (2/π)·atan(2L/Γ) ≈ Γ/(πL) of its area beyond ±L: 8/(π·3000) ≈ 0.08 %.
    modes = analytic_modeset([np.eye(3)], [1500.0])
    sticks = stick_spectrum(modes, quantity="activity")
    step = 0.25
    ls = LineShape(shape, 8.0, lorentzian_share=share)
    grid = broaden(sticks, ls, range_cm1=(-1500.0, 4500.0), step_cm1=step)
    vv = grid.channel("vv")
    area = np.trapezoid(vv, grid.shift_cm1)
    assert area == pytest.approx(sticks.channel("vv")[0], rel=5e-3)  # 45a² = 45 for diag(1,1,1)
    assert abs(measured_fwhm(grid.shift_cm1, vv) - 8.0) <= step


def test_gaussian_and_lorentzian_peak_heights():
    # Textbook peak values of unit-area profiles: Lorentzian 2/(πΓ), Gaussian 2√(ln2/π)/Γ.
    fwhm = 6.0
    assert float(lorentzian(0.0, 0.0, fwhm)) == pytest.approx(2.0 / (math.pi * fwhm), rel=1e-12)
    assert float(gaussian(0.0, 0.0, fwhm)) == pytest.approx(
        2.0 * math.sqrt(math.log(2) / math.pi) / fwhm, rel=1e-12
    )


def test_voigt_fwhm_agrees_with_olivero_longbothum():
    # J. J. Olivero and R. L. Longbothum, JQSRT 17, 233 (1977): f_V ≈ 0.5346 f_L +
    # sqrt(0.2166 f_L² + f_G²), accurate to 0.02 %.
    for s in (0.1, 0.5, 0.9):
        estimate = 0.5346 * s + math.sqrt(0.2166 * s**2 + (1 - s) ** 2)
        assert voigt_fwhm_unit(s) == pytest.approx(estimate, rel=3e-4)


def test_voigt_limits_are_gaussian_and_lorentzian():
    # Definition of the Voigt profile: share 0 is the pure Gaussian, share 1 the Lorentzian;
    # just inside those limits it approaches them continuously.
    x = np.linspace(-30, 30, 241)
    assert np.max(np.abs(voigt(x, 0.0, 5.0, 1e-6) - gaussian(x, 0.0, 5.0))) < 1e-5
    assert np.max(np.abs(voigt(x, 0.0, 5.0, 1 - 1e-6) - lorentzian(x, 0.0, 5.0))) < 1e-5


def test_width_grows_with_wavenumber():
    # fwhm = fwhm_cm1 + slope·|ν| by definition: 4 + 0.002·3000 = 10 cm⁻¹.
    ls = LineShape("gaussian", 4.0, fwhm_slope=0.002)
    x = np.arange(2900.0, 3100.0, 0.05)
    y = ls.profiles(x, np.array([3000.0]))[0]
    assert measured_fwhm(x, y) == pytest.approx(10.0, abs=0.05)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"shape": "triangle"}, "unknown line shape"),
        ({"fwhm_cm1": 0.0}, "fwhm_cm1 must be a positive"),
        ({"fwhm_slope": -1.0}, "fwhm_slope must be"),
        ({"lorentzian_share": 1.5}, "between 0 and 1"),
    ],
)
def test_bad_lineshape_parameters_are_refused(kwargs, match):
    with pytest.raises(VibrapolError, match=match):
        LineShape(**kwargs)
