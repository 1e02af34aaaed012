"""Point group of a molecule: operations, atom permutations and character table.

:func:`find_point_group` asks the symmetry library (:mod:`vibrapol.symmetry._msym`) for the
group at a few threshold settings and keeps the largest group whose every operation maps every
atom onto an atom of the same element and mass within ``tolerance_ang``.  That check is ours
and is done in Å, so a loose library setting can never invent symmetry beyond the tolerance.
Linear molecules are handled without the library (:mod:`vibrapol.symmetry.linear`).
"""

from __future__ import annotations

import dataclasses
import re
import warnings

import numpy as np
from ase.data import covalent_radii
from scipy.spatial.distance import cdist

from vibrapol.errors import AccuracyWarning
from vibrapol.modeset import default_masses
from vibrapol.symmetry import _msym
from vibrapol.symmetry.group import GeometryError, PointGroup, match_atoms, symmetrize_coordinates
from vibrapol.symmetry.labels import (
    CONVENTION_DEFAULT,
    GroupFacts,
    improper_angle,
    operation_kind,
    rotation_angle,
    standard_names,
)
from vibrapol.symmetry.linear import linear_axis, linear_group

__all__ = [
    "DEFAULT_TOLERANCE_ANG",
    "GeometryError",
    "PointGroup",
    "find_point_group",
    "symmetrize_coordinates",
]

#: atom it lands on.  Optimised geometries from quantum-chemistry programs are symmetric to
#: 1e-4 Å or better; hand-built or converted structures to about 1e-3 Å (whose images then
#: land up to ≈ 0.004 Å away).  0.01 Å accepts both and stays well below the 0.05–0.1 Å of
#: real distortions (e.g. a Jahn–Teller or conformer change).
DEFAULT_TOLERANCE_ANG = 0.01

#: Largest tolerance a user may set; beyond it "symmetry" means little for a molecule.
MAX_TOLERANCE_ANG = 0.3

#: Atoms closer than this are taken to overlap (a broken structure).
MIN_SEPARATION_ANG = 0.3

#: Two atoms are bonded when closer than this factor times the sum of covalent radii (used
#: only to break ties in the axis conventions).
BOND_FACTOR = 1.2


def _check_structure(z: np.ndarray, coords: np.ndarray, where: str) -> None:
    prefix = f"{where}: " if where else ""
    if coords.ndim != 2 or coords.shape[1] != 3 or coords.shape[0] != z.shape[0]:
        raise GeometryError(f"{prefix}coordinates should be an (N, 3) array for {z.shape[0]} atoms")
    if not np.all(np.isfinite(coords)):
        raise GeometryError(f"{prefix}coordinates contain NaN or infinite values")
    if z.shape[0] < 2:
        raise GeometryError(
            f"{prefix}a single atom has no vibrations; give a molecule with at least two atoms"
        )
    d = cdist(coords, coords) + np.eye(len(coords)) * 1e9
    i, j = np.unravel_index(np.argmin(d), d.shape)
    if d[i, j] < MIN_SEPARATION_ANG:
        raise GeometryError(
            f"{prefix}atoms {min(i, j) + 1} and {max(i, j) + 1} are only {d[i, j]:.3f} Å apart "
            "(overlapping atoms); check the structure"
        )


def _species_ids(z: np.ndarray, masses: np.ndarray) -> np.ndarray:
    keys = {}
    return np.array(
        [
            keys.setdefault((int(a), round(float(m), 6)), len(keys))
            for a, m in zip(z, masses, strict=True)
        ]
    )


def _bonds(z: np.ndarray, coords: np.ndarray) -> np.ndarray:
    r = covalent_radii[z]
    d = cdist(coords, coords)
    i, j = np.nonzero(np.triu(d < BOND_FACTOR * (r[:, None] + r[None, :]), k=1))
    return np.stack([i, j], axis=1)


_SPECIES_ORDER = "ABETGHΣΠΔΦ"


def _species_key(name: str) -> tuple:
    m = re.fullmatch(r"([A-ZΣΠΔΦ])(\d*)([gu]?)('*)([⁺⁻]?)", name)
    if not m:
        return (9, name)
    letter, digits, gu, primes, sign = m.groups()
    parity = 1 if gu == "u" or primes == "''" else 0
    return (parity, _SPECIES_ORDER.find(letter), int(digits or 0), sign == "⁻", name)


def _class_key(matrix: np.ndarray, label: str) -> tuple:
    kind = operation_kind(matrix)
    if kind == "E":
        return (0, 0.0, label)
    if kind == "C":
        return (1, rotation_angle(matrix), label.count("'"), label)
    rank = {"i": 0, "S": 1, "σ": 2}[kind]
    return (2, rank, improper_angle(matrix) if kind == "S" else 0.0, label)


