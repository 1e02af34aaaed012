"""The checked :class:`ModeSet` of a Gaussian job: modes, Raman data, IR, printed checks.

Shared by the log and fchk readers (:mod:`vibrapol.sources.gaussian` describes what each file
holds).  Printed values are compared per set of modes closer than
:data:`vibrapol.invariants.DEGENERACY_TOL_CM1`: inside a degenerate set the split of activity
between members depends on the basis each program happened to choose, the sum does not
(D. A. Long, *The Raman Effect*, Wiley 2002, ch. 5).
"""

from __future__ import annotations

import dataclasses
import warnings
from collections.abc import Callable
from pathlib import Path

import numpy as np
import scipy.constants as sc

from vibrapol import invariants as inv
from vibrapol.errors import AccuracyWarning, InputFormatError, ShapeError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import check_printed
from vibrapol.sources.gaussian import GaussianJob, PrintPrecision
from vibrapol.sources.gaussian_path import path_projected_modes
from vibrapol.textio import read_text
from vibrapol.units import BOHR2_TO_ANG2, BOHR3_TO_ANG3, hessian_eigenvalue_to_cm1
from vibrapol.vibrations import HarmonicModes, harmonic_analysis, modes_from_displacements

#: Printed displacements (2 decimals) overlap the exact modes to about 0.999; below this the
#: modes are not those the program printed (wrong frame, wrong atom order).
MODE_OVERLAP_MIN = 0.98

#: ρ is compared only where the printed activity exceeds this many print units: below, the
#: printed ratio rests on too few digits to mean anything.
RHO_MIN_ACTIVITY_UNITS = 1000.0

#: Frequencies may differ from the printed ones by this many times the RMS effect of the
#: Hessian's rounding (:func:`frequency_tolerance_cm1`); the divinylbenzene logs reach 5×.
HESSIAN_ROUNDING_SAFETY = 10.0


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


def _modes(
    job: GaussianJob, masses: np.ndarray, where: str
) -> tuple[np.ndarray, np.ndarray, Provenance, bool]:
    """Frequencies, modes, provenance and whether the modes are exact (from the Hessian).

    Modes of the Hessian (projected for ``Freq=Projected``), else the printed modes.
    """
    printed, prov = job.printed, job.provenance
    result: HarmonicModes | None = None
    if job.hessian_au is not None and job.projected and job.gradient_au is not None:
        try:
            result = path_projected_modes(
                job.hessian_au, masses, job.coordinates_ang, job.gradient_au
            )
        except ShapeError as exc:
            raise InputFormatError(f"{where}: Freq=Projected job, but {exc}") from None
        prov = prov.with_note(
            "Freq=Projected: vibrapol projected the reaction-path direction (mass-weighted "
            "gradient) out of the Hessian as Gaussian does: one mode fewer than 3N-6 (3N-5)"
        )
    elif job.hessian_au is not None and not job.projected:
        result = harmonic_analysis(job.hessian_au, masses, job.coordinates_ang)
    if result is not None:
        if printed.freqs_cm1 is not None:
            _check_frequencies(result, printed.freqs_cm1, job.precision, where)
        if printed.displacements is not None:
            _check_modes(result.modes, result.freqs_cm1, printed.displacements, masses, where)
        return result.freqs_cm1, result.modes, prov, True
    if printed.displacements is None or printed.freqs_cm1 is None:
        if job.projected:
            raise InputFormatError(
                f"{where}: Freq=Projected job without the gradient or the printed modes: "
                "its projected modes cannot be reproduced"
            )
        raise InputFormatError(
            f"{where}: no Hessian and no normal modes found (not a frequency job?)"
        )
    lost = [item for item in job.overflow if item.startswith("frequency")]
    if lost or not np.all(np.isfinite(printed.displacements)):
        raise InputFormatError(
            f"{where}: {(lost or ['a displacement'])[0]} was printed as **** (field overflow) "
            "and the file has no Hessian to recompute it"
        )
    why = (
        "Freq=Projected and no gradient in the file" if job.projected else "no Hessian in the file"
    )
    note = f"{why}: modes from the printed displacements (print precision)"
    modes = modes_from_displacements(printed.displacements, masses)
    return printed.freqs_cm1, modes, prov.with_note(note), False


