"""The :class:`PointGroup` data holder and the atom matching every symmetry check uses."""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from vibrapol.structure import distances_ang
from vibrapol.symmetry.printed import normalize_label


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
        """A printed label in this group's spelling.

        'E1' → 'E' where the group has one E species, 'A1g' → 'Ag' in D2h, 'A' → 'A1' where
        the group has A1; see :func:`~vibrapol.symmetry.normalize_label` for the rest.
        """
        name = normalize_label(label)
        if name in self.irreps:
            return name
        for pattern, repl in ((r"^E1", "E"), (r"^A1", "A"), (r"^A(?=[gu]?$)", "A1")):
            alt = re.sub(pattern, repl, name)
            if alt in self.irreps:
                return alt
        return name


def match_atoms(
    matrix: np.ndarray, centred: np.ndarray, species: np.ndarray, tolerance_ang: float
) -> tuple[np.ndarray | None, float]:
    """Permutation of the atoms under one operation, and the largest mismatch in Å.

    Returns ``(None, mismatch)`` when some image has no partner of the same species within
    ``tolerance_ang`` or two images claim the same partner.
    """
    image = centred @ np.asarray(matrix).T
    d = distances_ang(image, centred)
    d[species[:, None] != species[None, :]] = np.inf
    perm = np.argmin(d, axis=1)
    worst = float(np.max(d[np.arange(len(perm)), perm]))
    if worst > tolerance_ang or len(np.unique(perm)) != len(perm):
        return None, worst
    return perm, worst


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
