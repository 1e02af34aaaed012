"""What the two Gaussian readers share: frames, Gaussian's storage orders, and the ModeSet build.

Gaussian writes a frequency job twice: in the log (``gaussian_log``) and in the formatted
checkpoint (``gaussian_fchk``).  Both hold the Cartesian Hessian and, for ``Freq=Raman``, the
Cartesian polarizability derivatives with 7–9 significant digits, while the per-mode values
(frequencies, activities, depolarization ratios, displacements) are rounded for print.  So
vibrapol takes the modes from its own harmonic analysis of the Hessian
(:func:`vibrapol.vibrations.harmonic_analysis`), computes every Raman quantity from the
derivatives, and compares the results with the printed ones at print precision
(:func:`vibrapol.sources._common.check_printed`, which warns with
:class:`~vibrapol.errors.PrintedValueMismatch`).  Only when a file lacks the Hessian are the
printed displacements used, and only when it lacks the derivatives are a² and γ² recovered from
the printed activity and plane-polarized ratio
(:func:`vibrapol.invariants.invariants_from_activity`).

Printed values are compared per set of modes closer than
:data:`vibrapol.invariants.DEGENERACY_TOL_CM1`: inside a degenerate set the split of activity
between members depends on the basis each program happened to choose, the sum does not
(D. A. Long, *The Raman Effect*, Wiley 2002, ch. 5).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError, ShapeError
from vibrapol.modeset import Provenance
from vibrapol.vibrations import require_finite

#: Gaussian stores a symmetric 3×3 tensor as its lower triangle: xx, xy, yy, xz, yz, zz.
LOWER_TRIANGLE_INDEX = np.array([[0, 1, 3], [1, 2, 4], [3, 4, 5]])

#: Largest RMS difference (Å) accepted between two orientation tables of one geometry.
FRAME_MATCH_TOL_ANG = 1e-4


@dataclass(frozen=True)
class PrintPrecision:
    """How precisely a file gives its numbers; sets the tolerances of the printed checks.

    Attributes
    ----------
    hessian_eps : float
        Largest rounding error of one Hessian element, hartree bohr⁻².
    freq_atol_cm1, freq_rtol : float
        Half a unit of the last printed digit of the frequencies (absolute, relative).
    activity_atol, activity_rtol : float
        Same for the activities (Å⁴ amu⁻¹), plus an allowance for the rounding of the inputs.
    rho_atol : float
        Same for both depolarization ratios.
    """

    hessian_eps: float
    freq_atol_cm1: float
    freq_rtol: float
    activity_atol: float
    activity_rtol: float
    rho_atol: float


@dataclass(frozen=True, eq=False)
class PrintedModes:
    """Per-mode values as the program printed them (any may be absent).

    Attributes
    ----------
    freqs_cm1 : ndarray (n,)
    activity : ndarray (n,), optional
        Raman activity, Å⁴ amu⁻¹.
    rho_linear, rho_natural : ndarray (n,), optional
        Depolarization ratios for plane-polarized and for unpolarized incident light.
    ir_intensity : ndarray (n,), optional
        IR intensity, km mol⁻¹.
    displacements : ndarray (n, 3N), optional
        Cartesian displacements in the frame of the coordinates, any per-mode normalisation.
    """

    freqs_cm1: np.ndarray | None = None
    activity: np.ndarray | None = None
    rho_linear: np.ndarray | None = None
    rho_natural: np.ndarray | None = None
    displacements: np.ndarray | None = None
    ir_intensity: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class GaussianJob:
    """What a Gaussian reader found, in one Cartesian frame and in Gaussian's units.

    Attributes
    ----------
    atomic_numbers : ndarray (N,)
    coordinates_ang : ndarray (N, 3)
    masses_da : ndarray (N,), optional
    hessian_au : ndarray (3N, 3N), optional
        Cartesian Hessian, hartree bohr⁻², atom-major.
    dalpha_dx_au : ndarray (3N, 3, 3), optional
        ∂α/∂x in bohr² (a.u.).
    polarizability_au : ndarray (3, 3), optional
        Static polarizability, bohr³.
    energy_hartree : float, optional
    printed : PrintedModes
    precision : PrintPrecision
    provenance : Provenance
    gradient_au : ndarray (3N,), optional
        Cartesian energy gradient, hartree bohr⁻¹ (needed only for projected frequencies).
    projected : bool
        True when the route asked for ``Freq=Projected``: the printed modes are those of the
        Hessian with the reaction-path direction projected out.
    overflow : tuple of str
        Printed fields that overflowed (``****``), as "<quantity> of mode <k>".
    messages : tuple of str
        Gaussian's own lines about failures ("Error termination ..."), passed on as warnings.
    dipole_deriv_au : ndarray (3N, 3), optional
        ∂μ/∂x in atomic units (e), row per coordinate, columns μx, μy, μz.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    masses_da: np.ndarray | None
    hessian_au: np.ndarray | None
    dalpha_dx_au: np.ndarray | None
    polarizability_au: np.ndarray | None
    energy_hartree: float | None
    printed: PrintedModes
    precision: PrintPrecision
    provenance: Provenance
    gradient_au: np.ndarray | None = None
    projected: bool = False
    overflow: tuple[str, ...] = ()
    messages: tuple[str, ...] = ()
    dipole_deriv_au: np.ndarray | None = None


