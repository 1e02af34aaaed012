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

import dataclasses
import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol import invariants as inv
from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import check_printed
from vibrapol.sources.registry import read_text
from vibrapol.units import BOHR2_TO_ANG2, BOHR3_TO_ANG3, hessian_eigenvalue_to_cm1
from vibrapol.vibrations import HarmonicModes, harmonic_analysis, modes_from_displacements

#: Gaussian stores a symmetric 3×3 tensor as its lower triangle: xx, xy, yy, xz, yz, zz.
LOWER_TRIANGLE_INDEX = np.array([[0, 1, 3], [1, 2, 4], [3, 4, 5]])

#: Largest RMS difference (Å) accepted between two orientation tables of one geometry.
FRAME_MATCH_TOL_ANG = 1e-4

#: Printed displacements (2 decimals) overlap the exact modes to about 0.999; below this the
#: modes are not those the program printed (wrong frame, wrong atom order).
MODE_OVERLAP_MIN = 0.98

#: ρ is compared only where the printed activity exceeds this many print units: below, the
#: printed ratio rests on too few digits to mean anything.
RHO_MIN_ACTIVITY_UNITS = 1000.0

#: Frequencies may differ from the printed ones by this many times the RMS effect of the
#: Hessian's rounding (:func:`frequency_tolerance_cm1`); the divinylbenzene logs reach 5×.
HESSIAN_ROUNDING_SAFETY = 10.0


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
    displacements : ndarray (n, 3N), optional
        Cartesian displacements in the frame of the coordinates, any per-mode normalisation.
    """

    freqs_cm1: np.ndarray | None = None
    activity: np.ndarray | None = None
    rho_linear: np.ndarray | None = None
    rho_natural: np.ndarray | None = None
    displacements: np.ndarray | None = None


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


def frequency_tolerance_cm1(
    freqs_cm1: np.ndarray, reduced_masses_da: np.ndarray, precision: PrintPrecision
) -> np.ndarray:
    """Print precision of the frequencies plus the effect of the Hessian's rounding.

    Independent rounding errors of size ≤ ε in the Hessian move the eigenvalue λ_k of the
    mass-weighted Hessian by δλ ≈ ε/(√3 μ_k) (RMS, first-order perturbation theory, μ_k the
    reduced mass), and ν = K√λ by δν = K²δλ/(2ν).  The tolerance allows
    :data:`HESSIAN_ROUNDING_SAFETY` times that RMS value: soft modes are the least precise
    (2e-3 to 8e-3 cm⁻¹ at 50 cm⁻¹, by reduced mass, for a Hessian printed with 8 decimals).
    """
    nu = np.maximum(np.abs(np.asarray(freqs_cm1, dtype=float)), 1.0)
    k2 = float(hessian_eigenvalue_to_cm1(1.0)) ** 2
    rounding = (
        k2 * precision.hessian_eps / (np.sqrt(3.0) * np.asarray(reduced_masses_da) * 2.0 * nu)
    )
    return precision.freq_atol_cm1 + precision.freq_rtol * nu + HESSIAN_ROUNDING_SAFETY * rounding


def _check_frequencies(
    result: HarmonicModes, printed: np.ndarray, precision: PrintPrecision, where: str
) -> None:
    freqs = result.freqs_cm1
    if freqs.shape != printed.shape:
        check_printed("frequencies (cm⁻¹)", freqs, printed, where=where, atol=0.0)
        return
    tol = frequency_tolerance_cm1(printed, result.reduced_masses_da, precision)
    check_printed(
        "frequency (cm⁻¹)",
        freqs,
        printed,
        where=where,
        atol=tol,  # one tolerance per mode
        origin="from vibrapol's harmonic analysis of the Hessian",
    )


def _check_modes(
    modes: np.ndarray, freqs: np.ndarray, displacements: np.ndarray, masses: np.ndarray, where: str
) -> None:
    """Each printed mode must lie in the span of vibrapol's modes of the same degenerate set."""
    if displacements.shape[0] != modes.shape[0]:
        return  # the frequency check has already reported the different number of modes
    printed = modes_from_displacements(displacements, masses)
    overlap = modes @ printed.T
    same_set = np.zeros_like(overlap, dtype=bool)
    for members in inv.degenerate_sets(freqs):
        same_set[np.ix_(members, members)] = True
    projection = np.sqrt(np.sum(np.where(same_set, overlap, 0.0) ** 2, axis=0))
    check_printed(
        "overlap of the normal mode from the Hessian with the printed displacements",
        projection,
        np.ones_like(projection),
        where=where,
        atol=1.0 - MODE_OVERLAP_MIN,
        origin="",
        reference="1 (the same mode)",
    )


