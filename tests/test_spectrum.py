"""Stick and grid spectra: channels, quantities, laser and temperature factors, scaling."""

import math
import warnings

import numpy as np
import pytest
from scipy import constants as C

from spectrum_helpers import analytic_modeset
from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.output.spectra import grid_csv, grid_json, sticks_csv
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.quantities import cross_section_cm2_sr, thermal_factor
from vibrapol.spectrum.scaling import FrequencyScale, lookup_factor

# diag(1, 2, 3): a = 2, a² = 4; γ² = ½[(1−2)² + (2−3)² + (3−1)²] = 3 (definitions in D. A.
# Long, The Raman Effect, 2002, ch. 5).  So 45a² + 4γ² = 192, 3γ² = 9, S = 45a² + 7γ² = 201.
POLARIZED = np.diag([1.0, 2.0, 3.0])
TRACELESS = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])  # a = 0, γ² = 3


def two_bands():
    return analytic_modeset([POLARIZED, TRACELESS], [1000.0, 2500.0])


def test_channel_heights_follow_the_orientation_averages():
    # Long (2002) ch. 5, 90° scattering: VV = 45a² + 4γ², VH = HV = HH = 3γ², V without
    # analyzer = S = 45a² + 7γ²; natural light: nv = (VV + HV)/2, nh = (VH + HH)/2 = 3γ².
    s = stick_spectrum(
        two_bands(), channels=["hv", "hh", "vu", "nv", "nh", "nu"], quantity="activity"
    )
    got = dict(zip(s.channels, s.heights[0], strict=True))
    want = {"vv": 192, "vh": 9, "hv": 9, "hh": 9, "vu": 201, "nv": 100.5, "nh": 9, "nu": 109.5}
    for name, value in want.items():
        assert got[name] == pytest.approx(value, rel=1e-12), name


def test_backscattering_makes_hh_equal_vv():
    # General formula a²c² + γ²(3 + c²)/45 with c = e_i·e_s: at 180° both H vectors are x, so
    # c = 1 for HH (= VV = 192) and natural light gives nh/nv = 1.
    s = stick_spectrum(
        two_bands(), channels=["hh", "nv", "nh"], geometry_deg=180, quantity="activity"
    )
    assert s.channel("hh")[0] == pytest.approx(192.0, rel=1e-12)
    assert s.channel("nh")[0] / s.channel("nv")[0] == pytest.approx(1.0, rel=1e-12)


def test_natural_light_ratio_from_general_formula():
    # ρ_natural = 6γ²/(45a² + 7γ²) = 18/201 (Long 2002) must come out of the nh/nv channels.
    s = stick_spectrum(two_bands(), channels=["nv", "nh"], quantity="activity")
    assert s.channel("nh")[0] / s.channel("nv")[0] == pytest.approx(18.0 / 201.0, rel=1e-12)
    assert s.rho_natural[0] == pytest.approx(18.0 / 201.0, rel=1e-12)


def test_non_totally_symmetric_band_is_depolarized():
    # Fact of the trade (common practice): a = 0 gives ρ_linear = 3/4 exactly.
    s = stick_spectrum(two_bands(), quantity="activity")
    assert s.channel("vh")[1] / s.channel("vv")[1] == pytest.approx(0.75, rel=1e-12)
    assert not s.polarized[1] and s.polarized[0]


def test_isolated_broadened_band_has_vh_over_vv_equal_to_rho():
    # ρ_linear = 3γ²/(45a² + 4γ²) = 9/192 (Long 2002); both channels share the line shape, so the
    # ratio holds at every grid point of an isolated band.
    s = stick_spectrum(two_bands(), quantity="intensity")
    g = broaden(s, LineShape("voigt", 10.0), range_cm1=(900.0, 1100.0), step_cm1=0.5)
    ratio = g.channel("vh") / g.channel("vv")
    peak = np.argmax(g.channel("vv"))
    assert ratio[peak] == pytest.approx(9.0 / 192.0, rel=1e-4)  # the 2500 band's tail adds < 1e-4
    assert s.rho_linear[0] == pytest.approx(9.0 / 192.0, rel=1e-12)


def test_laser_change_scales_each_band_by_the_fourth_power():
    # Long 2002, ν⁴ law for an energy detector: 532 → 785 nm multiplies each intensity by
    # ((ν₀′ − ν_k)/(ν₀ − ν_k))⁴ exactly.
    m = two_bands()
    a = stick_spectrum(m, quantity="intensity", laser_nm=532.0, detector="energy")
    b = stick_spectrum(m, quantity="intensity", laser_nm=785.0, detector="energy")
    nu0, nu1 = 1e7 / 532.0, 1e7 / 785.0
    want = ((nu1 - a.positions_cm1) / (nu0 - a.positions_cm1)) ** 4
    np.testing.assert_allclose(
        b.heights / a.heights, np.repeat(want[:, None], 2, axis=1), rtol=1e-12
    )


