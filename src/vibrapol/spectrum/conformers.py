"""Spectra of several sources: Boltzmann mixtures of conformers, or overlays of anything.

A Boltzmann mixture weights each source by g_i exp(−ΔE_i/RT); it is only meaningful for
conformers of one molecule computed at one level of theory (the energies must be comparable),
which :func:`check_conformers` enforces.  Different molecules are overlaid instead
(:func:`overlay`, :func:`overlay_grid`): each keeps weight 1 and its own trace.

References
----------
.. [McQ] D. A. McQuarrie, *Statistical Mechanics*, Harper & Row (1976), ch. 2: the Boltzmann
   distribution p_i = g_i exp(−E_i/RT) / Σ_j g_j exp(−E_j/RT).
"""

from __future__ import annotations

import dataclasses
import re
import warnings
from collections import Counter
from collections.abc import Sequence
from typing import Any

import numpy as np

from vibrapol import units
from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.spectrum import (
    DEFAULT_LINESHAPE,
    GridSpectrum,
    StickSpectrum,
    broaden,
    default_range,
    stick_spectrum,
)
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.quantities import check_temperature
from vibrapol.spectrum.scaling import normalize_basis, parse_method


def formula(modes: ModeSet) -> str:
    """Composition in Hill order (C, H, then alphabetical; alphabetical without carbon)."""
    counts = Counter(modes.symbols)
    order = ["C", "H"] if "C" in counts else []
    order += sorted(k for k in counts if k not in order)
    return "".join(f"{k}{counts[k] if counts[k] > 1 else ''}" for k in order)


def check_conformers(
    modesets: Sequence[ModeSet], overlay_hint: str = "--overlay", *, stacklevel: int = 3
) -> None:
    """Refuse a Boltzmann mixture of sources that are not conformers at one level of theory.

    Parameters
    ----------
    modesets : sequence of ModeSet
    overlay_hint : str
        How the user overlays different molecules instead (named in the message).
    stacklevel : int
        Passed to :func:`warnings.warn` (3: the caller of the function that calls this one).

    Raises
    ------
    VibrapolError
        When the compositions differ (different molecules) or the recorded methods, basis
        sets or engine models (solvent, multiplicity, density fitting, ECPs) differ (energies
        from different levels cannot be compared).

    Warns
    -----
    AccuracyWarning
        When a source records no method or basis, so the level could not be compared.
    """
    names = [m.provenance.source_file or f"source {i + 1}" for i, m in enumerate(modesets)]
    formulas = [formula(m) for m in modesets]
    for name, f in zip(names[1:], formulas[1:], strict=True):
        if f != formulas[0]:
            raise VibrapolError(
                f"{names[0]} ({formulas[0]}) and {name} ({f}) are different molecules, not "
                "conformers: a Boltzmann mixture needs one composition; overlay them with "
                f"{overlay_hint} (one trace and one column per source)"
            )
    levels = []
    for name, m in zip(names, modesets, strict=True):
        p = m.provenance
        if not p.method or not p.basis:
            warnings.warn(
                f"{name}: no method/basis recorded, so the conformers' level of theory could "
                "not be compared",
                AccuracyWarning,
                stacklevel=stacklevel,
            )
            continue
        levels.append(
            (name, p.level_of_theory(), parse_method(p.method), normalize_basis(p.basis), _model(p))
        )
    for name, text, *level in levels[1:]:
        if tuple(level) != levels[0][2:]:
            raise VibrapolError(
                f"{levels[0][0]} ({levels[0][1]}) and {name} ({text}) were computed at different "
                "levels of theory: their energies cannot weight a Boltzmann mixture; overlay "
                f"them with {overlay_hint}"
            )


def _model(p: Provenance) -> str:
    """The engine's model beyond method/basis, as the level of theory names it.

    The solvent, multiplicity, density fitting and ECPs; not ⟨S²⟩, which differs from one
    geometry to the next.
    """
    level = p.level_of_theory()
    extra = level[len("/".join(x for x in (p.method, p.basis) if x)) :]
    return re.sub(r" \(<S\^2> [0-9.]+\)", "", extra)


