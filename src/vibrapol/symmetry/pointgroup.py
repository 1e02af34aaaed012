"""Point group of a molecule: operations, atom permutations and character table.

:func:`find_point_group` asks the symmetry library (:mod:`vibrapol.symmetry._msym`) for the
group at a few threshold settings and keeps the largest group whose every operation maps every
atom onto an atom of the same element and mass within ``tolerance_ang``.  That check is ours
and is done in Å, so a loose library setting can never invent symmetry beyond the tolerance.

Linear molecules are handled here without the library: their groups D∞h and C∞v are infinite,
and the vibrations of a linear molecule only span Σ⁺ and Π species (each atom's displacements
along and across the axis).  The analysis uses the finite subgroup D2h (or C2v) with z along
the molecular axis, whose species correlate one to one with those that occur: Σg⁺ ← Ag,
Σu⁺ ← B1u, Πg ← B2g + B3g, Πu ← B2u + B3u, Σg⁻ ← B1g, Σu⁻ ← Au (and for C∞v: Σ⁺ ← A1, Σ⁻ ← A2,
Π ← B1 + B2) (G. Herzberg, *Molecular Spectra and Molecular Structure II*, 1945, correlation
of D∞h with D2h; common practice).  Δ species never occur among the fundamentals.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass

import numpy as np
from ase.data import covalent_radii
from scipy.spatial.distance import cdist

from vibrapol.errors import AccuracyWarning, VibrapolError
from vibrapol.modeset import default_masses
from vibrapol.symmetry import _msym
from vibrapol.symmetry.labels import (
    CONVENTION_DEFAULT,
    GroupFacts,
    improper_angle,
    normalize_label,
    operation_kind,
    rotation_angle,
    standard_names,
)

#: Default largest distance (Å) between an atom's image under a symmetry operation and the
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


class GeometryError(VibrapolError, ValueError):
    """A structure that cannot be analysed (one atom, overlapping atoms, bad shape)."""


@dataclass(frozen=True, eq=False)
class PointGroup:
    """The point group of one molecule in the molecule's own frame.

    Attributes
    ----------
    symbol : str
        Schoenflies symbol ('C2v', 'Td', 'D∞h', ...).
    operations : ndarray (g, 3, 3)
        Cartesian matrix R of each operation; it maps positions relative to ``centre_ang``.
    permutations : ndarray of int (g, N)
        Atom i is carried onto atom ``permutations[k, i]`` by operation k.
    operation_classes : ndarray of int (g,)
        Column of :attr:`characters` (class) of each operation.
    class_labels : tuple of str
        One label per class ('E', '8C3', "σv'(yz)", ...).
    irreps : tuple of str
        Species names (rows of :attr:`characters`), textbook order.
    characters : ndarray (n_irreps, n_classes)
        Real characters.  For linear molecules: the D2h or C2v subgroup, each operation its own
        class, with the Π species as sums of two subgroup species (module notes).
    centre_ang : ndarray (3,)
        Centre of mass, the fixed point of every operation.
    axes : ndarray (3, 3)
        Rows: x, y, z of the labelling frame (see :mod:`vibrapol.symmetry.labels`).
    tolerance_ang : float
        Tolerance the group was accepted with.
    max_deviation_ang : float
        Largest distance between an atom's image and its partner in the given structure.
    convention : str
        The axis convention behind the species names.
    notes : tuple of str
        What was done to find the group (library settings, ties broken, fall-backs).
    linear : bool
    """

    symbol: str
    operations: np.ndarray
    permutations: np.ndarray
    operation_classes: np.ndarray
    class_labels: tuple[str, ...]
    irreps: tuple[str, ...]
    characters: np.ndarray
    centre_ang: np.ndarray
    axes: np.ndarray
    tolerance_ang: float
    max_deviation_ang: float
    convention: str
    notes: tuple[str, ...] = ()
    linear: bool = False

    def __post_init__(self) -> None:
        g = self.operations.shape[0]
        if self.operations.shape != (g, 3, 3) or self.permutations.shape[0] != g:
            raise ValueError("operations must be (g, 3, 3) and permutations (g, N)")
        if self.characters.shape != (len(self.irreps), len(self.class_labels)):
            raise ValueError("characters must be (n_irreps, n_classes)")
        for name in (
            "operations",
            "permutations",
            "operation_classes",
            "characters",
            "centre_ang",
            "axes",
        ):
            getattr(self, name).setflags(write=False)

    @property
    def order(self) -> int:
        """Number of operations (of the finite subgroup for linear molecules)."""
        return int(self.operations.shape[0])

    @property
    def n_atoms(self) -> int:
        """Number of atoms."""
        return int(self.permutations.shape[1])

    @property
    def class_sizes(self) -> np.ndarray:
        """Number of operations in each class."""
        return np.bincount(self.operation_classes, minlength=len(self.class_labels))

    @property
    def op_characters(self) -> np.ndarray:
        """Characters per operation, shape (n_irreps, g)."""
        return self.characters[:, self.operation_classes]

    @property
    def dims(self) -> np.ndarray:
        """Degeneracy of each species (modes per degenerate set)."""
        identity = self.operation_classes[0]
        return np.rint(self.characters[:, identity]).astype(int)

    @property
    def norms(self) -> np.ndarray:
        """⟨χ, χ⟩ = (1/g) Σ χ(R)² of each species.

        1 for irreducible species, 2 for species that combine a complex-conjugate pair (E in
        C3, T, ...) or two subgroup species (Π of linear molecules).
        """
        return np.sum(self.op_characters**2, axis=1) / self.order

    @property
    def totally_symmetric(self) -> str:
        """Name of the totally symmetric species."""
        ones = np.all(np.abs(self.characters - 1.0) < 1e-8, axis=1)
        return self.irreps[int(np.flatnonzero(ones)[0])]

    def index(self, irrep: str) -> int:
        """Row of ``irrep`` in :attr:`characters`, accepting printed spellings ('AG', 'F2')."""
        name = self.species_name(irrep)
        if name not in self.irreps:
            raise KeyError(
                f"{irrep!r} is not a species of {self.symbol} ({', '.join(self.irreps)})"
            )
        return self.irreps.index(name)

    def species_name(self, label: str) -> str:
        """A printed label in this group's spelling ('E1' → 'E' where the group has one E)."""
        name = normalize_label(label)
        if name not in self.irreps:
            alt = re.sub(r"^E1", "E", name)
            if alt in self.irreps:
                return alt
            alt = re.sub(r"^A(?=[gu]?$)", "A1", name)
            if alt in self.irreps:
                return alt
        return name


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