def test_anti_stokes_to_stokes_ratio():
    # Long (2002), energy detector: I_aS/I_S = ((ν₀ + ν_k)/(ν₀ − ν_k))⁴ exp(−hcν_k/kT); hc/k
    # from scipy.constants.
    s = stick_spectrum(
        two_bands(), quantity="intensity", side="both", temperature_k=350.0, detector="energy"
    )
    n = s.n_bands // 2
    nu0, nu = 1e7 / 532.0, s.positions_cm1[:n]
    hc_k = C.h * C.c * 100.0 / C.k
    want = ((nu0 + nu) / (nu0 - nu)) ** 4 * np.exp(-hc_k * nu / 350.0)
    np.testing.assert_allclose(s.channel("vv")[n:] / s.channel("vv")[:n], want, rtol=1e-12)
    np.testing.assert_allclose(s.positions_cm1[n:], -nu, rtol=0)


def test_thermal_factor_limits():
    # Bose–Einstein: n̄ + 1 → 1 and n̄ → 0 at T = 0; n̄ + 1 − n̄ = 1 at any T.
    nu = np.array([200.0, 1000.0])
    assert thermal_factor(nu, 0.0) == pytest.approx([1.0, 1.0])
    assert thermal_factor(nu, 0.0, "anti-stokes") == pytest.approx([0.0, 0.0])
    diff = thermal_factor(nu, 298.15) - thermal_factor(nu, 298.15, "anti-stokes")
    assert diff == pytest.approx([1.0, 1.0], rel=1e-12)


@pytest.mark.parametrize(
    ("side", "temperature_k"), [("stokes", 298.15), ("anti-stokes", 500.0), ("stokes", 0.0)]
)
def test_cross_section_matches_independent_si_evaluation(side, temperature_k):
    # Independent route in SI (J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 9.2 for
    # dipole radiation): dσ/dΩ = ω_s⁴ α_fi² / (16π²ε₀²c⁴) with α_fi² = (4πε₀)²·⟨α′²⟩_vol·ħ/(2ω_k)·n,
    # ⟨α′²⟩_vol = A/45 in m⁴ kg⁻¹, angular frequencies ω = 2πcν̃; result in m², then cm².
    activity, nu_k, laser_nm = 12.3, 1234.5, 514.5
    nu_k_m, nu0_m = nu_k * 100.0, 1e9 / laser_nm
    nu_s_m = nu0_m - nu_k_m if side == "stokes" else nu0_m + nu_k_m
    omega_k, omega_s = 2 * math.pi * C.c * nu_k_m, 2 * math.pi * C.c * nu_s_m
    if temperature_k == 0:
        n = 1.0
    else:
        nbar = 1.0 / math.expm1(C.hbar * omega_k / (C.k * temperature_k))
        n = nbar + 1.0 if side == "stokes" else nbar
    alpha_vol2 = activity / 45.0 * 1e-40 / C.atomic_mass  # m⁴ kg⁻¹
    alpha_si2 = (4 * math.pi * C.epsilon_0) ** 2 * alpha_vol2 * C.hbar / (2 * omega_k) * n
    sigma_m2 = omega_s**4 * alpha_si2 / (16 * math.pi**2 * C.epsilon_0**2 * C.c**4)
    got = cross_section_cm2_sr(
        np.array([activity]), np.array([nu_k]), laser_nm, temperature_k, side
    )
    assert float(got[0]) == pytest.approx(sigma_m2 * 1e4, rel=1e-10, abs=0.0)  # values ~1e-30


def test_degenerate_pair_is_one_band_independent_of_basis():
    # Long (2002): intensities add over a degenerate set and the sum is basis independent.
    e1 = np.array([[1.0, 0, 0], [0, -1.0, 0], [0, 0, 0]])
    e2 = np.array([[0, 1.0, 0], [1.0, 0, 0], [0, 0, 0]])
    c, s_ = math.cos(0.7), math.sin(0.7)
    a = stick_spectrum(analytic_modeset([e1, e2], [800.0, 800.0]), quantity="activity")
    b = stick_spectrum(
        analytic_modeset([c * e1 + s_ * e2, -s_ * e1 + c * e2], [800.0, 800.0]), quantity="activity"
    )
    assert a.n_bands == 1 and a.mode_sets[0] == (0, 1)
    # Each member has a = 0 and γ² = 3 (e1: ½(4 + 1 + 1); e2: 3·1²):
    # VV = 2·4γ² = 24, VH = 2·3γ² = 18.
    np.testing.assert_allclose(a.heights[0], [24.0, 18.0], rtol=1e-12)
    np.testing.assert_allclose(b.heights, a.heights, rtol=1e-12)