#: IR intensity in km/mol of a mode with |∂μ/∂Q| = 1 e amu⁻¹ᐟ²: N_A π e²/(3 c² 4πε₀ u), the
#: double-harmonic formula (E. B. Wilson, J. C. Decius, P. C. Cross, Molecular Vibrations,
#: 1955, ch. 7); 974.88 km/mol (common practice), from scipy.constants.
IR_KM_MOL_PER_E2_AMU = (
    sc.N_A * np.pi / (3 * sc.c**2) / (4 * np.pi * sc.epsilon_0) * sc.e**2 / sc.atomic_mass / 1e3
)


def ir_from_dipole_derivatives(
    dipole_deriv_au: np.ndarray, modes: np.ndarray, masses_da: np.ndarray
) -> np.ndarray:
    """IR intensities (km/mol) of mass-weighted modes from ∂μ/∂x (e, shape (3N, 3))."""
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(masses_da), 3)
    dmu_dq = np.einsum("ki,i,ia->ka", modes, inv_sqrt_m, dipole_deriv_au)
    return IR_KM_MOL_PER_E2_AMU * np.sum(dmu_dq**2, axis=1)


def _ir_intensities(
    job: GaussianJob,
    modes: np.ndarray,
    freqs: np.ndarray,
    masses: np.ndarray,
    exact: bool,
    where: str,
) -> tuple[np.ndarray | None, tuple[str, ...]]:
    """IR intensities (km/mol): from ∂μ/∂x for modes of the Hessian, else as printed.

    Computed values are compared with the printed ones per degenerate set (the split inside a
    set depends on the basis chosen in it; the sum does not).
    """
    printed = job.printed.ir_intensity
    if printed is not None and printed.shape != freqs.shape:
        printed = None
    if exact and job.dipole_deriv_au is not None:
        ir = ir_from_dipole_derivatives(job.dipole_deriv_au, modes, masses)
        if printed is not None:
            sets = inv.degenerate_sets(freqs)
            check_printed(
                "IR intensity (km/mol)",
                inv.sum_over_sets(ir, sets),
                inv.sum_over_sets(printed, sets),
                where=where,
                atol=job.precision.activity_atol,
                rtol=job.precision.activity_rtol,
                origin="from the dipole derivatives",
                item="mode" if all(len(s) == 1 for s in sets) else "degenerate set",
            )
        return ir, ("IR intensities (km/mol) from the dipole derivatives",)
    if printed is None:
        return None, ()
    if not np.all(np.isfinite(printed)):
        return None, ("IR intensities left out: at least one was printed as **** (overflow)",)
    return printed, ("IR intensities (km/mol) as printed",)


def _raman_not_computed(job: GaussianJob) -> bool:
    """Raman rows that are all zero: Gaussian fills them so when Raman was not computed.

    A computed Raman spectrum always has an active mode (a totally symmetric vibration changes
    the mean polarizability; common practice), so all-zero activities mean "not computed".
    """
    act = job.printed.activity
    return act is not None and act.size > 0 and bool(np.all(act == 0.0))


def _refuse_lost_raman(job: GaussianJob, where: str) -> None:
    """Refuse when a printed activity or ratio overflowed and cannot be recomputed."""
    printed = job.printed
    assert printed.activity is not None and printed.rho_linear is not None  # has_printed_raman
    lost = [item for item in job.overflow if item.startswith(("Raman activity", "depolarization"))]
    if lost or not (
        np.all(np.isfinite(printed.activity)) and np.all(np.isfinite(printed.rho_linear))
    ):
        raise InputFormatError(
            f"{where}: {(lost or ['a printed Raman activity or ratio'])[0]} was printed as **** "
            "(field overflow) and the file has no polarizability derivatives to recompute it"
        )


