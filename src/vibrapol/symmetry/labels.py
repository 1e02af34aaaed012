"""Standard names of symmetry species and the axis conventions behind them.

The symmetry library names species in its own frame.  Most names do not depend on the frame,
but some do, and there the literature follows fixed conventions which this module applies:

- **C2v**: z is the C2 axis; B1 is symmetric under σv(xz), B2 under σv'(yz).  For a planar
  molecule x is perpendicular to the molecular plane (R. S. Mulliken, J. Chem. Phys. 23, 1997
  (1955)), so the molecular plane is yz and water's antisymmetric stretch is B2.  For a
  non-planar molecule we extend the rule: yz is the mirror plane holding more atoms (on a tie,
  the heavier ones), e.g. the CCl2 plane of CH2Cl2.
- **D2h and D2**: B1, B2, B3 are symmetric under C2(z), C2(y), C2(x).  Planar molecules:
  x perpendicular to the plane and z along the in-plane C2 axis through more atoms, or else
  cutting more bonds (Mulliken 1955): ethylene's z is the C=C axis, naphthalene's the short
  axis.  Non-planar: z, y, x are the C2 axes through most to fewest atoms (then bonds cut).
- **Cnv, Dn, Dnh with even n ≥ 4**: σv (for Cnv) and C2′ (for Dn, Dnh) are the elements
  through more atoms; B1 is symmetric under them (common practice, e.g. benzene's C2′ through
  the C–H bonds).  In Dnh, σv are the vertical planes that contain the C2′ axes.
- Elsewhere the names are those of the standard tables (F. A. Cotton, *Chemical Applications of
  Group Theory*, 3rd ed., Wiley 1990): E rather than E1 when a group has a single E species,
  A rather than A1 in D2 and D2h, T (never F) for triply degenerate species.
- Linear molecules: Σ⁺, Σ⁻, Π (C∞v) and Σg⁺, Σu⁺, Πg, Πu, ... (D∞h); see
  :mod:`vibrapol.symmetry.pointgroup` for how they are computed.

:func:`vibrapol.symmetry.printed.normalize_label` reads labels printed by quantum-chemistry
programs ('AG', 'B1U', 'F2', 'SGG', 'PIU', 'A"', ...) into these names.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from vibrapol.symmetry.operations import (
    improper_angle,
    operation_axis,
    operation_kind,
    rotation_angle,
)

#: Two directions are the same axis when |cos| exceeds this.
_PARALLEL = 0.99
#: ... and perpendicular when |cos| is below this.
_PERPENDICULAR = 0.1

CONVENTION_DEFAULT = "as in the standard character tables (Cotton 1990)"


@dataclass(frozen=True)
class NamedTable:
    """Species names, class labels and labelling frame of one point group.

    Attributes
    ----------
    irreps : tuple of str
        Standard name of each species, in the row order of the library's table.
    class_labels : tuple of str
        Label of each class ('E', '2C3', "3σv", "C2(z)", ...).
    axes : ndarray (3, 3)
        Rows are the x, y, z axes of the labelling frame in the input frame.
    convention : str
        One sentence stating the axis convention used for the names.
    notes : tuple of str
        Ties broken arbitrarily and other things a reader should know.
    """

    irreps: tuple[str, ...]
    class_labels: tuple[str, ...]
    axes: np.ndarray
    convention: str
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class GroupFacts:
    """What the labelling needs to know about a detected group and the molecule.

    Attributes
    ----------
    symbol : str
    matrices : ndarray (g, 3, 3)
    op_class : ndarray (g,)
    op_names : tuple of str
        Library name of each operation (used for class labels).
    characters : ndarray (n_irreps, n_classes)
    irrep_names : tuple of str
        Library names.
    permutations : ndarray (g, N)
    atomic_numbers : ndarray (N,)
    bonds : ndarray (n_bonds, 2)
        Index pairs of bonded atoms.
    centred_ang : ndarray (N, 3)
    """

    symbol: str
    matrices: np.ndarray
    op_class: np.ndarray
    op_names: tuple[str, ...]
    characters: np.ndarray
    irrep_names: tuple[str, ...]
    permutations: np.ndarray
    atomic_numbers: np.ndarray
    bonds: np.ndarray
    centred_ang: np.ndarray

    @property
    def n_classes(self) -> int:
        """Number of conjugacy classes."""
        return self.characters.shape[1]

    def rep(self, c: int) -> int:
        """Index of the first operation of class ``c``."""
        return int(np.flatnonzero(self.op_class == c)[0])

    def size(self, c: int) -> int:
        """Number of operations in class ``c``."""
        return int(np.sum(self.op_class == c))

    def axis(self, c: int) -> np.ndarray:
        """Rotation axis (proper or improper) or plane normal of class ``c``'s representative."""
        return operation_axis(self.matrices[self.rep(c)])

    def kind(self, c: int) -> str:
        """'E', 'C' (proper rotation), 'σ' (reflection), 'i' or 'S' (other improper rotation)."""
        return operation_kind(self.matrices[self.rep(c)])

    def score(self, c: int) -> tuple[int, int, int]:
        """(atoms on the element, bonds it cuts, sum of Z on it) for class ``c``.

        An atom lies on the axis or plane of an operation when the operation leaves it in place;
        a bond is cut when the operation swaps its two atoms.
        """
        perm = self.permutations[self.rep(c)]
        fixed = perm == np.arange(perm.shape[0])
        cut = sum(1 for i, j in self.bonds if perm[i] == j and perm[j] == i)
        return int(fixed.sum()), int(cut), int(self.atomic_numbers[fixed].sum())