def _check_raman(
    a2: np.ndarray, gamma2: np.ndarray, freqs: np.ndarray, job: GaussianJob, where: str
) -> None:
    """Compare activities and both ratios with the printed ones, per degenerate set."""
    printed, prec = job.printed, job.precision
    if (
        printed.activity is None
        or printed.activity.shape != a2.shape
        or not np.any(printed.activity)
    ):
        return
    sets = inv.degenerate_sets(freqs)
    per_mode = all(len(s) == 1 for s in sets)
    label = "" if per_mode else " (per set of modes within 1 cm⁻¹)"
    item = "mode" if per_mode else "degenerate set"
    set_a2, set_g2 = inv.sum_over_sets(a2, sets), inv.sum_over_sets(gamma2, sets)
    set_s = inv.activity(set_a2, set_g2)
    printed_s = inv.sum_over_sets(printed.activity, sets)
    check_printed(
        "Raman activity" + label,
        set_s,
        printed_s,
        where=where,
        atol=prec.activity_atol,
        rtol=prec.activity_rtol,
        item=item,
    )
    if printed.rho_linear is None:
        return
    meaningful = (printed_s > RHO_MIN_ACTIVITY_UNITS * prec.activity_atol) & ~inv.inactive_mask(
        set_s
    )
    singles = np.array([len(s) == 1 for s in sets])
    first = [s[0] for s in sets]
    p_a2, p_g2 = inv.invariants_from_activity(printed.activity, printed.rho_linear)
    p_a2, p_g2 = inv.sum_over_sets(p_a2, sets), inv.sum_over_sets(p_g2, sets)
    pairs = [("depolarization ratio, plane-polarized", inv.rho_linear, printed.rho_linear)]
    if printed.rho_natural is not None:
        pairs.append(("depolarization ratio, unpolarized", inv.rho_natural, printed.rho_natural))
    for quantity, ratio, printed_ratio in pairs:
        computed = np.where(meaningful, ratio(set_a2, set_g2), np.nan)
        expected = np.where(singles, printed_ratio[first], ratio(p_a2, p_g2))
        check_printed(
            quantity + label, computed, expected, where=where, atol=prec.rho_atol, item=item
        )


def build_modeset(job: GaussianJob, where: str) -> ModeSet:
    """The :class:`ModeSet` of a Gaussian job, with every printed value checked.

    Modes come from the harmonic analysis of the Hessian when the file has one, else from the
    printed displacements (:func:`vibrapol.vibrations.modes_from_displacements`).  Raman data
    come from ∂α/∂x when present, else from the printed activity and plane-polarized ratio.

    Raises
    ------
    InputFormatError
        When the file has neither a Hessian nor printed normal modes.
    """
    printed, prov = job.printed, job.provenance
    masses = job.masses_da
    if masses is None:
        masses = default_masses(job.atomic_numbers)
    if job.hessian_au is not None:
        result = harmonic_analysis(job.hessian_au, masses, job.coordinates_ang)
        freqs, modes = result.freqs_cm1, result.modes
        if printed.freqs_cm1 is not None:
            _check_frequencies(result, printed.freqs_cm1, job.precision, where)
        if printed.displacements is not None:
            _check_modes(modes, freqs, printed.displacements, masses, where)
    elif printed.displacements is not None and printed.freqs_cm1 is not None:
        freqs, modes = printed.freqs_cm1, modes_from_displacements(printed.displacements, masses)
        prov = prov.with_note(
            "no Hessian in the file: modes from the printed displacements (print precision)"
        )
    else:
        raise InputFormatError(
            f"{where}: no Hessian and no normal modes found (not a frequency job?)"
        )
    dalpha = None if job.dalpha_dx_au is None else job.dalpha_dx_au * BOHR2_TO_ANG2
    polar = None if job.polarizability_au is None else job.polarizability_au * BOHR3_TO_ANG3
    modeset = ModeSet(
        atomic_numbers=job.atomic_numbers,
        coordinates_ang=job.coordinates_ang,
        freqs_cm1=freqs,
        modes=modes,
        masses_da=job.masses_da,
        dalpha_dx=dalpha,
        polarizability_ang3=polar,
        energy_hartree=job.energy_hartree,
        provenance=prov,
    )
    if dalpha is not None:
        a2, gamma2 = modeset.raman_invariants()
        _check_raman(a2, gamma2, freqs, job, where)
        return modeset
    if (
        printed.activity is None
        or printed.rho_linear is None
        or printed.activity.shape != freqs.shape
    ):
        return dataclasses.replace(modeset, provenance=prov.with_note("no Raman data in the file"))
    if not (np.all(np.isfinite(printed.activity)) and np.all(np.isfinite(printed.rho_linear))):
        raise InputFormatError(
            f"{where}: a printed Raman activity or ratio overflowed its field (****) and the "
            "file has no polarizability derivatives to recompute it"
        )
    a2, gamma2 = inv.invariants_from_activity(printed.activity, printed.rho_linear)
    if printed.rho_natural is not None:
        check_printed(
            "depolarization ratio, unpolarized",
            inv.rho_natural_from_linear(printed.rho_linear),
            printed.rho_natural,
            where=where,
            atol=2 * job.precision.rho_atol,
            origin="computed from the printed plane-polarized one, 2ρ/(1+ρ),",
        )
    note = (
        "no polarizability derivatives: a², γ² from the printed activity and plane-polarized ratio"
    )
    return dataclasses.replace(modeset, a2=a2, gamma2=gamma2, provenance=prov.with_note(note))


def read_job(parse: Callable[[str, str], GaussianJob], path: str | Path) -> ModeSet:
    """The checked :class:`ModeSet` of the file at ``path``, read with ``parse(text, where)``."""
    where = str(path)
    return build_modeset(parse(read_text(path), where), where)