def build_modeset(job: GaussianJob, where: str) -> ModeSet:
    """The :class:`ModeSet` of a Gaussian job (:func:`_build`), then Gaussian's own messages.

    Warns
    -----
    AccuracyWarning
        One per failure line Gaussian printed ("Error termination ...", "Optimization
        stopped", convergence failures), after the file was read.
    """
    modeset = _build(job, where)
    for message in job.messages:
        warnings.warn(f"{where}: {message}", AccuracyWarning, stacklevel=3)
    return modeset


def _build(job: GaussianJob, where: str) -> ModeSet:
    """The :class:`ModeSet` of a Gaussian job, with every printed value checked.

    Modes come from the harmonic analysis of the Hessian when the file has one (with the path
    direction projected out for ``Freq=Projected``), else from the printed displacements
    (:func:`vibrapol.vibrations.modes_from_displacements`).  Raman data come from ∂α/∂x when
    present, else from the printed activity and plane-polarized ratio; all-zero Raman rows
    mean Raman was not computed.  IR intensities are the printed ones.

    Raises
    ------
    InputFormatError
        When the file has neither a Hessian nor printed normal modes, or when a value that
        cannot be recomputed was printed as ``****``.

    Warns
    -----
    AccuracyWarning
        When printed fields overflowed (``****``): which ones and what was done.
    """
    printed = job.printed
    masses = job.masses_da
    if masses is None:
        masses = default_masses(job.atomic_numbers)
    freqs, modes, prov, exact = _modes(job, masses, where)
    has_printed_raman = (
        printed.activity is not None
        and printed.rho_linear is not None
        and printed.activity.shape == freqs.shape
        and not _raman_not_computed(job)
    )
    dalpha = None if job.dalpha_dx_au is None else job.dalpha_dx_au * BOHR2_TO_ANG2
    if dalpha is not None and not exact and has_printed_raman:
        # derivatives projected on modes rebuilt from rounded displacements would not give the
        # printed activities (0.3 % off with 2 decimals): keep the program's numbers
        dalpha = None
        prov = prov.with_note(
            "polarizability derivatives not used: the modes come from rounded printed "
            "displacements, so the printed activities and ratios are kept"
        )
    if dalpha is None and has_printed_raman:
        _refuse_lost_raman(job, where)
    ir, ir_notes = _ir_intensities(job, modes, freqs, masses, exact, where)
    for note in ir_notes:
        prov = prov.with_note(note)
    if job.overflow:
        shown = ", ".join(job.overflow[:4]) + (" …" if len(job.overflow) > 4 else "")
        note = f"printed as **** (field overflow, not a number): {shown}"
        prov = prov.with_note(note)
        done = []
        if ir is None and job.printed.ir_intensity is not None:
            done.append("IR intensities left out")
        if any(not item.startswith("IR") for item in job.overflow) or ir is not None:
            done.append("vibrapol's own values (from the Hessian and derivatives) are unchecked")
        warnings.warn(f"{where}: {note}; {'; '.join(done)}", AccuracyWarning, stacklevel=3)
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
        ir_intensity_km_mol=ir,
    )
    if dalpha is not None:
        a2, gamma2 = modeset.raman_invariants()
        _check_raman(a2, gamma2, freqs, job, where)
        return modeset
    if _raman_not_computed(job):
        note = "no Raman data: the Raman rows are all zero (Raman was not computed)"
        return dataclasses.replace(modeset, provenance=prov.with_note(note))
    if not has_printed_raman:
        return dataclasses.replace(modeset, provenance=prov.with_note("no Raman data in the file"))
    assert printed.activity is not None and printed.rho_linear is not None  # has_printed_raman
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
    note = "a², γ² from the printed activity and plane-polarized ratio"
    if job.dalpha_dx_au is None:
        note = "no polarizability derivatives: " + note
    return dataclasses.replace(modeset, a2=a2, gamma2=gamma2, provenance=prov.with_note(note))


def read_job(parse: Callable[[str, str], GaussianJob], path: str | Path) -> ModeSet:
    """The checked :class:`ModeSet` of the file at ``path``, read with ``parse(text, where)``."""
    where = str(path)
    return build_modeset(parse(read_text(path), where), where)
