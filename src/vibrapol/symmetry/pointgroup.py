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
from typing import Any

import numpy as np
from ase.data import covalent_radii

from vibrapol.errors import AccuracyWarning, GeometryError
from vibrapol.modeset import default_masses
from vibrapol.structure import check_structure, distances_ang, structure_arrays
from vibrapol.symmetry import _msym
from vibrapol.symmetry.abelian import abelian_group
from vibrapol.symmetry.group import PointGroup, match_atoms, symmetrize_coordinates
from vibrapol.symmetry.labels import CONVENTION_DEFAULT, GroupFacts, standard_names
from vibrapol.symmetry.linear import linear_axis, linear_group
from vibrapol.symmetry.operations import improper_angle, operation_kind, rotation_angle

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

#: Two atoms are bonded when closer than this factor times the sum of covalent radii (used
#: only to break ties in the axis conventions).
BOND_FACTOR = 1.2


def _species_ids(z: np.ndarray, masses: np.ndarray) -> np.ndarray:
    keys: dict[tuple[int, float], int] = {}
    return np.array(
        [
            keys.setdefault((int(a), round(float(m), 6)), len(keys))
            for a, m in zip(z, masses, strict=True)
        ]
    )


def _bonds(z: np.ndarray, coords: np.ndarray) -> np.ndarray:
    r = covalent_radii[z]
    d = distances_ang(coords, coords)
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
    atomic_numbers: np.ndarray | Any,
    coordinates_ang: np.ndarray | None = None,
    masses_da: np.ndarray | None = None,
    *,
    tolerance_ang: float = DEFAULT_TOLERANCE_ANG,
    where: str = "",
) -> PointGroup:
    """Point group of a molecule, with operations, permutations and standard species names.

    Parameters
    ----------
    atomic_numbers : array of int (N,), or ase.Atoms
        An ``ase.Atoms`` gives the numbers, the coordinates and, when set with
        ``set_masses``, the masses (ASE's default masses are not used: the default below is).
    coordinates_ang : array (N, 3)
        Cartesian coordinates in Å, in any orientation (not with an ``ase.Atoms``).
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
    if coordinates_ang is None:
        atomic_numbers, coordinates_ang, masses_da = structure_arrays(atomic_numbers, masses_da)
    z = np.asarray(atomic_numbers, dtype=int).ravel()
    coords = np.asarray(coordinates_ang, dtype=float)
    check_structure(z, coords, where)
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

    best, failures, notes = _search(z, centred, masses, species, tolerance_ang)
    own = abelian_group(centred, species, masses, tolerance_ang)
    if own is not None and (best is None or len(own["matrices"]) > len(best[0].matrices)):
        missed = best[0].symbol if best else "no group"
        notes = [f"found by our own search along the principal axes (the library: {missed})"]
        worst = own.pop("deviation")
        facts = GroupFacts(**own, atomic_numbers=z, bonds=_bonds(z, coords), centred_ang=centred)
        return _assemble(facts, centre, tolerance_ang, worst, notes)
    if best is None:
        real = [f for f in failures if "no primary axis" not in f]
        if real and len(failures) == len(_msym.THRESHOLD_LADDER):
            warnings.warn(
                f"{where or 'structure'}: the symmetry library failed at every setting "
                f"({real[0]}); treating the molecule as C1",
                AccuracyWarning,
                stacklevel=2,
            )
        notes.append(f"no symmetry operation other than E within {tolerance_ang} Å")
        return _trivial_group(len(z), centre, tolerance_ang, notes)
    found, perms, worst = best
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


def _accept(
    found: _msym.MsymGroup, centred: np.ndarray, species: np.ndarray, tolerance: float
) -> tuple[list[int], list[np.ndarray], float]:
    """Indices, permutations and largest mismatch of the operations that pass our check."""
    keep, perms, worst = [], [], 0.0
    for k, m in enumerate(found.matrices):
        perm, dev = match_atoms(m, centred, species, tolerance)
        if perm is not None:
            keep.append(k)
            perms.append(perm)
            worst = max(worst, dev)
    return keep, perms, worst


#: Re-fitting of the library's axes: atoms are matched within this multiple of the tolerance.
REFIT_MATCH = 5.0


def _refine(
    matrices: np.ndarray,
    centred: np.ndarray,
    species: np.ndarray,
    masses: np.ndarray,
    tolerance: float,
    cycles: int = 4,
) -> np.ndarray | None:
    """The same group turned to fit the atoms best, or None if atoms cannot be matched.

    The library fits its axes to noisy coordinates only roughly: on C60 with ±0.001 Å noise
    its Ih operations moved atoms by up to 0.026 Å.  Each cycle averages the structure over
    the operations (an exactly symmetric structure in the library's orientation) and turns the
    operations by the rotation that best superimposes that structure on the atoms (W. Kabsch,
    Acta Cryst. A32, 922 (1976)).  Conjugating by a rotation keeps the group's classes and
    characters.
    """
    mats = np.array(matrices, dtype=float)
    w = np.sqrt(masses)[:, None]
    for _ in range(cycles):
        averaged = np.zeros_like(centred)
        for m in mats:
            perm, _ = match_atoms(m, centred, species, REFIT_MATCH * tolerance)
            if perm is None:
                return None
            averaged += centred[perm] @ m
        averaged /= len(mats)
        u, _, vt = np.linalg.svd((w * averaged).T @ (w * centred))
        d = np.sign(np.linalg.det(vt.T @ u.T))
        rot = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
        mats = rot @ mats @ rot.T
    return mats


def _closed(matrices: np.ndarray) -> bool:
    flat = matrices.reshape(len(matrices), 9)
    for a in matrices:
        prod = (a @ matrices).reshape(len(matrices), 9)
        if np.max(np.min(distances_ang(prod, flat), axis=1)) > 1e-6:
            return False
    return True


def _search(
    z: np.ndarray, centred: np.ndarray, masses: np.ndarray, species: np.ndarray, tolerance: float
) -> tuple[tuple | None, list[str], list[str]]:
    """Largest group whose operations all pass the check in Å, over the threshold ladder.

    When a loose setting reports a group some of whose operations fail the check, the ones that
    pass may still form a subgroup: the structure is then averaged over that subgroup and
    handed to the library again at its tight defaults, which finds exactly the subgroup and its
    character table (noted as help given to the library).
    """
    best, failures, notes = None, [], []
    for k, thresholds in enumerate(_msym.thresholds_for(tolerance)):
        try:
            found = _msym.detect(z, centred, masses, thresholds)
        except Exception as exc:  # the library raises its own Error or ctypes errors
            failures.append(str(getattr(exc, "details", "") or exc))
            continue
        if found.symbol in ("D0h", "C0v"):
            continue
        keep, perms, worst = _accept(found, centred, species, tolerance)
        note = ""
        if len(keep) < len(found.matrices):
            refined = _refine(found.matrices, centred, species, masses, tolerance)
            if refined is not None:
                trial = dataclasses.replace(found, matrices=refined)
                t_keep, t_perms, t_worst = _accept(trial, centred, species, tolerance)
                if len(t_keep) == len(refined):
                    found, keep, perms, worst = trial, t_keep, t_perms, t_worst
                    note = f"the library's {found.symbol} axes were re-fitted to the atoms"
        if len(keep) < len(found.matrices):
            mats = found.matrices[keep]
            if len(keep) < 2 or not _closed(mats):
                continue
            averaged = np.zeros_like(centred)
            for m, perm in zip(mats, perms, strict=True):
                averaged += centred[perm] @ m
            try:
                found = _msym.detect(z, averaged / len(keep), masses, _msym.TIGHT)
            except Exception:  # the library failed on the averaged structure too
                continue
            keep, perms, worst = _accept(found, centred, species, tolerance)
            if len(keep) < len(found.matrices):
                continue
            note = (
                f"the library reported {found.symbol} only after averaging the structure over "
                f"the operations that passed (its loose setting claimed a larger group)"
            )
        if best is None or len(found.matrices) > len(best[0].matrices):
            best = (found, np.array(perms), worst)
            notes = [note] if note else []
            if k:
                notes.append(f"found with library thresholds {thresholds['geometry']:g}")
    return best, failures, notes


def _with_centre(group: PointGroup, centre: np.ndarray) -> PointGroup:
    return dataclasses.replace(group, centre_ang=np.array(centre, dtype=float))