def _is_c2(facts: GroupFacts, c: int) -> bool:
    return facts.kind(c) == "C" and abs(rotation_angle(facts.matrices[facts.rep(c)]) - np.pi) < 1e-3


def _principal_axis(facts: GroupFacts) -> np.ndarray | None:
    """Axis of the proper or improper rotation of highest order (None for C1, Ci, Cs)."""
    best, best_angle = None, 2 * np.pi
    for m in facts.matrices:
        kind = operation_kind(m)
        if kind in ("C", "S"):
            angle = rotation_angle(m) if kind == "C" else improper_angle(m)
            if angle < best_angle - 1e-6:
                best, best_angle = operation_axis(m), angle
    return best


def _frame(z: np.ndarray, x_hint: np.ndarray | None, centred: np.ndarray) -> np.ndarray:
    z = z / np.linalg.norm(z)
    candidates = [] if x_hint is None else [np.asarray(x_hint, dtype=float)]
    # Otherwise attach x to the molecule: the atom farthest from the z axis, then lab axes.
    perp = centred - np.outer(centred @ z, z)
    if len(perp):
        candidates.append(perp[int(np.argmax(np.linalg.norm(perp, axis=1)))])
    candidates += list(np.eye(3))
    for x in candidates:
        x = x - (x @ z) * z
        if np.linalg.norm(x) > 1e-3:
            x = x / np.linalg.norm(x)
            return np.array([x, np.cross(z, x), z])
    raise AssertionError("no axis perpendicular to z")  # pragma: no cover


def _best(
    facts: GroupFacts,
    classes: list[int],
    notes: list[str],
    what: str,
    extra: Callable[[int], tuple] | None = None,
) -> tuple[int, int]:
    """The class with the higher score (then ``extra(c)``) and the other; notes a tie."""
    a, b = classes

    def key(c: int) -> tuple:
        return (facts.score(c), extra(c) if extra else ())

    sa, sb = key(a), key(b)
    if sa == sb:
        notes.append(f"{what}: both candidates hold the same atoms; the choice is arbitrary")
    return (a, b) if sa >= sb else (b, a)


def _b_name(name: str, subscript: str) -> str:
    m = re.fullmatch(r"B\d?(.*)", name)
    return f"B{subscript}{m.group(1)}" if m else name


def _parity(facts: GroupFacts, row: int, inversion: int | None) -> str:
    if inversion is None:
        return ""
    return "g" if facts.characters[row, inversion] > 0 else "u"


def _find(facts: GroupFacts, kind: str) -> list[int]:
    return [c for c in range(facts.n_classes) if facts.kind(c) == kind]


def _label(facts: GroupFacts, c: int, name: str | None = None) -> str:
    size = facts.size(c)
    return f"{size if size > 1 else ''}{name or facts.op_names[facts.rep(c)]}"


@dataclass(eq=False)
class _Naming:
    """Names, labels and frame of one group while the rules of its family are applied."""

    facts: GroupFacts
    names: list[str]
    labels: list[str]
    one_d: list[int]
    inversion: int | None
    z: np.ndarray | None
    x_hint: np.ndarray | None = None
    convention: str = CONVENTION_DEFAULT
    notes: list[str] = field(default_factory=list)

    @property
    def chars(self) -> np.ndarray:
        return self.facts.characters