def match_atoms(
    matrix: np.ndarray, centred: np.ndarray, species: np.ndarray, tolerance_ang: float
) -> tuple[np.ndarray | None, float]:
    """Permutation of the atoms under one operation, and the largest mismatch in Å.

    Returns ``(None, mismatch)`` when some image has no partner of the same species within
    ``tolerance_ang`` or two images claim the same partner.
    """
    image = centred @ np.asarray(matrix).T
    d = cdist(image, centred)
    d[species[:, None] != species[None, :]] = np.inf
    perm = np.argmin(d, axis=1)
    worst = float(np.max(d[np.arange(len(perm)), perm]))
    if worst > tolerance_ang or len(np.unique(perm)) != len(perm):
        return None, worst
    return perm, worst


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


# Characters of the D2h subgroup on E, C2(z), C2(y), C2(x), i, σ(xy), σ(xz), σ(yz) and of the C2v
# subgroup on E, C2(z), σ(xz), σ(yz) (standard tables), merged into the species of D∞h / C∞v.
_D2H_DIAG = [
    (1, 1, 1),
    (-1, -1, 1),
    (-1, 1, -1),
    (1, -1, -1),
    (-1, -1, -1),
    (1, 1, -1),
    (1, -1, 1),
    (-1, 1, 1),
]
_D2H_LABELS = ("E", "C2(z)", "C2(y)", "C2(x)", "i", "σ(xy)", "σ(xz)", "σ(yz)")
_DINFH = {
    "Σg⁺": (1, 1, 1, 1, 1, 1, 1, 1),
    "Σg⁻": (1, 1, -1, -1, 1, 1, -1, -1),
    "Πg": (2, -2, 0, 0, 2, -2, 0, 0),
    "Σu⁺": (1, 1, -1, -1, -1, -1, 1, 1),
    "Σu⁻": (1, 1, 1, 1, -1, -1, -1, -1),
    "Πu": (2, -2, 0, 0, -2, 2, 0, 0),
}
_C2V_PICK = (0, 1, 6, 7)
_CINFV = {"Σ⁺": (1, 1, 1, 1), "Σ⁻": (1, 1, -1, -1), "Π": (2, -2, 0, 0)}


