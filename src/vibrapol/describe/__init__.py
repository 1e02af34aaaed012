"""What each normal mode does: internal coordinates and the potential energy distribution.

Every mode is described by the internal coordinates of the molecule (bond stretches, angle
bends, out-of-plane wags and torsions, built from the connectivity), as the percentage of the
mode's potential energy each one carries, and summed over chemically equivalent coordinates
into a few words of our own: ``"O–H stretch, in phase (99%)"``.

Method (potential energy distribution, diagonal terms)
-------------------------------------------------------
With the Wilson B matrix, ``S = B x`` for small Cartesian displacements ``x`` (Å), the
internal force constants are ``F = (B⁺)ᵀ H B⁺`` (``B⁺`` the Moore–Penrose inverse, so a
redundant set of coordinates is allowed), H the Cartesian Hessian rebuilt from the modes
(:func:`vibrapol.vibrations.hessian_from_modes`).  Mode k moves the internal coordinates by
``S_k = B L_k / √m``; the energy its coordinate j carries is ``F_jj S_jk²`` and the share
reported is ``F_jj S_jk² / Σ_i F_ii S_ik²`` (the diagonal terms of the potential energy
distribution, normalised to 100 %).  The potential energy is used rather than the kinetic
energy because it is independent of the units and the scale of each coordinate (a stretch in Å
and a bend in radians are compared as energies) and because it says which force constants
govern the frequency, which is what an assignment asks.  The off-diagonal (coupling) terms are
left out, so the shares describe and do not decompose the energy exactly; with a redundant set
(the six angles around a tetrahedral carbon) the share is spread over the redundant
coordinates.  Imaginary modes are described with |ν| (the description of a shape, not of a
stable vibration).

Equivalent coordinates are grouped by the chemical equivalence of their atoms (the element,
refined by the classes of the neighbours until stable: the graph's own symmetry, which a point
group of the structure also respects).  The phase words compare the signs of the equivalent
stretches or bends a mode moves: all the same sign "in phase", both signs "out of phase".
Wags and torsions carry no phase word: their sign depends on how the atoms are ordered.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.describe.coordinates import (
    GROUP_MOTIONS,
    InternalCoordinate,
    atom_classes,
    b_matrix,
    bonds,
    internal_coordinates,
)
from vibrapol.errors import VibrapolError, VibrapolWarning
from vibrapol.modeset import ModeSet

__all__ = [
    "EnergyDistribution",
    "InternalCoordinate",
    "ModeDescription",
    "atom_classes",
    "b_matrix",
    "bonds",
    "describe",
    "describe_modes",
    "descriptions_with_notes",
    "energy_distribution",
    "internal_coordinates",
]

#: Shares below this (percent) are left out of the words.
MIN_PERCENT = 10.0

#: Largest number of groups named in one description.
MAX_TERMS = 3

#: A member of a group whose displacement is below this fraction of the largest in the group
#: does not take part in the phase words.
PHASE_MIN_FRACTION = 0.25

#: Fraction of a mode that must lie in the space the internal coordinates span for the
#: description to be given (below it the connectivity misses part of the motion).
MIN_COVERAGE = 0.9

#: The note a table with descriptions carries in its header.
NOTE = (
    "description: share of each mode's potential energy in internal coordinates (diagonal "
    "terms of the potential energy distribution, grouped over equivalent coordinates; shares "
    f"below {MIN_PERCENT:g}% left out)"
)

#: Share of the four-bend motion a pattern must reach to be named.
MOTION_MIN_FRACTION = 0.6


@dataclass(frozen=True)
class ModeDescription:
    """The description of one mode.

    Attributes
    ----------
    terms : tuple of (str, float)
        Words of each group and its share of the potential energy in percent, largest first
        (groups below :data:`MIN_PERCENT` left out, at most :data:`MAX_TERMS`).
    coverage : float
        Fraction of the mode's mass-weighted vector in the space of the internal coordinates.
    """

    terms: tuple[tuple[str, float], ...]
    coverage: float

    @property
    def text(self) -> str:
        """The words with their shares, ``"O–H stretch, in phase (99%); H–O–H bend (1%)"``."""
        if self.coverage < MIN_COVERAGE:
            return ""
        return "; ".join(f"{words} ({pct:.0f}%)" for words, pct in self.terms)

    @property
    def short(self) -> str:
        """The words of the largest group only (figure labels)."""
        return self.terms[0][0] if self.terms and self.coverage >= MIN_COVERAGE else ""


@dataclass(frozen=True)
class EnergyDistribution:
    """Potential energy distribution of every mode over the internal coordinates.

    Attributes
    ----------
    coordinates : tuple of InternalCoordinate
    percent : ndarray (n_modes, n_coordinates)
        Share of each mode's potential energy carried by each coordinate (rows sum to 100).
    displacement : ndarray (n_modes, n_coordinates)
        Change of each coordinate along each mode (Å or rad per unit normal coordinate).
    coverage : ndarray (n_modes,)
        Fraction of each mode in the space the coordinates span.
    """

    coordinates: tuple[InternalCoordinate, ...]
    percent: np.ndarray
    displacement: np.ndarray
    coverage: np.ndarray


def energy_distribution(modes: ModeSet) -> EnergyDistribution:
    """The potential energy distribution of every mode of ``modes`` (module notes).

    Raises
    ------
    VibrapolError
        When the mode set is not complete (3N − 6, 3N − 5 linear): the Hessian cannot be
        rebuilt from the modes, so the force constants are unknown.
    """
    from vibrapol.vibrations import hessian_from_modes, is_linear

    masses = modes._masses()
    want = 3 * modes.n_atoms - (5 if is_linear(modes.coordinates_ang, masses) else 6)
    if modes.n_modes != want:
        where = modes.provenance.source_file or "this mode set"
        raise VibrapolError(
            f"{where}: {modes.n_modes} modes of {want}; describing modes needs all of them "
            "(the force constants are rebuilt from the complete set)"
        )
    coords, funcs = internal_coordinates(modes.atomic_numbers, modes.coordinates_ang, masses)
    b = b_matrix(funcs, modes.coordinates_ang, [c.depends for c in coords])
    hessian = hessian_from_modes(np.abs(modes.freqs_cm1), modes.modes, masses)
    b_plus = np.linalg.pinv(b, rcond=1e-8)
    force = b_plus.T @ hessian @ b_plus
    disp = modes.modes / np.repeat(np.sqrt(masses), 3)[None, :]
    s = disp @ b.T
    energy = s * s * np.diag(force)[None, :]
    total = energy.sum(axis=1, keepdims=True)
    percent = 100.0 * energy / np.where(total > 0, total, 1.0)
    # part of each (mass-weighted) mode the coordinates see: B⁺B projects on B's row space
    projected = (disp @ (b_plus @ b).T) * np.repeat(np.sqrt(masses), 3)[None, :]
    coverage = np.einsum("ij,ij->i", projected, modes.modes)
    return EnergyDistribution(tuple(coords), percent, s, np.clip(coverage, 0.0, 1.0))


def _phase(
    members: list[int], s: np.ndarray, percent: np.ndarray, coords: Sequence[InternalCoordinate]
) -> str:
    """'in phase', 'out of phase' or '' for the equivalent class carrying most of the share."""
    classes: dict[tuple, list[int]] = {}
    for n in members:
        classes.setdefault(coords[n].equivalence, []).append(n)
    members = max(classes.values(), key=lambda m: float(percent[m].sum()))
    if len(members) < 2 or not coords[members[0]].signed:
        return ""
    values = s[members]
    big = values[np.abs(values) >= PHASE_MIN_FRACTION * np.max(np.abs(values))]
    if len(big) < 2:
        return ""
    return "in phase" if np.all(big > 0) or np.all(big < 0) else "out of phase"


def _is_ring(members: list[int], coords: Sequence[InternalCoordinate]) -> bool:
    """Whether the bonds of the stretches ``members`` close one ring (every atom in two)."""
    if len(members) < 3 or any(coords[n].kind != "stretch" for n in members):
        return False
    count: dict[int, int] = {}
    for n in members:
        for a in coords[n].atoms:
            count[a] = count.get(a, 0) + 1
    if any(c != 2 for c in count.values()) or len(count) != len(members):
        return False
    start = coords[members[0]].atoms[0]
    seen, todo = {start}, [start]
    while todo:
        a = todo.pop()
        for n in members:
            pair = coords[n].atoms
            if a in pair:
                b = pair[1] if pair[0] == a else pair[0]
                if b not in seen:
                    seen.add(b)
                    todo.append(b)
    return len(seen) == len(count)


def _group_motion(members: list[int], s: np.ndarray, coords: Sequence[InternalCoordinate]) -> str:
    """'wag', 'rock', 'twist' of XH2 bends when one pattern carries most of their motion."""
    centres: dict[int, list[int]] = {}
    for n in members:
        centres.setdefault(coords[n].atoms[1], []).append(n)
    amplitude = np.zeros(len(GROUP_MOTIONS) + 1)
    for bends in centres.values():
        signs = np.array([(1, *coords[n].pattern) for n in bends], dtype=float)
        amplitude += (signs.T @ s[bends]) ** 2
    best = int(np.argmax(amplitude))
    if best == 0 or amplitude[best] < MOTION_MIN_FRACTION * amplitude.sum():
        return ""
    return GROUP_MOTIONS[best - 1]


def describe(ped: EnergyDistribution) -> list[ModeDescription]:
    """Words for every mode: the groups with the largest shares (see the module notes)."""
    groups: dict[str, list[int]] = {}
    for n, c in enumerate(ped.coordinates):
        groups.setdefault(c.group, []).append(n)
    out = []
    for k in range(ped.percent.shape[0]):
        shares = []
        for words, members in groups.items():
            pct = float(ped.percent[k, members].sum())
            if pct < MIN_PERCENT:
                continue
            if ped.coordinates[members[0]].pattern:
                motion = _group_motion(members, ped.displacement[k], ped.coordinates)
                shares.append((words.replace("deformation", motion) if motion else words, pct))
            else:
                phase = _phase(members, ped.displacement[k], ped.percent[k], ped.coordinates)
                if phase == "in phase" and _is_ring(members, ped.coordinates):
                    words, phase = "ring breathing", ""
                shares.append((f"{words}, {phase}" if phase else words, pct))
        shares.sort(key=lambda t: -t[1])
        out.append(ModeDescription(tuple(shares[:MAX_TERMS]), float(ped.coverage[k])))
    return out


def describe_modes(modes: ModeSet) -> list[ModeDescription]:
    """The description of every mode of ``modes`` (:func:`energy_distribution`, :func:`describe`).

    Examples
    --------
    >>> from vibrapol.sources import read_modes  # doctest: +SKIP
    >>> [d.text for d in describe_modes(read_modes("water.out"))]  # doctest: +SKIP
    ['H–O–H bend (100%)', 'O–H stretch, in phase (99%)', 'O–H stretch, out of phase (100%)']
    """
    return describe(energy_distribution(modes))


def descriptions_with_notes(modes: ModeSet) -> tuple[list[str], list[str]]:
    """The text of every mode and the notes a file with them must carry in its header.

    Returns
    -------
    (list of str, list of str)
        One text per mode ('' for a mode the coordinates do not cover; none at all when the
        modes cannot be described), and the notes: how the shares are computed, or why there
        are no descriptions, and which modes were left undescribed.

    Warns
    -----
    VibrapolWarning
        When some modes are left undescribed (the text is also a note).  An incomplete set of
        modes gives only the note: the table already warns of the missing modes.
    """
    try:
        found = describe_modes(modes)
    except VibrapolError as exc:
        return [], [f"modes not described: {exc}"]
    notes = [NOTE]
    missed = [str(k + 1) for k, d in enumerate(found) if d.coverage < MIN_COVERAGE]
    if missed:
        where = modes.provenance.source_file or "mode set"
        text = (
            f"mode{'s' if len(missed) > 1 else ''} {', '.join(missed)} not described: the "
            f"bonds found leave more than {1 - MIN_COVERAGE:.0%} of the motion undescribed"
        )
        warnings.warn(f"{where}: {text}", VibrapolWarning, stacklevel=2)
        notes.append(text)
    return [d.text for d in found], notes
