"""Infrared intensities: the unit conversion shared by the readers.

vibrapol keeps IR intensities in km mol⁻¹ (``ModeSet.ir_intensity_km_mol``).  Some programs
print the squared dipole derivative with respect to the mass-weighted normal coordinate
instead, |∂μ/∂Q|² in D² amu⁻¹ Å⁻² (the GAMESS family, and DALTON beside its km/mol column).
In the double-harmonic approximation the integrated absorption coefficient of a fundamental is

    A = N_A / (12 ε₀ c²) · |∂μ/∂Q|²        (SI: m mol⁻¹)

(the Gaussian-unit form N_A π / (3 c²) |∂μ/∂Q|² with 1/(4π ε₀) written out), which gives
1 D² amu⁻¹ Å⁻² = 42.2561 km mol⁻¹ with CODATA constants.

References
----------
.. [1] E. B. Wilson, J. C. Decius, P. C. Cross, *Molecular Vibrations*, McGraw-Hill, 1955,
   ch. 7 (intensities of infrared bands).
.. [2] W. B. Person, G. Zerbi (eds.), *Vibrational Intensities in Infrared and Raman
   Spectroscopy*, Elsevier, 1982, ch. 2.
"""

from __future__ import annotations

from scipy import constants as _c

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