def boltzmann_weights(
    relative_energies_kjmol: Sequence[float] | np.ndarray,
    temperature_k: float,
    degeneracies: Sequence[float] | None = None,
) -> np.ndarray:
    """Population of each species, g_i exp(−ΔE_i/RT) normalised to 1 [McQ]_.

    At T = 0 the lowest-energy species (all of them, if tied) carry the whole population.
    """
    e = np.asarray(relative_energies_kjmol, dtype=float)
    if e.ndim != 1 or e.size == 0 or not np.all(np.isfinite(e)):
        raise VibrapolError("relative energies must be a non-empty list of finite numbers (kJ/mol)")
    g = np.ones_like(e) if degeneracies is None else np.asarray(degeneracies, dtype=float)
    if g.shape != e.shape or np.any(g <= 0):
        raise VibrapolError("give one positive degeneracy per species")
    temperature_k = check_temperature(temperature_k)
    de = e - e.min()
    if temperature_k == 0:
        w = np.where(de == 0, g, 0.0)
    else:
        w = g * np.exp(-de / (units.GAS_CONSTANT_KJ_MOL_K * temperature_k))
    return w / w.sum()


def zero_point_kjmol(modes: ModeSet) -> float:
    """Harmonic zero-point energy ½ hc Σ ν̃_k over the real modes, in kJ mol⁻¹."""
    nu = modes.freqs_cm1[modes.freqs_cm1 > 0]
    return 0.5 * float(nu.sum()) * units.CM1_TO_KJ_MOL


def source_energies_kjmol(
    modesets: Sequence[ModeSet], include_zero_point: bool = False
) -> np.ndarray:
    """Energies of the sources relative to the lowest, from their ``energy_hartree``.

    Raises
    ------
    VibrapolError
        When a source carries no energy (the message names it).
    """
    energies = []
    for i, m in enumerate(modesets):
        if m.energy_hartree is None:
            where = m.provenance.source_file or f"source {i + 1}"
            raise VibrapolError(
                f"{where}: no electronic energy; give the relative energies explicitly"
            )
        e = m.energy_hartree * units.HARTREE_TO_KJ_MOL
        energies.append(e + (zero_point_kjmol(m) if include_zero_point else 0.0))
    relative = np.array(energies)
    return relative - relative.min()


def conformer_weights(
    modesets: Sequence[ModeSet],
    relative_energies_kjmol: Sequence[float] | np.ndarray | None,
    temperature_k: float,
    degeneracies: Sequence[float] | None = None,
    include_zero_point: bool = False,
    *,
    overlay_hint: str = "--overlay",
) -> np.ndarray:
    """Boltzmann population of each conformer, after checking they are conformers.

    :func:`check_conformers`, then the energies (given, one per conformer, or
    :func:`source_energies_kjmol` from the sources), then :func:`boltzmann_weights`.
    Warnings name the caller of the function that calls this one.
    """
    check_conformers(modesets, overlay_hint=overlay_hint, stacklevel=4)
    if relative_energies_kjmol is None:
        relative_energies_kjmol = source_energies_kjmol(modesets, include_zero_point)
    elif len(relative_energies_kjmol) != len(modesets):
        raise VibrapolError(
            f"give one energy per conformer ({len(modesets)}), got {len(relative_energies_kjmol)}"
        )
    return boltzmann_weights(relative_energies_kjmol, temperature_k, degeneracies)


def mixture(
    spectra: Sequence[StickSpectrum], weights: Sequence[float] | np.ndarray
) -> StickSpectrum:
    """One stick spectrum from several, each band's heights multiplied by its species' weight.

    All spectra must have the same channels and conditions (quantity, laser, temperature, …).
    """
    if not spectra:
        raise VibrapolError("a mixture needs at least one spectrum")
    w = np.asarray(weights, dtype=float)
    if w.shape != (len(spectra),) or np.any(w < 0):
        raise VibrapolError(f"give one non-negative weight per spectrum ({len(spectra)})")
    first = spectra[0]
    for s in spectra[1:]:
        same = dataclasses.replace(s.conditions, method="") == dataclasses.replace(
            first.conditions, method=""
        )
        if s.channels != first.channels or not same:
            raise VibrapolError("spectra in a mixture must share channels and conditions")
    # the level of theory as each source spells it (conformers were checked to share it)
    methods = "; ".join(dict.fromkeys(s.conditions.method or "not recorded" for s in spectra))
    return StickSpectrum(
        positions_cm1=np.concatenate([s.positions_cm1 for s in spectra]),
        heights=np.concatenate([s.heights * wi for s, wi in zip(spectra, w, strict=True)]),
        channels=first.channels,
        harmonic_cm1=np.concatenate([s.harmonic_cm1 for s in spectra]),
        mode_sets=tuple(ms for s in spectra for ms in s.mode_sets),
        irreps=tuple(ir for s in spectra for ir in s.irreps),
        rho_linear=np.concatenate([s.rho_linear for s in spectra]),
        rho_natural=np.concatenate([s.rho_natural for s in spectra]),
        polarized=np.concatenate([s.polarized for s in spectra]),
        unresolved=np.concatenate([s.unresolved for s in spectra]),
        component=np.concatenate([np.full(s.n_bands, i) for i, s in enumerate(spectra)]).astype(
            int
        ),
        components=tuple(s.components[0] for s in spectra),
        weights=tuple(float(x) for x in w),
        conditions=dataclasses.replace(first.conditions, method=methods),
        warnings=tuple(dict.fromkeys(w for s in spectra for w in s.warnings)),
    )