def _assemble(
    facts: GroupFacts, centre: np.ndarray, tolerance: float, deviation: float, notes: list[str]
) -> PointGroup:
    named = standard_names(facts)
    rows = sorted(range(len(named.irreps)), key=lambda r: _species_key(named.irreps[r]))
    cols = sorted(
        range(facts.n_classes),
        key=lambda c: _class_key(facts.matrices[facts.rep(c)], named.class_labels[c]),
    )
    new_col = np.empty(len(cols), dtype=int)
    new_col[cols] = np.arange(len(cols))
    return PointGroup(
        symbol=facts.symbol,
        operations=np.array(facts.matrices, dtype=float),
        permutations=np.array(facts.permutations, dtype=int),
        operation_classes=new_col[facts.op_class],
        class_labels=tuple(named.class_labels[c] for c in cols),
        irreps=tuple(named.irreps[r] for r in rows),
        characters=np.array(facts.characters)[np.ix_(rows, cols)],
        centre_ang=np.array(centre, dtype=float),
        axes=np.array(named.axes, dtype=float),
        tolerance_ang=float(tolerance),
        max_deviation_ang=float(deviation),
        convention=named.convention,
        notes=tuple(notes) + named.notes,
    )


def _trivial_group(
    n_atoms: int, centre: np.ndarray, tolerance: float, notes: list[str]
) -> PointGroup:
    return PointGroup(
        symbol="C1",
        operations=np.eye(3)[None],
        permutations=np.arange(n_atoms)[None],
        operation_classes=np.zeros(1, dtype=int),
        class_labels=("E",),
        irreps=("A",),
        characters=np.ones((1, 1)),
        centre_ang=np.array(centre, dtype=float),
        axes=np.eye(3),
        tolerance_ang=tolerance,
        max_deviation_ang=0.0,
        convention=CONVENTION_DEFAULT,
        notes=tuple(notes),
    )


def find_point_group(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    masses_da: np.ndarray | None = None,
    *,
    tolerance_ang: float = DEFAULT_TOLERANCE_ANG,
    where: str = "",
) -> PointGroup:
    """Point group of a molecule, with operations, permutations and standard species names.

    Parameters
    ----------
    atomic_numbers : array of int (N,)
    coordinates_ang : array (N, 3)
        Cartesian coordinates in Å, in any orientation.
    masses_da : array (N,), optional
        Atomic masses; atoms are equivalent only when element and mass agree (isotopes lower
        the symmetry of the vibrations).  Default: :func:`vibrapol.modeset.default_masses`.
    tolerance_ang : float
        Largest distance between an atom's image under an accepted operation and its partner.
    where : str
        File name for error messages.

    Returns
    -------
    PointGroup
        Operations are given about the centre of mass, in the input frame.

    Raises
    ------
    GeometryError
        For one atom, overlapping atoms, bad shapes or an unreasonable tolerance.
    """
    z = np.asarray(atomic_numbers, dtype=int).ravel()
    coords = np.asarray(coordinates_ang, dtype=float)
    _check_structure(z, coords, where)
    if not 0 < tolerance_ang <= MAX_TOLERANCE_ANG:
        raise GeometryError(
            f"symmetry tolerance must be > 0 and ≤ {MAX_TOLERANCE_ANG} Å, got {tolerance_ang} Å"
        )
    masses = default_masses(z) if masses_da is None else np.asarray(masses_da, dtype=float)
    centre = masses @ coords / masses.sum()
    centred = coords - centre
    species = _species_ids(z, masses)

    axis, off_axis = linear_axis(centred, masses)
    if off_axis <= tolerance_ang / 2:
        group = linear_group(centred, species, masses, axis, tolerance_ang)
        if group is not None:
            return _with_centre(group, centre)

    best: tuple[_msym.MsymGroup, np.ndarray, float] | None = None
    failures, used = [], None
    for k, thresholds in enumerate(_msym.thresholds_for(tolerance_ang)):
        try:
            found = _msym.detect(z, centred, masses, thresholds)
        except Exception as exc:  # the library raises its own Error or ctypes errors
            failures.append(str(getattr(exc, "details", "") or exc))
            continue
        if found.symbol in ("D0h", "C0v"):
            continue
        perms, worst = [], 0.0
        for m in found.matrices:
            perm, dev = match_atoms(m, centred, species, tolerance_ang)
            if perm is None:
                break
            perms.append(perm)
            worst = max(worst, dev)
        else:
            if best is None or len(found.matrices) > len(best[0].matrices):
                best, used = (found, np.array(perms), worst), k
    notes: list[str] = []
    if best is None:
        if failures and len(failures) == len(_msym.THRESHOLD_LADDER):
            warnings.warn(
                f"{where or 'structure'}: the symmetry library failed at every setting "
                f"({failures[0]}); treating the molecule as C1",
                AccuracyWarning,
                stacklevel=2,
            )
        notes.append(f"no symmetry operation other than E within {tolerance_ang} Å")
        return _trivial_group(len(z), centre, tolerance_ang, notes)
    found, perms, worst = best
    if used:
        t = found.thresholds["geometry"]
        notes.append(f"found with library thresholds {t:g} (after {used} other setting(s))")
    facts = GroupFacts(
        symbol=found.symbol,
        matrices=found.matrices,
        op_class=found.op_class,
        op_names=found.op_names,
        characters=found.characters,
        irrep_names=found.irrep_names,
        permutations=perms,
        atomic_numbers=z,
        bonds=_bonds(z, coords),
        centred_ang=centred,
    )
    return _assemble(facts, centre, tolerance_ang, worst, notes)


def _with_centre(group: PointGroup, centre: np.ndarray) -> PointGroup:
    return dataclasses.replace(group, centre_ang=np.array(centre, dtype=float))