def test_two_region_scaling_and_published_lookup():
    # Definition of the two-region scale; published factors as in
    # ../shared/reference/scale-factors.md, Table 1: B3LYP/6-31G(d) MMR07 0.9613 (the default
    # source), SR96 0.9614; B97-D/6-31G(d) is among its gaps.
    m = analytic_modeset([POLARIZED, TRACELESS], [1000.0, 3100.0])
    s = stick_spectrum(m, scale=FrequencyScale(0.98, 0.955, 2500.0))
    np.testing.assert_allclose(s.positions_cm1, [980.0, 3100.0 * 0.955], rtol=1e-12)
    assert lookup_factor("B3LYP/6-31G*").factor == pytest.approx(0.9613)
    assert lookup_factor("b3-lyp/6-31G(d)", source="SR96").factor == pytest.approx(0.9614)
    with pytest.raises(VibrapolError, match="no published scale factor"):
        lookup_factor("B97-D/6-31G*")


def test_imaginary_modes_are_left_out_with_a_warning():
    m = analytic_modeset([POLARIZED, TRACELESS], [-150.0, 1000.0])
    with pytest.warns(AccuracyWarning, match="imaginary"):
        s = stick_spectrum(m)
    assert s.n_bands == 1 and s.positions_cm1[0] == pytest.approx(1000.0)


def test_laser_too_red_for_the_band_is_an_error():
    # A 10 µm line (1000 cm⁻¹) cannot produce a Stokes line at 2500 cm⁻¹.
    with pytest.raises(VibrapolError, match="cannot excite"):
        stick_spectrum(two_bands(), quantity="intensity", laser_nm=10000.0)


def test_unknown_channel_and_quantity_are_refused():
    with pytest.raises(VibrapolError, match="unknown channel"):
        stick_spectrum(two_bands(), channels=["xy"])
    with pytest.raises(VibrapolError, match="unknown quantity"):
        stick_spectrum(two_bands(), quantity="brightness")


def test_angle_channels_reproduce_named_ones():
    # p0a0 = VV, p0a90 = VH, p90a90 = HH by the definition e = cos θ V + sin θ H.
    s = stick_spectrum(two_bands(), channels=["p0a0", "p0a90", "p90a90", "hh"], quantity="activity")
    np.testing.assert_allclose(s.channel("p0a0"), s.channel("vv"), rtol=1e-12)
    np.testing.assert_allclose(s.channel("p0a90"), s.channel("vh"), rtol=1e-12)
    np.testing.assert_allclose(s.channel("p90a90"), s.channel("hh"), rtol=1e-12)


def test_csv_starts_with_shift_vv_vh_and_json_is_strict():
    s = stick_spectrum(two_bands(), channels=["nv"], quantity="activity")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        g = broaden(s, LineShape("lorentzian", 8.0), range_cm1=(500.0, 3000.0), step_cm1=1.0)
    lines = [x for x in grid_csv(g).splitlines() if not x.startswith("#")]
    assert lines[0] == "shift_cm1,vv,vh,nv"
    assert len(lines) == 1 + 2501  # 500..3000 inclusive, step 1
    stick_lines = [x for x in sticks_csv(s).splitlines() if not x.startswith("#")]
    assert stick_lines[0].startswith("shift_cm1,harmonic_cm1,modes,irrep,rho_linear")
    assert '"fwhm_cm1": 8.0' in grid_json(g)


def test_coarse_grid_is_warned():
    s = stick_spectrum(two_bands())
    with pytest.warns(AccuracyWarning, match="coarse"):
        broaden(s, LineShape("gaussian", 2.0), range_cm1=(500.0, 3000.0), step_cm1=2.0)


def test_near_zero_band_is_warned_for_intensities():
    # n̄ + 1 ≈ kT/(hcν̃) + ½ = 41.9 at 5 cm⁻¹, 298 K (Bose–Einstein): a residual mode would
    # dominate an intensity spectrum, so it is flagged; activities are not affected.
    m = analytic_modeset([POLARIZED, TRACELESS], [5.0, 1000.0])
    with pytest.warns(AccuracyWarning, match="below 10 cm-1"):
        s = stick_spectrum(m, quantity="intensity")
    assert thermal_factor(np.array([5.0]), 298.15)[0] == pytest.approx(41.9, abs=0.1)
    assert s.n_bands == 2
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        stick_spectrum(m, quantity="activity")


def test_restricted_method_names_find_the_published_factor():
    # "RHF" (as PySCF and several programs record it) is the closed-shell HF of the table.
    from vibrapol.spectrum.scaling import lookup_factor

    assert lookup_factor("RHF/6-31G*").factor == lookup_factor("HF/6-31G*").factor