def conformer_spectrum(
    modesets: Sequence[ModeSet],
    *,
    relative_energies_kjmol: Sequence[float] | np.ndarray | None = None,
    temperature_k: float = 298.15,
    include_zero_point: bool = False,
    degeneracies: Sequence[float] | None = None,
    labels: Sequence[str] | None = None,
    **stick_options: Any,
) -> StickSpectrum:
    """Boltzmann-weighted stick spectrum of several conformers at ``temperature_k``.

    Parameters
    ----------
    modesets : sequence of ModeSet
    relative_energies_kjmol : sequence of float, optional
        ΔE of each conformer (electronic, or free energies if you have them); default: from the
        sources' ``energy_hartree`` (:func:`source_energies_kjmol`).
    include_zero_point : bool
        Add the harmonic zero-point energy to energies read from the sources.
    degeneracies : sequence of float, optional
        Number of equivalent copies of each conformer (e.g. 2 for a pair of mirror images).
    labels : sequence of str, optional
        Component labels (default: the source file names).
    **stick_options
        Passed to :func:`vibrapol.spectrum.stick_spectrum` (the temperature is passed too).
    """
    weights = conformer_weights(
        modesets, relative_energies_kjmol, temperature_k, degeneracies, include_zero_point
    )
    labels = list(labels) if labels is not None else [m.provenance.source_file for m in modesets]
    spectra = [
        stick_spectrum(m, temperature_k=temperature_k, label=lab, **stick_options)
        for m, lab in zip(modesets, labels, strict=True)
    ]
    return mixture(spectra, weights)


def overlay(spectra: Sequence[StickSpectrum]) -> StickSpectrum:
    """Several spectra side by side, each with weight 1 (no Boltzmann weighting).

    The conditions must agree except for the method, which becomes the list of the sources'
    methods.
    """
    if not spectra:
        raise VibrapolError("an overlay needs at least one spectrum")
    return mixture(spectra, np.ones(len(spectra)))


def overlay_grid(
    sticks: StickSpectrum,
    lineshape: LineShape = DEFAULT_LINESHAPE,
    *,
    range_cm1: tuple[float, float] | None = None,
    step_cm1: float = 0.5,
) -> GridSpectrum:
    """Each component broadened on its own: channels named ``CHANNEL:COMPONENT`` (``vv:a.json``)."""
    span = range_cm1 or default_range(sticks, lineshape)
    grids = [
        broaden(_component(sticks, k), lineshape, range_cm1=span, step_cm1=step_cm1)
        for k in range(len(sticks.components))
    ]
    names = tuple(f"{ch}:{label}" for label in sticks.components for ch in sticks.channels)
    values = np.hstack([g.values for g in grids])
    return GridSpectrum(grids[0].shift_cm1, values, names, lineshape, sticks)


def _component(sticks: StickSpectrum, k: int) -> StickSpectrum:
    keep = sticks.component == k
    idx = np.flatnonzero(keep)
    return StickSpectrum(
        positions_cm1=sticks.positions_cm1[keep],
        heights=sticks.heights[keep],
        channels=sticks.channels,
        harmonic_cm1=sticks.harmonic_cm1[keep],
        mode_sets=tuple(sticks.mode_sets[i] for i in idx),
        irreps=tuple(sticks.irreps[i] for i in idx),
        rho_linear=sticks.rho_linear[keep],
        rho_natural=sticks.rho_natural[keep],
        polarized=sticks.polarized[keep],
        unresolved=sticks.unresolved[keep],
        component=np.zeros(idx.size, dtype=int),
        components=(sticks.components[k],),
        weights=(sticks.weights[k],),
        conditions=sticks.conditions,
        warnings=sticks.warnings,
    )