def standard_names(facts: GroupFacts) -> NamedTable:
    """Standard species names, class labels and labelling frame for a detected group.

    Parameters
    ----------
    facts : GroupFacts

    Returns
    -------
    NamedTable
    """
    identity = _find(facts, "E")[0]
    w = _Naming(
        facts,
        names=list(facts.irrep_names),
        labels=[_label(facts, c) for c in range(facts.n_classes)],
        one_d=[
            r for r in range(len(facts.irrep_names)) if round(facts.characters[r, identity]) == 1
        ],
        inversion=next(iter(_find(facts, "i")), None),
        z=_principal_axis(facts),
    )
    symbol = facts.symbol
    m = re.fullmatch(r"([CDS])(\d+)([hvd]?)", symbol)
    family, n, sub = (m.group(1), int(m.group(2)), m.group(3)) if m else (symbol, 0, "")
    if symbol == "C2v":
        _name_c2v(w)
    elif symbol in ("D2", "D2h"):
        _name_d2(w)
    elif family in ("C", "D") and n >= 2 and w.z is not None:
        if family == "C" and sub == "v":
            _name_cnv(w, w.z, n)
        elif family == "D":
            _name_dn(w, w.z, n, sub)
    elif symbol in ("T", "Td", "Th", "O", "Oh", "I", "Ih"):
        _frame_cubic(w)
    elif symbol == "Cs":
        w.z = facts.axis(_find(facts, "σ")[0])
    axes = np.eye(3) if w.z is None else _frame(w.z, w.x_hint, facts.centred_ang)
    names = _finish_names(w)
    return NamedTable(tuple(names), tuple(w.labels), axes, w.convention, tuple(w.notes))


def _name_c2v(w: _Naming) -> None:
    """C2v: z the C2 axis, yz the mirror plane holding more (then heavier) atoms."""
    facts, names, chars = w.facts, w.names, w.chars
    c2 = _find(facts, "C")[0]
    yz, xz = _best(facts, _find(facts, "σ"), w.notes, "C2v yz plane")
    w.z, w.x_hint = facts.axis(c2), facts.axis(yz)
    for r in w.one_d:
        if chars[r, c2] < 0:
            names[r] = "B1" if chars[r, xz] > 0 else "B2"
    w.labels[c2], w.labels[xz], w.labels[yz] = "C2", "σv(xz)", "σv'(yz)"
    n_atoms = facts.permutations.shape[1]
    if facts.score(yz)[0] == n_atoms:
        w.convention = "planar C2v: x perpendicular to the molecular plane (Mulliken 1955)"
    else:
        w.convention = "C2v: yz is the mirror plane holding more (then heavier) atoms"


def _name_d2(w: _Naming) -> None:
    """D2 and D2h: the three C2 axes ranked into z, y, x; species A, B1, B2, B3."""
    facts, names, chars, symbol = w.facts, w.names, w.chars, w.facts.symbol
    c2s = [c for c in _find(facts, "C")]
    planar = [c for c in _find(facts, "σ") if facts.score(c)[0] == facts.permutations.shape[1]]
    ranked = sorted(c2s, key=facts.score, reverse=True)
    if len({facts.score(c) for c in c2s}) < 3 and not planar:
        w.notes.append(f"{symbol}: C2 axes with equal atom counts; their order is arbitrary")
    if planar:
        normal = facts.axis(planar[0])
        cx = next(c for c in c2s if abs(facts.axis(c) @ normal) > _PARALLEL)
        cz, cy = [c for c in ranked if c != cx]
        if facts.score(cz) == facts.score(cy):
            w.notes.append(
                f"{symbol}: in-plane C2 axes hold the same atoms; z was chosen arbitrarily"
            )
        w.convention = (
            f"planar {symbol}: x perpendicular to the plane, z along the in-plane C2 axis "
            "through more atoms or bonds (Mulliken 1955)"
        )
    else:
        cz, cy, cx = ranked
        w.convention = (
            f"{symbol}: z, y, x are the C2 axes through most to fewest atoms (then bonds)"
        )
    w.z, w.x_hint = facts.axis(cz), facts.axis(cx)
    for r in w.one_d:
        g = _parity(facts, r, w.inversion)
        if chars[r, cz] > 0 and chars[r, cy] > 0:
            names[r] = "A" + g
        else:
            names[r] = ("B1" if chars[r, cz] > 0 else "B2" if chars[r, cy] > 0 else "B3") + g
    w.labels[cz], w.labels[cy], w.labels[cx] = "C2(z)", "C2(y)", "C2(x)"
    c2_axes = {"z": facts.axis(cz), "y": facts.axis(cy), "x": facts.axis(cx)}
    for c in _find(facts, "σ"):
        normal = facts.axis(c)
        plane = next(k for k, v in c2_axes.items() if abs(v @ normal) > _PARALLEL)
        w.labels[c] = {"z": "σ(xy)", "y": "σ(xz)", "x": "σ(yz)"}[plane]


