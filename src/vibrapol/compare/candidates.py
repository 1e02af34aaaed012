"""Candidates for an assignment: one structure, or a Boltzmann mixture of conformers.

A :class:`Candidate` holds the computed bands as a :class:`~vibrapol.spectrum.StickSpectrum`
(one band per degenerate set, relative VV and VH intensities at the measurement's laser line
and temperature, symmetry species when the point group is found) and the scale factor to
start from when the method is in the table of published factors.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.modeset import ModeSet
from vibrapol.ramantable import RamanTable, raman_table, symmetry_table
from vibrapol.spectrum import StickSpectrum, stick_spectrum
from vibrapol.spectrum.conformers import conformer_weights, mixture
from vibrapol.spectrum.scaling import FrequencyScale, lookup_factor


@dataclass(frozen=True, eq=False)
class Candidate:
    """A computed spectrum to match against a measurement.

    Attributes
    ----------
    label : str
        Name shown in tables.
    sticks : StickSpectrum
        Computed bands, unscaled (the assignment applies its own factor).
    start_scale : FrequencyScale or None
        Published factor for the method, where the scale search starts (None: unknown).
    point_groups : tuple of str
        Point group of each component ('' when not found).
    notes : tuple of str
        What was done to build the candidate.
    isotope_ratios : ndarray or None
        Computed ν̃′/ν̃ of each band for an isotopologue
        (:func:`vibrapol.compare.isotopologue.with_isotopologue`); None without one.
    """

    label: str
    sticks: StickSpectrum
    start_scale: FrequencyScale | None = None
    point_groups: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    isotope_ratios: np.ndarray | None = None


def published_scale(modes: ModeSet) -> FrequencyScale | None:
    """The published factor for the source's method and basis, or None when not tabulated."""
    method, basis = modes.provenance.method, modes.provenance.basis
    if not method or not basis:
        return None
    try:
        lookup_factor(f"{method}/{basis}")
    except VibrapolError:
        return None
    return FrequencyScale.published(f"{method}/{basis}")


def _table_and_note(modes: ModeSet) -> tuple[ModeSet, RamanTable, str]:
    """:func:`vibrapol.ramantable.symmetry_table` and a note for the candidate.

    When the point group cannot be found, the table has no species and degenerate sets come
    from frequencies (with a warning).
    """
    where = modes.provenance.source_file or "mode set"
    try:
        sym_modes, table = symmetry_table(modes)
    except (VibrapolError, ValueError) as exc:
        warnings.warn(
            f"{where}: no symmetry species ({exc}); degenerate sets from frequencies",
            AccuracyWarning,
            stacklevel=2,
        )
        return modes, raman_table(modes), "symmetry not found"
    note = f"point group {table.point_group}" + (
        " (modes symmetrized)" if sym_modes is not modes else ""
    )
    return sym_modes, table, note


def _sticks(
    modes: ModeSet,
    label: str,
    laser_nm: float,
    temperature_k: float,
    symmetry: bool,
    detector: str = "photon",
) -> tuple[StickSpectrum, str, str]:
    if symmetry:
        modes, table, note = _table_and_note(modes)
    else:
        table, note = raman_table(modes), "symmetry not used"
    quantity = "intensity" if modes.has_raman or modes.activity is not None else "activity"
    sticks = stick_spectrum(
        modes,
        quantity=quantity,
        laser_nm=laser_nm,
        temperature_k=temperature_k,
        table=table,
        label=label,
        detector=detector,
    )
    return sticks, table.point_group, note


def candidate_from_modes(
    modes: ModeSet,
    *,
    label: str = "",
    laser_nm: float = 532.0,
    temperature_k: float = 298.15,
    symmetry: bool = True,
    start_scale: FrequencyScale | None = None,
    detector: str = "photon",
) -> Candidate:
    """A candidate from one :class:`ModeSet`.

    Parameters
    ----------
    modes : ModeSet
        Needs Raman activities (and, for the polarization term, depolarization ratios).
    label : str
        Default: the source file name.
    laser_nm, temperature_k : float
        Conditions of the measurement: the computed intensities use them (the Stokes factor
        ν̃₀(ν̃₀ − ν̃)³ / (ν̃ [1 − exp(−hcν̃/kT)]) for a photon-counting detector,
        :mod:`vibrapol.spectrum.quantities`).
    symmetry : bool
        Find the point group and label each band with its species (degenerate sets then come
        from symmetry).
    start_scale : FrequencyScale, optional
        Where the scale search starts; default the published factor of the method, if any.
    detector : str
        ``"photon"`` (default) or ``"energy"``: the measurement's detector convention.
    """
    label = label or modes.provenance.source_file or "candidate"
    sticks, group, note = _sticks(modes, label, laser_nm, temperature_k, symmetry, detector)
    start = start_scale if start_scale is not None else published_scale(modes)
    return Candidate(label, sticks, start, (group,), (note,))


def mixture_candidate(
    modesets: Sequence[ModeSet],
    *,
    relative_energies_kjmol: Sequence[float] | np.ndarray | None = None,
    degeneracies: Sequence[float] | None = None,
    labels: Sequence[str] | None = None,
    label: str = "",
    laser_nm: float = 532.0,
    temperature_k: float = 298.15,
    include_zero_point: bool = False,
    symmetry: bool = True,
    start_scale: FrequencyScale | None = None,
    detector: str = "photon",
) -> Candidate:
    """A Boltzmann mixture of conformers as one candidate.

    Each conformer's intensities are multiplied by its population
    g_i exp(−ΔE_i/RT) / Σ g_j exp(−ΔE_j/RT)
    (:func:`vibrapol.spectrum.conformers.boltzmann_weights`).

    Parameters
    ----------
    modesets : sequence of ModeSet
        The conformers (same method, so that one scale factor fits all).
    relative_energies_kjmol : sequence of float, optional
        Default: from the sources' electronic energies.
    degeneracies : sequence of float, optional
        Equivalent copies of each conformer (e.g. 2 for the two gauche forms of ethanol).
    labels : sequence of str, optional
        Component names (default: the source file names).
    label : str
        Name of the mixture (default: the component names joined by "+").
    laser_nm, temperature_k, include_zero_point, symmetry, start_scale, detector
        As in :func:`candidate_from_modes` and
        :func:`vibrapol.spectrum.conformers.conformer_spectrum`.
    """
    if not modesets:
        raise VibrapolError("a mixture candidate needs at least one conformer")
    hint = "separate SOURCE arguments (one candidate each)"
    weights = conformer_weights(
        modesets,
        relative_energies_kjmol,
        temperature_k,
        degeneracies,
        include_zero_point,
        overlay_hint=hint,
    )
    names = (
        list(labels)
        if labels is not None
        else [m.provenance.source_file or f"conformer {i + 1}" for i, m in enumerate(modesets)]
    )
    if len(names) != len(modesets):
        raise VibrapolError(f"give one label per conformer ({len(modesets)})")
    parts = [
        _sticks(m, n, laser_nm, temperature_k, symmetry, detector)
        for m, n in zip(modesets, names, strict=True)
    ]
    sticks = mixture([p[0] for p in parts], weights)
    share = ", ".join(f"{n} {w:.0%}" for n, w in zip(names, weights, strict=True))
    start = start_scale if start_scale is not None else published_scale(modesets[0])
    return Candidate(
        label or "+".join(names),
        sticks,
        start,
        tuple(p[1] for p in parts),
        (f"Boltzmann mixture at {temperature_k:g} K: {share}", *(p[2] for p in parts)),
    )