def program_version(text: str) -> tuple[str, str]:
    """("Gaussian 16", "A.03") from a build string like ``ES64L-G16RevA.03``; ("", "") if none."""
    match = re.search(r"G(\d\d)Rev([A-Z]\.\d+)", text)
    return (f"Gaussian {match.group(1)}", match.group(2)) if match else ("", "")


def tensors_from_lower_triangle(values: np.ndarray) -> np.ndarray:
    """Symmetric 3×3 tensors from Gaussian's (xx, xy, yy, xz, yz, zz) rows, shape (..., 3, 3)."""
    v = np.asarray(values, dtype=float)
    return v[..., LOWER_TRIANGLE_INDEX]


def square_from_lower_triangle(values: np.ndarray, dim: int, where: str) -> np.ndarray:
    """Full symmetric (dim, dim) matrix from its lower triangle stored row by row."""
    v = np.asarray(values, dtype=float)
    if v.size != dim * (dim + 1) // 2:
        raise InputFormatError(
            f"{where}: Hessian has {v.size} values, expected {dim * (dim + 1) // 2} for "
            f"{dim // 3} atoms (truncated file?)"
        )
    m = np.zeros((dim, dim))
    m[np.tril_indices(dim)] = v
    return m + np.tril(m, -1).T


def frame_rotation(from_ang: np.ndarray, to_ang: np.ndarray, where: str) -> np.ndarray:
    """Orthogonal matrix R with ``to ≈ R·from`` (about the centroids), by orthogonal Procrustes.

    Gaussian's standard orientation may be reached from the input orientation by a reflection as
    well as a rotation (it is for the divinylbenzene outputs), so R is any orthogonal matrix.
    Hessians, ∂α/∂x and α are true tensors and transform with R whatever its determinant.

    Raises
    ------
    InputFormatError
        If the two tables do not describe the same geometry.
    """
    try:
        require_finite("input orientation", from_ang)
        require_finite("standard orientation", to_ang)
    except ShapeError as exc:
        raise InputFormatError(f"{where}: {exc}") from None
    a = from_ang - from_ang.mean(axis=0)
    b = to_ang - to_ang.mean(axis=0)
    u, _, vt = np.linalg.svd(b.T @ a)
    rot = u @ vt
    rms = float(np.sqrt(np.mean(np.sum((a @ rot.T - b) ** 2, axis=1))))
    if rms > FRAME_MATCH_TOL_ANG:
        raise InputFormatError(
            f"{where}: input and standard orientation differ by more than a rotation "
            f"(RMS {rms:.2g} Å); the file mixes geometries"
        )
    return rot


def rotate_hessian(hessian: np.ndarray, rot: np.ndarray) -> np.ndarray:
    """H' = B H Bᵀ with B = 1_N ⊗ R (atom-major Cartesian coordinates)."""
    n = hessian.shape[0] // 3
    h = hessian.reshape(n, 3, n, 3)
    return np.einsum("ax,ixjy,by->iajb", rot, h, rot).reshape(3 * n, 3 * n)


def rotate_dalpha_dx(dalpha_dx: np.ndarray, rot: np.ndarray) -> np.ndarray:
    """∂α'/∂x' for a (3N, 3, 3) array: R on the coordinate index and on both tensor indices."""
    n = dalpha_dx.shape[0] // 3
    t = dalpha_dx.reshape(n, 3, 3, 3)
    return np.einsum("cx,ixab,pa,qb->icpq", rot, t, rot, rot).reshape(3 * n, 3, 3)
