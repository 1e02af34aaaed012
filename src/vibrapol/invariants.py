"""Raman invariants, activities, depolarization ratios and orientation-averaged intensities.

Pure functions on arrays, mode axis first.  A tensor argument is ∂α/∂Q of shape (n, 3, 3) (or a
single (3, 3)); invariants a² and γ² are in the squared unit of the tensor (Å⁴ Da⁻¹ for ∂α/∂Q in
Å² Da⁻¹ᐟ²).  The tensors are real and symmetric (non-resonant scattering); an antisymmetric part,
if present, is ignored.

References
----------
.. [Long] D. A. Long, *The Raman Effect*, Wiley (2002), ch. 5: invariants a and γ, isotropic
   averages of products of tensor components, depolarization ratios.
.. [Pol] P. L. Polavarapu, J. Phys. Chem. 94, 8106 (1990): activity S = 45a² + 7γ² from ab
   initio derivatives.
.. [Placzek] G. Placzek, in *Handbuch der Radiologie* VI-2, 205 (1934): polarizability theory.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from vibrapol.errors import OptionError

#: Modes whose activity is below this fraction of the largest activity in the set are treated
#: as Raman-inactive: their depolarization ratio is undefined (NaN).
INACTIVE_FRACTION = 1e-6

#: Default tolerance for grouping modes into degenerate sets by frequency alone.
DEGENERACY_TOL_CM1 = 1.0


def _sym(tensors: np.ndarray) -> np.ndarray:
    t = np.asarray(tensors, dtype=float)
    return 0.5 * (t + np.swapaxes(t, -1, -2))


def mean_polarizability(tensors: np.ndarray) -> np.ndarray:
    """Isotropic part a = (t_xx + t_yy + t_zz)/3 of each tensor [Long]_ (eq. 5.5.xx)."""
    return np.trace(np.asarray(tensors, dtype=float), axis1=-2, axis2=-1) / 3.0


def anisotropy_squared(tensors: np.ndarray) -> np.ndarray:
    """Anisotropy γ² of each symmetric tensor [Long]_.

    γ² = ½[(t_xx−t_yy)² + (t_yy−t_zz)² + (t_zz−t_xx)²] + 3(t_xy² + t_yz² + t_zx²),
    computed as (3/2)·|t − a·1|² (Frobenius norm of the traceless part), which is the same
    quantity and is manifestly rotation-invariant.
    """
    t = _sym(tensors)
    a = mean_polarizability(t)
    traceless = t - a[..., None, None] * np.eye(3)
    return 1.5 * np.sum(traceless**2, axis=(-2, -1))


def tensor_invariants(tensors: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(a², γ²) of each tensor; see :func:`mean_polarizability` and :func:`anisotropy_squared`."""
    a = mean_polarizability(tensors)
    return a**2, anisotropy_squared(tensors)


def activity(a2: np.ndarray, gamma2: np.ndarray) -> np.ndarray:
    """Raman scattering activity S = 45a² + 7γ² [Pol]_."""
    return 45.0 * np.asarray(a2) + 7.0 * np.asarray(gamma2)


def _ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    num, den = np.broadcast_arrays(np.asarray(num, dtype=float), np.asarray(den, dtype=float))
    out = np.full(num.shape, np.nan)
    np.divide(num, den, out=out, where=den > 0)
    return out


def rho_linear(a2: np.ndarray, gamma2: np.ndarray) -> np.ndarray:
    """Depolarization ratio for linearly polarized incident light, 90° scattering [Long]_.

    ρ_l = 3γ² / (45a² + 4γ²), between 0 (a ≠ 0, γ = 0) and 3/4 (a = 0).  NaN where both
    invariants vanish (no scattering: the ratio is undefined).
    """
    g = np.asarray(gamma2, dtype=float)
    return _ratio(3.0 * g, 45.0 * np.asarray(a2) + 4.0 * g)


def rho_natural(a2: np.ndarray, gamma2: np.ndarray) -> np.ndarray:
    """Depolarization ratio for natural (unpolarized) incident light, 90° scattering [Long]_.

    ρ_n = 6γ² / (45a² + 7γ²), between 0 and 6/7; NaN where both invariants vanish.
    """
    g = np.asarray(gamma2, dtype=float)
    return _ratio(6.0 * g, 45.0 * np.asarray(a2) + 7.0 * g)


def rho_natural_from_linear(rho_lin: ArrayLike) -> np.ndarray:
    """ρ_n = 2ρ_l / (1 + ρ_l), which follows from the two definitions above [Long]_."""
    r = np.asarray(rho_lin, dtype=float)
    return 2.0 * r / (1.0 + r)


