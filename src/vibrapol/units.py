"""Physical constants and unit conversions.

All constants come from :mod:`scipy.constants` (the CODATA release is in :data:`CODATA_VERSION`
and is recorded in every output).  Inside vibrapol lengths are in Å, masses in Da (unified
atomic mass units), wavenumbers in cm⁻¹ and polarizabilities in Å³; readers convert once at the
boundary with the factors below.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike
from scipy import constants as _c
from scipy.constants import _codata

#: CODATA release of the constants in use (e.g. ``"CODATA 2022"``).
CODATA_VERSION: str = str(_codata._current_codata)  # type: ignore[attr-defined]  # private, unstubbed

#: Bohr radius in Å.
BOHR_ANG: float = _c.physical_constants["Bohr radius"][0] * 1e10
#: Hartree energy in J.
HARTREE_J: float = _c.physical_constants["Hartree energy"][0]
#: Atomic mass constant (1 Da) in kg.
DALTON_KG: float = _c.physical_constants["atomic mass constant"][0]
#: Electron mass in Da.
ELECTRON_MASS_DA: float = _c.m_e / DALTON_KG
#: Speed of light in cm s⁻¹.
C_CM_S: float = _c.c * 100.0
#: Planck constant in J s.
PLANCK_J_S: float = _c.h
#: Boltzmann constant in J K⁻¹.
BOLTZMANN_J_K: float = _c.k
#: Second radiation constant hc/k in cm K (converts cm⁻¹ to K).
HC_OVER_K_CM_K: float = _c.h * C_CM_S / _c.k
#: Molar gas constant R = N_A k in kJ mol⁻¹ K⁻¹.
GAS_CONSTANT_KJ_MOL_K: float = _c.N_A * _c.k / 1000.0
#: Hartree energy per molecule → kJ mol⁻¹.
HARTREE_TO_KJ_MOL: float = HARTREE_J * _c.N_A / 1000.0
#: Wavenumber (cm⁻¹) per molecule → kJ mol⁻¹ (hc N_A).
CM1_TO_KJ_MOL: float = _c.h * C_CM_S * _c.N_A / 1000.0

#: bohr³ → Å³ (polarizability).
BOHR3_TO_ANG3: float = BOHR_ANG**3
#: bohr² → Å² (Cartesian polarizability derivative ∂α/∂x).
BOHR2_TO_ANG2: float = BOHR_ANG**2
#: hartree/bohr² → mdyn/Å (force constants); 1 mdyn/Å = 100 N/m.
HARTREE_BOHR2_TO_MDYN_ANG: float = HARTREE_J / (BOHR_ANG * 1e-10) ** 2 / 100.0
#: hartree/bohr² → eV/Å².
HARTREE_BOHR2_TO_EV_ANG2: float = HARTREE_J / _c.e / BOHR_ANG**2


def hessian_eigenvalue_to_cm1(eigenvalues_au: ArrayLike) -> np.ndarray:
    """Convert mass-weighted Hessian eigenvalues to signed wavenumbers.

    Parameters
    ----------
    eigenvalues_au : ndarray
        Eigenvalues of the mass-weighted Hessian in hartree bohr⁻² Da⁻¹.

    Returns
    -------
    ndarray
        ν̃ = sqrt(λ)/(2πc) in cm⁻¹; a negative eigenvalue gives a negative wavenumber (an
        imaginary frequency, by the package convention).
    """
    lam = np.asarray(eigenvalues_au, dtype=float)
    si = lam * HARTREE_J / ((BOHR_ANG * 1e-10) ** 2 * DALTON_KG)  # s⁻²
    return np.sign(si) * np.sqrt(np.abs(si)) / (2.0 * np.pi * C_CM_S)


def cm1_to_hessian_eigenvalue(freqs_cm1: ArrayLike) -> np.ndarray:
    """Inverse of :func:`hessian_eigenvalue_to_cm1` (signed), in hartree bohr⁻² Da⁻¹."""
    nu = np.asarray(freqs_cm1, dtype=float)
    omega2 = np.sign(nu) * (2.0 * np.pi * C_CM_S * nu) ** 2
    return omega2 * (BOHR_ANG * 1e-10) ** 2 * DALTON_KG / HARTREE_J


def wavelength_nm_to_cm1(wavelength_nm: float | np.ndarray) -> float | np.ndarray:
    """Vacuum wavelength in nm → absolute wavenumber in cm⁻¹ (1e7 / λ)."""
    return 1.0e7 / np.asarray(wavelength_nm, dtype=float)


# Infrared intensities are kept in km mol⁻¹ (``ModeSet.ir_intensity_km_mol``).  Some programs
# print |∂μ/∂Q|² in D² amu⁻¹ Å⁻² instead (the GAMESS family; DALTON beside its km/mol column),
# and the engine computes ∂μ/∂Q.  In the double-harmonic approximation the integrated absorption
# coefficient of a fundamental is A = N_A / (12 ε₀ c²) · |∂μ/∂Q|² (SI: m mol⁻¹), the
# Gaussian-unit N_A π / (3 c²) |∂μ/∂Q|² with 1/(4π ε₀) written out: 1 D² amu⁻¹ Å⁻² =
# 42.2561 km mol⁻¹ with CODATA constants.  References: E. B. Wilson, J. C. Decius,
# P. C. Cross, Molecular Vibrations (1955), ch. 7; W. B. Person, G. Zerbi (eds.), Vibrational
# Intensities in Infrared and Raman Spectroscopy (1982), ch. 2.

#: Debye in C m (10⁻²¹/c statC cm, the definition of the unit).
DEBYE_C_M: float = 1e-21 / _c.c

#: 1 D² amu⁻¹ Å⁻² (|∂μ/∂Q|²) → km mol⁻¹ (integrated IR absorption coefficient), ≈ 42.2561.
DEBYE2_PER_AMU_ANG2_TO_KM_MOL: float = (
    _c.N_A
    / (12.0 * _c.epsilon_0 * _c.c**2)
    * DEBYE_C_M**2
    / (_c.physical_constants["atomic mass constant"][0] * 1e-20)
    / 1000.0
)
