"""Boltzmann-weighted conformer mixtures and spectra of sources without tensors."""

import math

import numpy as np
import pytest
from scipy import constants as C

from spectrum_helpers import analytic_modeset
from vibrapol.errors import VibrapolError
from vibrapol.modeset import ModeSet
from vibrapol.spectrum import orientation as o
from vibrapol.spectrum import stick_spectrum
from vibrapol.spectrum.conformers import (
    boltzmann_weights,
    conformer_spectrum,
    mixture,
    source_energies_kjmol,
    zero_point_kjmol,
)

A = np.diag([1.0, 2.0, 3.0])
B = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])


def test_boltzmann_weights_follow_the_distribution():
    # Boltzmann distribution (D. A. McQuarrie, Statistical Mechanics, 1976, ch. 2): ΔE = RT ln 2
    # halves the population; R from scipy.constants (N_A·k).
    t = 250.0
    de = C.N_A * C.k * t * math.log(2.0) / 1000.0  # kJ/mol
    np.testing.assert_allclose(boltzmann_weights([0.0, de], t), [2 / 3, 1 / 3], rtol=1e-12)
    # A degeneracy of 2 doubles the weight: g = (1, 2), equal energies → 1/3, 2/3.
    np.testing.assert_allclose(boltzmann_weights([5.0, 5.0], t, [1, 2]), [1 / 3, 2 / 3], rtol=1e-12)
    # At 0 K only the lowest conformer is populated.
    np.testing.assert_allclose(boltzmann_weights([1.0, 0.0, 3.0], 0.0), [0.0, 1.0, 0.0])


def test_mixture_heights_are_weighted_sums():
    m1 = analytic_modeset([A], [1000.0], energy_hartree=-100.0)
    m2 = analytic_modeset([B], [1200.0], energy_hartree=-100.0 + 1.0 / 2625.499639)  # +1 kJ/mol
    mix = conformer_spectrum([m1, m2], temperature_k=300.0, quantity="activity", labels=["a", "b"])
    w = boltzmann_weights([0.0, 1.0], 300.0)
    np.testing.assert_allclose(mix.weights, w, rtol=1e-6)  # hartree→kJ/mol from CODATA vs 2625.4996
    s1 = stick_spectrum(m1, quantity="activity")
    s2 = stick_spectrum(m2, quantity="activity")
    want = np.vstack([s1.heights * w[0], s2.heights * w[1]])
    np.testing.assert_allclose(mix.heights, want, rtol=1e-6)
    assert mix.components == ("a", "b") and list(mix.component) == [0, 1]


def test_source_energies_and_zero_point():
    # ZPE = ½ hc Σν̃ (harmonic oscillator); 1000 + 2000 cm⁻¹ → 1500 cm⁻¹ = 17.94 kJ/mol
    # (1 cm⁻¹ = 0.0119627 kJ/mol, CODATA via scipy.constants).
    m1 = analytic_modeset([A, B], [1000.0, 2000.0], energy_hartree=-1.0)
    m2 = analytic_modeset([A], [500.0], energy_hartree=-1.0)
    assert zero_point_kjmol(m1) == pytest.approx(1500.0 * C.h * C.c * 100 * C.N_A / 1000, rel=1e-12)
    e = source_energies_kjmol([m1, m2], include_zero_point=True)
    assert e[1] == 0.0 and e[0] == pytest.approx(1250.0 * C.h * C.c * 100 * C.N_A / 1000, rel=1e-9)
    with pytest.raises(VibrapolError, match="no electronic energy"):
        source_energies_kjmol([analytic_modeset([A], [500.0])])


def test_mixture_refuses_mismatched_conditions():
    s1 = stick_spectrum(analytic_modeset([A], [1000.0]), laser_nm=532.0)
    s2 = stick_spectrum(analytic_modeset([A], [1000.0]), laser_nm=785.0)
    with pytest.raises(VibrapolError, match="share channels and conditions"):
        mixture([s1, s2], [0.5, 0.5])


def test_source_with_only_activities_gives_isotropic_spectra_but_not_oriented():
    # A source that printed only S and ρ (a², γ² given): VV = 45a² + 4γ² (Long 2002).
    m = ModeSet(
        atomic_numbers=[6, 6],
        coordinates_ang=[[0, 0, 0], [1.5, 0, 0]],
        freqs_cm1=[900.0],
        modes=np.eye(6)[:1],
        a2=[4.0],
        gamma2=[3.0],
    )
    # symmetry=False: the single "mode" (one atom along x) is not a vibration of D∞h C2, so
    # symmetry labelling would first average it over the group.
    sticks = stick_spectrum(m, quantity="activity", symmetry=False)
    assert sticks.channel("vv")[0] == pytest.approx(192.0)
    with pytest.raises(VibrapolError, match="oriented samples need polarizability derivatives"):
        stick_spectrum(m, orientation=o.isotropic())
