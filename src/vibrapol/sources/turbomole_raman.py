"""Relative Raman invariants from TURBOMOLE's 90° cross-section rows (see :mod:`.turbomole`)."""

from __future__ import annotations

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.sources._common import check_printed, invariants_from_printed
from vibrapol.units import HC_OVER_K_CM_K


def relative_invariants(
    freqs_cm1: np.ndarray,
    rows: dict[str, np.ndarray],
    laser_cm1: float,
    temperature_k: float,
    where: str,
) -> tuple[np.ndarray, np.ndarray, str]:
    """Relative a², γ² of the vibrations from the printed Raman rows, and the normalisation.

    The printed rows are differential cross sections for 90° scattering (D. A. Long, *The Raman
    Effect*, 2002, ch. 5, for the orientation averages; P. L. Polavarapu, J. Phys. Chem. 94,
    8106 (1990), for the cross section of a harmonic Stokes line):

        dσ/dΩ = K · g_k · ⟨|e_s·α′_k·e_i|²⟩,   g_k = (ν₀ − ν_k)⁴ / (ν_k [1 − exp(−hcν_k/kT)])

    with K a constant common to all modes and the averages 45⟨|e_s·α′·e_i|²⟩ = 45a² + 4γ²
    (e_s ∥ e_i) and 3γ² (e_s ⊥ e_i).  At 90°, light polarized perpendicular to the scattering
    plane ("ort") gives (ort,ort) ∝ 45a² + 4γ² and, with no analyser, (ort,unpol) ∝ 45a² + 7γ²
    = S, the Raman activity; light polarized in the plane ("par") is perpendicular to every
    scattered polarization, so (par,par) ∝ 3γ²; the ratio (par,par)/(ort,ort) is
    ρ = 3γ²/(45a² + 4γ²), the ratio for linearly polarized light.  A cross section carries the
    fourth power of the scattered wavenumber by definition (energy-based, design.md rule 4);
    the 1/ν_k and the Bose factor come from the harmonic transition moment at temperature T.

    Inverting: S_k ∝ P_k / g_k with P_k the printed (ort,unpol) percentage; ρ_k as printed;
    then γ² = Sρ/(3(1 + ρ)) and 45a² = S − 7γ² (:func:`invariants_from_printed`).  The
    result is scaled so that the largest activity is 100: absolute values (Å⁴/amu) cannot be
    recovered from percentages.  Imaginary modes are evaluated at |ν|.

    Returns
    -------
    a2, gamma2 : ndarray
        Relative invariants (the most active mode has 45a² + 7γ² = 100).
    normalisation : str
        How the printed rows were found to be normalised (a description for the provenance).

    Warns
    -----
    PrintedValueMismatch
        When (par,par) and (ort,ort) recomputed from the result disagree with the printed rows
        beyond print precision under both normalisations tried (one common maximum, or each row
        its own), or when ρ from them disagrees with the printed ratio.
    """
    nu = np.abs(freqs_cm1)
    g = (laser_cm1 - nu) ** 4 / nu
    if temperature_k > 0:
        g = g / -np.expm1(-HC_OVER_K_CM_K * nu / temperature_k)
    rho = rows["depol. ratio"]
    if np.any(rho > 0.75 + 5e-3):
        k = int(np.argmax(rho))
        raise InputFormatError(
            f"{where}: TURBOMOLE depol. ratio {rho[k]:.4f} of vibration {k + 1} is above 3/4, so "
            "it is not the ratio for linearly polarized light this reader assumes"
        )
    activity = rows["(ort,unpol)"] / g
    activity = 100.0 * activity / activity.max()
    a2, gamma2 = invariants_from_printed(activity, rho)
    a2, gamma2 = np.nan_to_num(a2), np.nan_to_num(gamma2)
    par, ort = g * 3 * gamma2, g * (45 * a2 + 4 * gamma2)
    unpol = g * (45 * a2 + 7 * gamma2)
    common = [100 * x / unpol.max() for x in (par, ort)]
    own = [100 * x / x.max() if x.max() > 0 else x for x in (par, ort)]
    printed = [rows["(par,par)"], rows["(ort,ort)"]]

    def fits(model: list[np.ndarray]) -> bool:
        return all(
            np.all(np.abs(m - p) <= 0.006 + 1e-3 * p) for m, p in zip(model, printed, strict=True)
        )

    if fits(common):
        normalisation = "all three rows in % of the largest (ort,unpol) value"
    elif fits(own):
        normalisation = "each row in % of its own largest value"
    else:
        normalisation = "normalisation of the (par,par) and (ort,ort) rows not recognised"
        check_printed(
            "(par,par) row",
            common[0],
            printed[0],
            where=where,
            atol=0.006,
            rtol=1e-3,
            origin="recomputed from (ort,unpol) and the depol. ratio",
        )
    if normalisation.startswith("all three"):
        # ρ from the two printed rows, where both are well above their print precision (0.005)
        pp, oo = rows["(par,par)"], rows["(ort,ort)"]
        strong = (oo >= 1.0) & (pp >= 0.1)
        safe_pp, safe_oo = np.where(strong, pp, 1.0), np.where(strong, oo, 1.0)
        check_printed(
            "depolarization ratio",
            np.where(strong, safe_pp / safe_oo, np.nan),
            np.where(strong, rho, np.nan),
            where=where,
            atol=5e-5 + rho * (0.005 / safe_pp + 0.005 / safe_oo),
            origin="from the (par,par)/(ort,ort) rows",
            reference="the printed depol. ratio",
        )
    return a2, gamma2, normalisation