def _name_cnv(w: _Naming, z: np.ndarray, n: int) -> None:
    """Cnv (n ≥ 3, or C2v handled apart): with even n, σv are the planes through more atoms."""
    facts, names, chars = w.facts, w.names, w.chars
    planes = _find(facts, "σ")
    if n % 2 == 0 and len(planes) == 2:
        sv, sd = _best(facts, planes, w.notes, f"{facts.symbol} σv planes")
        for r in w.one_d:
            if names[r].startswith("B"):
                names[r] = _b_name(names[r], "1" if chars[r, sv] > 0 else "2")
        w.labels[sv], w.labels[sd] = _label(facts, sv, "σv"), _label(facts, sd, "σd")
        w.convention = f"{facts.symbol}: σv are the mirror planes through more atoms"
    w.x_hint = np.cross(facts.axis(planes[0]), z)


def _name_dn(w: _Naming, z: np.ndarray, n: int, sub: str) -> None:
    """Dn, Dnh, Dnd (n ≥ 3, or D2 handled apart): C2' through more atoms; B2 of Dnd is z."""
    facts, names, chars, symbol = w.facts, w.names, w.chars, w.facts.symbol
    perp = [
        c
        for c in range(facts.n_classes)
        if _is_c2(facts, c) and abs(facts.axis(c) @ z) < _PERPENDICULAR
    ]
    if n % 2 == 0 and len(perp) == 2 and sub != "d":
        c2p, c2pp = _best(facts, perp, w.notes, f"{symbol} C2' axes", _plane_holding(facts, z))
        for r in w.one_d:
            if names[r].startswith("B"):
                names[r] = _b_name(names[r], "1" if chars[r, c2p] > 0 else "2")
        w.labels[c2p], w.labels[c2pp] = _label(facts, c2p, "C2'"), _label(facts, c2pp, "C2''")
        a = facts.axis(c2p)
        for c in _find(facts, "σ"):
            if abs(facts.axis(c) @ z) < _PERPENDICULAR:
                contains = any(
                    abs(operation_axis(facts.matrices[g]) @ a) < _PERPENDICULAR
                    for g in np.flatnonzero(facts.op_class == c)
                )
                w.labels[c] = _label(facts, c, "σv" if contains else "σd")
        w.convention = f"{symbol}: C2' are the two-fold axes through more atoms"
    if perp:
        w.x_hint = facts.axis(perp[0])
    if sub == "d" and n % 2 == 0:
        _b2_is_z(facts, names, w.one_d, z)


def _frame_cubic(w: _Naming) -> None:
    """T, O and I groups: z along a C4 (O, Oh) or C2 axis, x along a perpendicular one."""
    order = 4 if w.facts.symbol in ("O", "Oh") else 2
    axes_n = [
        operation_axis(mm)
        for mm in w.facts.matrices
        if operation_kind(mm) == "C" and abs(rotation_angle(mm) - 2 * np.pi / order) < 1e-3
    ]
    w.z = axes_n[0]
    w.x_hint = next(a for a in axes_n if abs(a @ w.z) < _PERPENDICULAR)


def _finish_names(w: _Naming) -> list[str]:
    """E for a lone E1, T for F; the library's names if the rules left two species alike."""
    names = w.names
    if not any(re.match(r"E2", s) for s in names):
        names = [re.sub(r"^E1", "E", s) for s in names]
    names = [s.replace("F", "T") for s in names]
    if len(set(names)) != len(names):  # pragma: no cover - a labelling rule went wrong
        w.notes.append(
            f"could not give {w.facts.symbol} standard species names; the library's names are used"
        )
        names = list(w.facts.irrep_names)
    return names


def _plane_holding(facts: GroupFacts, z: np.ndarray) -> Callable[[int], tuple]:
    """Score of the vertical mirror planes that contain a class's axis (tie-break for C2')."""

    def score(c: int) -> tuple:
        a = facts.axis(c)
        for p in _find(facts, "σ"):
            if abs(facts.axis(p) @ z) < _PERPENDICULAR and any(
                abs(operation_axis(facts.matrices[g]) @ a) < _PERPENDICULAR
                for g in np.flatnonzero(facts.op_class == p)
            ):
                return facts.score(p)
        return (0, 0, 0)

    return score


def _b2_is_z(facts: GroupFacts, names: list[str], one_d: list[int], z: np.ndarray) -> None:
    """In Dnd with even n, B2 is the B species that transforms as z (standard tables)."""
    chi_z = np.array([float(z @ facts.matrices[facts.rep(c)] @ z) for c in range(facts.n_classes)])
    for r in one_d:
        if names[r].startswith("B"):
            names[r] = _b_name(
                names[r], "2" if np.allclose(facts.characters[r], chi_z, atol=1e-6) else "1"
            )
