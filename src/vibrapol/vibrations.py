"""Harmonic analysis of a Cartesian Hessian and projection of tensors onto normal modes.

References
----------
.. [1] E. B. Wilson, J. C. Decius and P. C. Cross, *Molecular Vibrations*, McGraw-Hill (1955),
   ch. 2 (mass-weighted coordinates, normal modes).
.. [2] W. H. Miller, N. C. Handy and J. E. Adams, J. Chem. Phys. 72, 99 (1980) (projection of
   the overall translations and rotations out of the Hessian).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.errors import ShapeError
from vibrapol.modeset import MAX_ABS_VALUE
from vibrapol.units import hessian_eigenvalue_to_cm1

#: A molecule is treated as linear when its smallest principal moment of inertia is below this
#: fraction of the largest.
LINEAR_INERTIA_RATIO = 1e-6


@dataclass(frozen=True, eq=False)
class HarmonicModes:
    """Result of :func:`harmonic_analysis`.

    Attributes
    ----------
    freqs_cm1 : ndarray, shape (n,)
        Wavenumbers, ascending; imaginary ones negative.
    modes : ndarray, shape (n, 3N)
        Mass-weighted orthonormal eigenvectors L (rows).
    reduced_masses_da : ndarray, shape (n,)
        μ_k = 1 / Σ_i L_ki² / m_i, in Da.
    force_constants_mdyn_ang : ndarray, shape (n,)
        k = 4π²c²ν̃²μ in mdyn Å⁻¹ (signed like the frequency).
    linear : bool
        Whether the molecule was treated as linear (3N−5 modes).
    """

    freqs_cm1: np.ndarray
    modes: np.ndarray
    reduced_masses_da: np.ndarray
    force_constants_mdyn_ang: np.ndarray
    linear: bool


def is_linear(coordinates_ang: np.ndarray, masses_da: np.ndarray) -> bool:
    """True for a linear molecule (or a single atom), from its principal moments of inertia."""
    com = masses_da @ coordinates_ang / masses_da.sum()
    r = coordinates_ang - com
    inertia = np.einsum("i,ij,ik->jk", masses_da, r, r)
    inertia = np.trace(inertia) * np.eye(3) - inertia
    moments = np.linalg.eigvalsh(inertia)
    return bool(moments[-1] <= 0 or moments[0] < LINEAR_INERTIA_RATIO * moments[-1])


def require_finite(name: str, values: np.ndarray) -> None:
    """Raise :class:`ShapeError` unless every value is finite and at most ``MAX_ABS_VALUE``.

    LAPACK's singular-value and eigenvalue drivers can loop without end on infinite entries
    (found by fuzzing a Gaussian reader: a mutated coordinate of 1.7e308 made a 3 × 3 matrix
    product infinite and ``numpy.linalg.svd`` never returned), so numbers read from files are
    checked before they reach them.
    """
    v = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(v)):
        raise ShapeError(f"{name} contains NaN or infinite values")
    if v.size and float(np.max(np.abs(v))) > MAX_ABS_VALUE:
        raise ShapeError(
            f"{name} holds {float(np.max(np.abs(v))):.3g}, beyond the largest accepted "
            f"magnitude ({MAX_ABS_VALUE:g}); the file is damaged or in other units"
        )


def rigid_body_vectors(coordinates_ang: np.ndarray, masses_da: np.ndarray) -> np.ndarray:
    """Orthonormal mass-weighted vectors of overall translation and rotation.

    Returns
    -------
    ndarray, shape (6, 3N) or (5, 3N) for a linear molecule (3 for a single atom).
    """
    n = len(masses_da)
    require_finite("coordinates", coordinates_ang)
    require_finite("masses", masses_da)
    sqrt_m = np.sqrt(masses_da)
    com = masses_da @ coordinates_ang / masses_da.sum()
    r = coordinates_ang - com
    vectors = []
    for axis in np.eye(3):
        vectors.append((sqrt_m[:, None] * axis[None, :]).ravel())
    for axis in np.eye(3):
        vectors.append((sqrt_m[:, None] * np.cross(axis, r)).ravel())
    basis = np.array(vectors).T  # (3N, 6)
    u, s, _ = np.linalg.svd(basis, full_matrices=False)
    rank = int(np.sum(s > 1e-8 * s[0]))
    expected = 3 if n == 1 else (5 if is_linear(coordinates_ang, masses_da) else 6)
    rank = min(rank, expected)
    return u[:, :rank].T


def harmonic_analysis(
    hessian_hartree_bohr2: np.ndarray,
    masses_da: np.ndarray,
    coordinates_ang: np.ndarray,
    *,
    project: bool = True,
) -> HarmonicModes:
    """Normal modes and harmonic wavenumbers of a Cartesian Hessian.

    Parameters
    ----------
    hessian_hartree_bohr2 : ndarray, shape (3N, 3N) or (N, 3, N, 3)
        Second derivatives of the energy in hartree bohr⁻², atom-major order.
    masses_da : ndarray, shape (N,)
    coordinates_ang : ndarray, shape (N, 3)
    project : bool
        Remove overall translations and rotations exactly by diagonalising the Hessian in the
        complement of the rigid-body space [2]_ (3N−6 modes, 3N−5 for linear molecules).  When
        False, all 3N eigenvectors are returned.

    Returns
    -------
    HarmonicModes

    References
    ----------
    .. [1] Wilson, Decius and Cross, *Molecular Vibrations* (1955), ch. 2.
    .. [2] Miller, Handy and Adams, J. Chem. Phys. 72, 99 (1980).
    """
    masses = np.asarray(masses_da, dtype=float)
    coords = np.asarray(coordinates_ang, dtype=float)
    n = masses.shape[0]
    h = np.asarray(hessian_hartree_bohr2, dtype=float)
    if h.shape == (n, 3, n, 3):
        h = h.reshape(3 * n, 3 * n)
    if h.shape != (3 * n, 3 * n):
        raise ShapeError(
            f"Hessian for {n} atoms should be a ({3 * n}, {3 * n}) array, got {h.shape}"
        )
    if coords.shape != (n, 3):
        raise ShapeError(f"coordinates should be an ({n}, 3) array, got {coords.shape}")
    require_finite("Hessian", h)
    h = 0.5 * (h + h.T)
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(masses), 3)
    hmw = h * inv_sqrt_m[:, None] * inv_sqrt_m[None, :]
    linear = n > 1 and is_linear(coords, masses)
    fixed = rigid_body_vectors(coords, masses) if project else np.zeros((0, 3 * n))
    return modes_in_complement(hmw, fixed, inv_sqrt_m, linear)


def modes_in_complement(
    hmw: np.ndarray, fixed: np.ndarray, inv_sqrt_m: np.ndarray, linear: bool
) -> HarmonicModes:
    """Harmonic modes of the mass-weighted Hessian ``hmw`` orthogonal to the rows of ``fixed``.

    ``fixed`` holds orthonormal mass-weighted directions to project out exactly (rigid-body
    motions, and a reaction-path direction); the Hessian is diagonalised in an orthonormal
    basis of their complement (Miller, Handy and Adams, J. Chem. Phys. 72, 99 (1980)).  With
    no rows, all eigenvectors are returned.  Signs follow :func:`canonical_signs`.
    """
    dim = hmw.shape[0]
    if fixed.shape[0]:
        q, _ = np.linalg.qr(np.hstack([fixed.T, np.eye(dim)]))
        internal = q[:, fixed.shape[0] : dim]
        eigvals, eigvecs = np.linalg.eigh(internal.T @ hmw @ internal)
        modes = (internal @ eigvecs).T
    else:
        eigvals, eigvecs = np.linalg.eigh(hmw)
        modes = eigvecs.T
    freqs = hessian_eigenvalue_to_cm1(eigvals)
    modes = canonical_signs(modes)
    reduced = 1.0 / np.sum(modes**2 * inv_sqrt_m[None, :] ** 2, axis=1)
    return HarmonicModes(
        freqs_cm1=freqs,
        modes=modes,
        reduced_masses_da=reduced,
        force_constants_mdyn_ang=force_constants_mdyn_ang(freqs, reduced),
        linear=linear,
    )


def hessian_from_modes(
    freqs_cm1: np.ndarray, modes: np.ndarray, masses_da: np.ndarray
) -> np.ndarray:
    """Cartesian Hessian H = M¹ᐟ² Lᵀ λ L M¹ᐟ² of a complete set of normal modes.

    The inverse of :func:`harmonic_analysis` with ``project=True``: at a stationary point the
    Hessian is zero along overall translations and rotations, so the vibrations alone give it
    in full [1]_.

    Parameters
    ----------
    freqs_cm1 : ndarray, shape (n,)
        Wavenumbers (imaginary ones negative).
    modes : ndarray, shape (n, 3N)
        Mass-weighted orthonormal eigenvectors L (rows), all 3N − 6 (3N − 5) vibrations.
    masses_da : ndarray, shape (N,)
        The masses the modes belong to.

    Returns
    -------
    ndarray, shape (3N, 3N)
        Cartesian Hessian in hartree bohr⁻², atom-major.

    References
    ----------
    .. [1] Wilson, Decius and Cross, *Molecular Vibrations* (1955), ch. 2.
    """
    from vibrapol.units import cm1_to_hessian_eigenvalue

    lam = cm1_to_hessian_eigenvalue(freqs_cm1)
    modes = np.asarray(modes, dtype=float)
    sqrt_m = np.repeat(np.sqrt(np.asarray(masses_da, dtype=float)), 3)
    h_mw = modes.T @ (lam[:, None] * modes)
    return sqrt_m[:, None] * h_mw * sqrt_m[None, :]


def force_constants_mdyn_ang(freqs_cm1: np.ndarray, reduced_masses_da: np.ndarray) -> np.ndarray:
    """K = 4π²c²ν̃²μ in mdyn Å⁻¹ (sign of the frequency kept)."""
    from vibrapol.units import C_CM_S, DALTON_KG

    nu = np.asarray(freqs_cm1, dtype=float)
    k_si = (2 * np.pi * C_CM_S * nu) ** 2 * np.asarray(reduced_masses_da) * DALTON_KG  # N/m
    return np.sign(nu) * k_si / 100.0


#: Components of a mode within this fraction of its largest magnitude count as equally large
#: for :func:`canonical_signs` (symmetry-equivalent atoms have equal components up to rounding).
SIGN_TIE_RTOL = 1e-6

#: How vibrapol fixes the sign of the modes it computes; recorded in engine provenance.
SIGN_CONVENTION_NOTE = (
    "mode signs: the largest-magnitude component of each mass-weighted mode vector is positive "
    "(of components equal within 1e-6 relative, the first in atom order, x y z); signs of "
    "modes printed by a program are kept"
)


def canonical_signs(modes: np.ndarray) -> np.ndarray:
    """Fix the arbitrary sign of each mode (row) so that identical runs give identical vectors.

    Convention: the component of largest magnitude is positive.  Components equal to it within
    :data:`SIGN_TIE_RTOL` (relative) are tied — symmetry-equivalent atoms move by the same
    amount, and rounding alone would otherwise decide between them from run to run — and the
    first of them in the order of the coordinates (atom 1 x, y, z, atom 2 x, …) decides.  A
    mode's sign carries no physics: every Raman quantity is quadratic in it.

    Within a set of degenerate modes the vectors themselves (not only their signs) are an
    arbitrary orthonormal choice; only their sum of squares is reproducible.
    """
    modes = np.array(modes, dtype=float)
    if modes.size == 0:
        return modes
    magnitude = np.abs(modes)
    largest = magnitude.max(axis=1, keepdims=True)
    tied = magnitude >= largest * (1.0 - SIGN_TIE_RTOL)
    idx = np.argmax(tied, axis=1)  # the first tied component of each row
    signs = np.sign(modes[np.arange(len(modes)), idx])
    signs[signs == 0] = 1.0
    return modes * signs[:, None]


def modes_from_displacements(displacements: np.ndarray, masses_da: np.ndarray) -> np.ndarray:
    """Mass-weighted orthonormal modes L from printed Cartesian displacements.

    Programs print Cartesian displacements d_k (any per-mode normalisation).  L_k ∝ √m · d_k,
    normalised to unit length.  For an exact harmonic analysis the result is orthonormal; printed
    values (rounded to a few decimals) are orthonormal only to print precision, so the rows are
    brought to the nearest orthonormal set (Löwdin, symmetric orthogonalisation).

    Parameters
    ----------
    displacements : ndarray, shape (n, 3N) or (n, N, 3)
    masses_da : ndarray, shape (N,)
    """
    masses = np.asarray(masses_da, dtype=float)
    d = np.asarray(displacements, dtype=float).reshape(len(displacements), -1)
    if d.shape[1] != 3 * masses.shape[0]:
        raise ShapeError(
            f"displacements should have 3N = {3 * masses.shape[0]} columns, got {d.shape[1]}"
        )
    require_finite("normal-mode displacements", d)
    require_finite("masses", masses)
    weighted = d * np.repeat(np.sqrt(masses), 3)[None, :]
    norms = np.linalg.norm(weighted, axis=1, keepdims=True)
    if np.any(norms == 0):
        raise ShapeError("a printed normal mode has all-zero displacements")
    weighted /= norms
    u, _, vt = np.linalg.svd(weighted, full_matrices=False)
    return u @ vt


def project_dalpha(dalpha_dx: np.ndarray, modes: np.ndarray, masses_da: np.ndarray) -> np.ndarray:
    """Normal-coordinate derivatives ∂α/∂Q_k = Σ_i L_ki m_i⁻¹ᐟ² ∂α/∂x_i.

    Parameters
    ----------
    dalpha_dx : ndarray, shape (3N, 3, 3), Å²
    modes : ndarray, shape (n, 3N), mass-weighted orthonormal
    masses_da : ndarray, shape (N,)

    Returns
    -------
    ndarray, shape (n, 3, 3), Å² Da⁻¹ᐟ²
    """
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(np.asarray(masses_da, dtype=float)), 3)
    return np.einsum("ki,i,iab->kab", np.asarray(modes), inv_sqrt_m, np.asarray(dalpha_dx))
