"""Internal coordinates of a molecule from its connectivity, and their Wilson B matrix.

Bonds come from ASE's covalent radii; atoms are grouped into chemically equivalent classes
(elements and isotopes refined by their neighbours); every coordinate carries the words of its
class (:class:`InternalCoordinate`).  Used by :mod:`vibrapol.describe`.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from ase.data import chemical_symbols, covalent_radii

#: Atoms closer than this multiple of the sum of their covalent radii (ASE's table) are bonded;
#: the usual margin over the tabulated radii (common practice; ASE's ``natural_cutoffs``
#: scales the same radii).
BOND_FACTOR = 1.2

#: Angles above this (degrees) are treated as linear: bent in two perpendicular planes.
LINEAR_ANGLE_DEG = 170.0

#: Step of the numerical B matrix, Å.
B_STEP_ANG = 1.0e-4

_DASH = "–"


@dataclass(frozen=True)
class InternalCoordinate:
    """One internal coordinate of a molecule.

    Attributes
    ----------
    kind : {"stretch", "bend", "linear bend", "out-of-plane", "torsion"}
    atoms : tuple of int
        0-based atom indices: (i, j) bond; (i, j, k) angle at j; (i, j, k, l) out-of-plane of
        bond j–i from the plane of j, k, l; (j, k) torsion about the bond j–k (the mean of
        every dihedral about it).
    group : str
        Words naming the equivalence class, e.g. ``"C–H stretch"``.
    signed : bool
        Whether the sign of a displacement compares across equivalent coordinates (stretches
        and bends).
    equivalence : tuple
        Equal for chemically equivalent coordinates (kind and atom classes).
    pattern : tuple of int
        For a bend H–X–Y of an XH2 group, its sign in the wag, rock and twist (else empty).
    depends : tuple of int
        Every atom whose motion changes the value (the torsion's outer atoms too).
    """

    kind: str
    atoms: tuple[int, ...]
    group: str
    signed: bool
    equivalence: tuple = ()
    pattern: tuple[int, ...] = ()
    depends: tuple[int, ...] = ()


#: Motions of an XH2 group with two other neighbours (Y, Z), by the signs of its four H–X–Y/Z
#: bends (Ha–Y, Ha–Z, Hb–Y, Hb–Z): the H atoms tilting together towards Y (wag), turning in
#: their own plane (rock) or in opposite senses about the bisector (twist); all four together
#: go with the H–X–H bend (scissors).
GROUP_MOTIONS = ("wag", "rock", "twist")


def bonds(
    atomic_numbers: Sequence[int] | np.ndarray, coordinates_ang: np.ndarray
) -> list[tuple[int, int]]:
    """Bonded pairs (i < j): distance below :data:`BOND_FACTOR` × the sum of covalent radii."""
    z = np.asarray(atomic_numbers, dtype=int)
    x = np.asarray(coordinates_ang, dtype=float)
    r = covalent_radii[z]
    d = np.linalg.norm(x[:, None, :] - x[None, :, :], axis=-1)
    limit = BOND_FACTOR * (r[:, None] + r[None, :])
    return [(i, j) for i in range(len(z)) for j in range(i + 1, len(z)) if d[i, j] < limit[i, j]]


def atom_classes(labels: Sequence, pairs: Sequence[tuple[int, int]]) -> list[int]:
    """Classes of chemically equivalent atoms.

    The labels (elements, isotopes) refined by the classes of the neighbours until stable.
    """
    z = list(labels)
    neighbours: list[list[int]] = [[] for _ in z]
    for i, j in pairs:
        neighbours[i].append(j)
        neighbours[j].append(i)
    first = {label: n for n, label in enumerate(sorted(set(z)))}
    classes = [first[label] for label in z]
    for _ in range(len(z)):
        keys = [
            (classes[i], tuple(sorted(classes[k] for k in neighbours[i]))) for i in range(len(z))
        ]
        order = {key: n for n, key in enumerate(sorted(set(keys)))}
        new = [order[k] for k in keys]
        if len(set(new)) == len(set(classes)):
            return new
        classes = new
    return classes


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product of two 3-vectors (numpy's general ``cross`` is slow for single vectors)."""
    return np.array(
        [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
    )


def _unit(v: np.ndarray) -> np.ndarray:
    return v / np.linalg.norm(v)


def _angle(x: np.ndarray, i: int, j: int, k: int) -> float:
    a, b = _unit(x[i] - x[j]), _unit(x[k] - x[j])
    return float(np.arctan2(np.linalg.norm(_cross(a, b)), a @ b))


def _dihedral(x: np.ndarray, i: int, j: int, k: int, l: int) -> float:  # noqa: E741
    b0, b1, b2 = x[j] - x[i], x[k] - x[j], x[l] - x[k]
    n1, n2 = _cross(b0, b1), _cross(b1, b2)
    m = _cross(n1, _unit(b1))
    return float(np.arctan2(m @ n2, n1 @ n2))


def _out_of_plane(x: np.ndarray, i: int, j: int, k: int, l: int) -> float:  # noqa: E741
    normal = _unit(_cross(x[k] - x[j], x[l] - x[j]))
    return float(np.arcsin(np.clip(normal @ _unit(x[i] - x[j]), -1.0, 1.0)))


def _perpendiculars(axis: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    trial = np.eye(3)[int(np.argmin(np.abs(axis)))]
    u = _unit(_cross(axis, trial))
    return u, _cross(axis, u)


#: Names of the heavy hydrogen isotopes, by mass in Da (most abundant isotope masses, common
#: practice), told apart within 0.1 Da.
HYDROGEN_ISOTOPES = {"D": 2.014, "T": 3.016}


def atom_labels(
    atomic_numbers: Sequence[int] | np.ndarray, masses_da: Sequence[float] | np.ndarray | None
) -> list[str]:
    """Element symbol of every atom; 'D' and 'T' for heavy hydrogen when the masses say so."""
    out = []
    for n, z in enumerate(atomic_numbers):
        label = chemical_symbols[int(z)]
        if int(z) == 1 and masses_da is not None:
            for name, mass in HYDROGEN_ISOTOPES.items():
                if abs(float(masses_da[n]) - mass) < 0.1:
                    label = name
        out.append(label)
    return out


def _hydride(z: Sequence[int], labels: list[str], neighbours: list[list[int]], j: int) -> str:
    """'CH2' ('CD2') for a heavy atom j with two or more H neighbours, else ''."""
    hs = [k for k in neighbours[j] if z[k] == 1]
    if z[j] == 1 or len(hs) < 2:
        return ""
    h = labels[hs[0]] if len({labels[k] for k in hs}) == 1 else "H"
    return f"{labels[j]}{h}{len(hs)}"


class _Builder:
    """Collects coordinates with their value functions and names them."""

    def __init__(self, z: list[int], x0: np.ndarray, labels: list[str]) -> None:
        self.z, self.x0, self.labels = z, x0, labels
        pairs = bonds(z, x0)
        self.pairs = pairs
        self.cls = atom_classes(labels, pairs)
        self.neighbours: list[list[int]] = [[] for _ in z]
        for i, j in pairs:
            self.neighbours[i].append(j)
            self.neighbours[j].append(i)
        self.items: list[tuple] = []
        self.funcs: list[Callable[[np.ndarray], float]] = []

    def key(self, *atoms: int) -> tuple[int, ...]:
        c = tuple(self.cls[a] for a in atoms)
        return min(c, c[::-1])

    def bond_name(self, i: int, j: int) -> str:
        """'C–H', 'O–H', 'C–Cl': the atom with more bonds first, then the heavier."""
        z, nb = self.z, self.neighbours
        a, b = sorted((i, j), key=lambda n: (-len(nb[n]), -z[n]))
        return f"{self.labels[a]}{_DASH}{self.labels[b]}"

    def angle_name(self, i: int, j: int, k: int) -> str:
        """'H–C–Cl': the outer atoms lighter first."""
        a, b = sorted((i, k), key=lambda n: self.z[n])
        return _DASH.join(self.labels[n] for n in (a, j, b))

    def add(self, kind, atoms, words, tag, signed, key, func, pattern=(), depends=()) -> None:  # noqa: ANN001
        self.items.append(
            (kind, atoms, words, tag, signed, (kind, *key), pattern, tuple(depends) or atoms)
        )
        self.funcs.append(func)

    def is_xh2(self, j: int) -> bool:
        """Whether atom j carries exactly two terminal H atoms and has other neighbours."""
        nbs = self.neighbours
        hs = [n for n in nbs[j] if self.z[n] == 1 and len(nbs[n]) == 1]
        return len(hs) == 2 and len(nbs[j]) >= 3

    def xh2_pattern(self, i: int, j: int, k: int) -> tuple[int, ...]:
        """Signs (wag, rock, twist) of the bend i–j–k in an XH2 group at j, else ()."""
        z, nbs = self.z, self.neighbours
        hs = sorted(n for n in nbs[j] if z[n] == 1 and len(nbs[n]) == 1)
        others = sorted(n for n in nbs[j] if n not in hs)
        if len(nbs[j]) != 4 or len(hs) != 2 or (i in hs) == (k in hs):
            return ()
        h, other = (i, k) if i in hs else (k, i)
        wag = 1 if other == others[0] else -1
        rock = 1 if h == hs[0] else -1
        return (wag, rock, wag * rock)

    def coordinates(self) -> list[InternalCoordinate]:
        """The coordinates, words tagged ('(CH2)') only where inequivalent classes share them."""
        classes: dict[str, set[tuple]] = {}
        for _, _, words, _, _, eq, _, _ in self.items:
            classes.setdefault(words, set()).add(eq)
        out = []
        for kind, atoms, words, tag, signed, eq, pattern, depends in self.items:
            shared = len(classes[words]) > 1 and tag
            name = f"{words} ({tag})" if shared else words
            out.append(InternalCoordinate(kind, atoms, name, signed, eq, pattern, depends))
        return out


def internal_coordinates(
    atomic_numbers: Sequence[int] | np.ndarray,
    coordinates_ang: np.ndarray,
    masses_da: Sequence[float] | np.ndarray | None = None,
) -> tuple[list[InternalCoordinate], list[Callable[[np.ndarray], float]]]:
    """The internal coordinates of a molecule and the function giving each one's value.

    Stretches of every bond; bends of every angle between two bonds at one atom (two
    perpendicular linear bends above :data:`LINEAR_ANGLE_DEG`); for an atom with exactly three
    bonds, one out-of-plane wag (the bond to a terminal atom, or the first bond, from the plane
    of the other two: the three wags of one atom measure nearly the same motion, so one is
    kept); one torsion per bond between two atoms that have other neighbours (the mean of the
    dihedrals about it).

    With ``masses_da``, deuterium and tritium are named D and T (and are not equivalent to H).

    Returns
    -------
    (list of InternalCoordinate, list of callable)
        The coordinates, and for each a function of the (N, 3) coordinates in Å.
    """
    z = [int(v) for v in atomic_numbers]
    x0 = np.asarray(coordinates_ang, dtype=float)
    labels = atom_labels(z, masses_da)
    build = _Builder(z, x0, labels)
    nbs = build.neighbours
    for i, j in build.pairs:
        tag = _hydride(z, labels, nbs, i if z[j] == 1 else j) if 1 in (z[i], z[j]) else ""
        build.add(
            "stretch",
            (i, j),
            f"{build.bond_name(i, j)} stretch",
            tag,
            True,
            build.key(i, j),
            lambda x, i=i, j=j: float(np.linalg.norm(x[i] - x[j])),
        )
    for j in range(len(z)):
        nb = sorted(nbs[j])
        for a in range(len(nb)):
            for b in range(a + 1, len(nb)):
                i, k = nb[a], nb[b]
                tag = _hydride(z, labels, nbs, j) if 1 in (z[i], z[k]) else ""
                words = f"{build.angle_name(i, j, k)} bend"
                key = build.key(i, j, k)
                pattern = build.xh2_pattern(i, j, k)
                if pattern:  # one group of the four bends, named by their motion
                    words, tag = f"{_hydride(z, labels, nbs, j)} deformation", ""
                elif build.is_xh2(j) and z[i] == z[k] == 1:
                    words, tag = f"{_hydride(z, labels, nbs, j)} scissors", ""
                if np.degrees(_angle(x0, i, j, k)) < LINEAR_ANGLE_DEG:
                    build.add(
                        "bend",
                        (i, j, k),
                        words,
                        tag,
                        True,
                        key,
                        lambda x, i=i, j=j, k=k: _angle(x, i, j, k),
                        pattern,
                    )
                    continue
                for n, u in enumerate(_perpendiculars(_unit(x0[k] - x0[i]))):
                    build.add(
                        "linear bend",
                        (i, j, k),
                        words,
                        tag,
                        False,
                        (*key, n),
                        lambda x, i=i, j=j, k=k, u=u: float(
                            (_unit(x[i] - x[j]) + _unit(x[k] - x[j])) @ u
                        ),
                    )
        if len(nb) == 3:
            terminal = [n for n in nb if len(nbs[n]) == 1]
            i = min(terminal, key=lambda n: z[n]) if terminal else nb[0]
            k, m = (n for n in nb if n != i)
            words = f"{build.bond_name(j, i)} out-of-plane"
            tag = _hydride(z, labels, nbs, j) if z[i] == 1 else ""
            build.add(
                "out-of-plane",
                (i, j, k, m),
                words,
                tag,
                False,
                (build.cls[j], build.cls[i]),
                lambda x, i=i, j=j, k=k, m=m: _out_of_plane(x, i, j, k, m),
            )
    for j, k in build.pairs:
        dihedrals = [
            (i, l)
            for i in nbs[j]
            if i != k
            for l in nbs[k]  # noqa: E741
            if l not in (j, i)
            and np.degrees(_angle(x0, i, j, k)) < LINEAR_ANGLE_DEG
            and np.degrees(_angle(x0, j, k, l)) < LINEAR_ANGLE_DEG
        ]
        if not dihedrals:
            continue
        ref = [_dihedral(x0, i, j, k, m) for i, m in dihedrals]

        def torsion(x, j=j, k=k, dihedrals=dihedrals, ref=ref) -> float:  # noqa: ANN001
            # mean change of every dihedral about j–k, unwrapped around the reference values
            d = [_dihedral(x, i, j, k, m) - r for (i, m), r in zip(dihedrals, ref, strict=True)]
            return float(np.mean(np.angle(np.exp(1j * np.array(d)))))

        build.add(
            "torsion",
            (j, k),
            f"{build.bond_name(j, k)} torsion",
            "",
            False,
            build.key(j, k),
            torsion,
            depends=sorted({j, k, *(a for pair in dihedrals for a in pair)}),
        )
    return build.coordinates(), build.funcs


def b_matrix(
    funcs: Sequence[Callable[[np.ndarray], float]],
    coordinates_ang: np.ndarray,
    depends: Sequence[Sequence[int]] | None = None,
) -> np.ndarray:
    """Wilson B matrix ∂S/∂x (rows: coordinates; columns: 3N Cartesians), central differences.

    ``depends``: the atoms each coordinate depends on (the other columns are zero); default
    every atom.
    """
    x0 = np.asarray(coordinates_ang, dtype=float)
    out = np.zeros((len(funcs), x0.size))
    every = range(x0.shape[0])
    for r, f in enumerate(funcs):
        for atom in every if depends is None else depends[r]:
            for axis in range(3):
                plus, minus = x0.copy(), x0.copy()
                plus[atom, axis] += B_STEP_ANG
                minus[atom, axis] -= B_STEP_ANG
                out[r, 3 * atom + axis] = (f(plus) - f(minus)) / (2 * B_STEP_ANG)
    return out