def invariants_from_activity(
    activity_: np.ndarray, rho_lin: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Recover (a², γ²) from a printed activity S and linear depolarization ratio ρ_l.

    From S = 45a² + 7γ² and ρ_l = 3γ²/(45a² + 4γ²): γ² = Sρ_l / (3(1 + ρ_l)), 45a² = S − 7γ².
    A ρ_l printed as NaN (inactive mode) gives a² = γ² = 0 when S = 0.

    References
    ----------
    Follows algebraically from the definitions in [Long]_ and [Pol]_.
    """
    s = np.asarray(activity_, dtype=float)
    r = np.nan_to_num(np.asarray(rho_lin, dtype=float), nan=0.0)
    gamma2 = s * r / (3.0 * (1.0 + r))
    # 45a² = S − 7γ² = S(3 − 4ρ)/(3(1 + ρ)): written this way a² is exactly 0 at ρ = 3/4.
    a2 = s * (3.0 - 4.0 * r) / (135.0 * (1.0 + r))
    return np.clip(a2, 0.0, None), gamma2


def polarized_intensity(
    a2: np.ndarray, gamma2: np.ndarray, e_incident: ArrayLike, e_scattered: ArrayLike
) -> np.ndarray:
    """Orientation-averaged ⟨|e_s·α′·e_i|²⟩ for real unit polarization vectors [Long]_.

    ⟨|e_s·α′·e_i|²⟩ = a²c² + γ²(3 + c²)/45 with c = e_i·e_s.  For e_s = e_i this is
    (45a² + 4γ²)/45 (parallel, VV); for e_s ⊥ e_i it is γ²/15 = 3γ²/45 (crossed, VH).  An
    isotropic sample gives the same result for 90° and 180° scattering with these vectors.
    """
    ei = np.asarray(e_incident, dtype=float)
    es = np.asarray(e_scattered, dtype=float)
    c = float(np.dot(ei / np.linalg.norm(ei), es / np.linalg.norm(es)))
    return np.asarray(a2) * c**2 + np.asarray(gamma2) * (3.0 + c**2) / 45.0


def intensity_at_angle(a2: np.ndarray, gamma2: np.ndarray, angle_deg: float) -> np.ndarray:
    """⟨|e_s·α′·e_i|²⟩ with the analyzer at ``angle_deg`` from the incident polarization."""
    theta = np.deg2rad(angle_deg)
    return polarized_intensity(a2, gamma2, [1.0, 0.0, 0.0], [np.cos(theta), np.sin(theta), 0.0])


def intensity_parallel(a2: np.ndarray, gamma2: np.ndarray) -> np.ndarray:
    """VV intensity per unit of 1/45: 45a² + 4γ² [Long]_."""
    return 45.0 * np.asarray(a2) + 4.0 * np.asarray(gamma2)


def intensity_crossed(a2: np.ndarray, gamma2: np.ndarray) -> np.ndarray:
    """VH intensity per unit of 1/45: 3γ² [Long]_."""
    return 3.0 * np.asarray(gamma2)


def inactive_mask(activities: np.ndarray, fraction: float = INACTIVE_FRACTION) -> np.ndarray:
    """True for modes whose activity is negligible (below ``fraction`` of the largest)."""
    s = np.asarray(activities, dtype=float)
    if s.size == 0:
        return np.zeros(0, dtype=bool)
    scale = np.max(np.abs(s))
    return np.abs(s) <= fraction * scale if scale > 0 else np.ones(s.shape, dtype=bool)


def check_degeneracy_tol(tol_cm1: float) -> float:
    """The degeneracy tolerance as a float.

    Raises
    ------
    OptionError
        When it is negative, NaN or infinite.
    """
    tol = float(tol_cm1)
    if not (np.isfinite(tol) and tol >= 0):
        raise OptionError(f"degeneracy tolerance must be ≥ 0 cm⁻¹, got {tol_cm1}")
    return tol


def degenerate_sets(
    freqs_cm1: np.ndarray, tol_cm1: float = DEGENERACY_TOL_CM1
) -> list[tuple[int, ...]]:
    """Group modes whose wavenumbers lie within ``tol_cm1`` of their neighbour.

    Modes are sorted by frequency and a new set starts wherever the gap to the previous mode
    exceeds ``tol_cm1``.  This is the fallback when the symmetry of the molecule is not known:
    it can merge accidental near-degeneracies and, with small tolerances, split sets whose
    members a numerical method left slightly apart (engine-notes: B3LYP grids split benzene's
    E modes by up to 0.7 cm⁻¹).

    Returns
    -------
    list of tuple of int
        Mode indices of each set, in ascending frequency.
    """
    tol_cm1 = check_degeneracy_tol(tol_cm1)
    f = np.asarray(freqs_cm1, dtype=float)
    order = np.argsort(f, kind="stable")
    sets: list[list[int]] = []
    for i in order:
        if sets and f[i] - f[sets[-1][-1]] <= tol_cm1:
            sets[-1].append(int(i))
        else:
            sets.append([int(i)])
    return [tuple(s) for s in sets]


def sum_over_sets(values: np.ndarray, sets: list[tuple[int, ...]]) -> np.ndarray:
    """Sum a per-mode quantity (a², γ², an intensity) over each degenerate set.

    The invariants of one member of a degenerate set depend on the arbitrary basis chosen
    inside the set; their sum over the set does not [Long]_.
    """
    v = np.asarray(values, dtype=float)
    return np.array([v[list(s)].sum(axis=0) for s in sets])