def _linear_axis(centred: np.ndarray, masses: np.ndarray) -> tuple[np.ndarray, float]:
    """Axis of the best line through the centre of mass, and the largest distance from it."""
    inertia = np.einsum("i,ij,ik->jk", masses, centred, centred)
    _, vecs = np.linalg.eigh(inertia)
    axis = vecs[:, -1]  # largest second moment = direction of the line
    off = centred - np.outer(centred @ axis, axis)
    return axis, float(np.max(np.linalg.norm(off, axis=1)))


def _linear_group(
    centred: np.ndarray, species: np.ndarray, masses: np.ndarray, axis: np.ndarray, tolerance: float
) -> PointGroup | None:
    frame = _msym_free_frame(axis)
    mats = np.array([frame.T @ np.diag(d) @ frame for d in _D2H_DIAG])
    centro = match_atoms(-np.eye(3), centred, species, tolerance)[0] is not None
    picks = range(8) if centro else _C2V_PICK
    table = _DINFH if centro else _CINFV
    perms, worst = [], 0.0
    for k in picks:
        perm, dev = match_atoms(mats[k], centred, species, tolerance)
        if perm is None:
            return None
        perms.append(perm)
        worst = max(worst, dev)
    n = len(picks)
    return PointGroup(
        symbol="D∞h" if centro else "C∞v",
        operations=mats[list(picks)],
        permutations=np.array(perms),
        operation_classes=np.arange(n),
        class_labels=tuple(_D2H_LABELS[k] for k in picks),
        irreps=tuple(table),
        characters=np.array(list(table.values()), dtype=float),
        centre_ang=np.zeros(3),
        axes=frame,
        tolerance_ang=tolerance,
        max_deviation_ang=worst,
        convention="linear molecule: z along the molecular axis; operations of the "
        + ("D2h" if centro else "C2v")
        + " subgroup, species correlated to "
        + ("D∞h" if centro else "C∞v"),
        notes=(),
        linear=True,
    )


def _msym_free_frame(axis: np.ndarray) -> np.ndarray:
    z = axis / np.linalg.norm(axis)
    trial = np.eye(3)[int(np.argmin(np.abs(z)))]
    x = trial - (trial @ z) * z
    x /= np.linalg.norm(x)
    return np.array([x, np.cross(z, x), z])


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

    axis, off_axis = _linear_axis(centred, masses)
    if off_axis <= tolerance_ang / 2:
        group = _linear_group(centred, species, masses, axis, tolerance_ang)
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
    import dataclasses

    return dataclasses.replace(group, centre_ang=np.array(centre, dtype=float))


def symmetrize_coordinates(coordinates_ang: np.ndarray, group: PointGroup) -> np.ndarray:
    """The nearest structure with the full symmetry of ``group``.

    Each atom is replaced by the average of the images of its partners:
    x̄_i = c + (1/g) Σ_R Rᵀ (x_π_R(i) − c), the projection onto the totally symmetric part of
    the displacements (exact when the operations form a group, as they do here).
    """
    x = np.asarray(coordinates_ang, dtype=float) - group.centre_ang
    total = np.zeros_like(x)
    for matrix, perm in zip(group.operations, group.permutations, strict=True):
        total += x[perm] @ matrix
    return group.centre_ang + total / group.order
