"""Representations from characters: Γ_3N, Γ_vib, selection rules, band counts.

References
----------
.. [Cotton] F. A. Cotton, *Chemical Applications of Group Theory*, 3rd ed., Wiley (1990),
   ch. 4 (reduction formula) and ch. 10 (Γ_3N from unshifted atoms, selection rules).
.. [Wilson] E. B. Wilson, J. C. Decius and P. C. Cross, *Molecular Vibrations* (1955), ch. 6
   (IR activity: species of x, y, z; Raman activity: species of the symmetric square of the
   vector representation, i.e. of the polarizability components).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.symmetry.pointgroup import PointGroup


def vector_characters(group: PointGroup) -> np.ndarray:
    """χ(R) = tr R of the polar vector (x, y, z) for each operation [Cotton]_."""
    return np.trace(group.operations, axis1=1, axis2=2)


def axial_characters(group: PointGroup) -> np.ndarray:
    """χ(R) = det R · tr R of an axial vector (the rotations Rx, Ry, Rz) [Cotton]_."""
    return np.linalg.det(group.operations) * vector_characters(group)


def symmetric_square_characters(group: PointGroup) -> np.ndarray:
    """χ(R) = [χ(R)² + χ(R²)] / 2 of the symmetric square of the vector representation.

    The six independent components of a symmetric tensor (the polarizability) transform as the
    symmetric square of (x, y, z) [Wilson]_.
    """
    chi = vector_characters(group)
    chi_sq = np.trace(group.operations @ group.operations, axis1=1, axis2=2)
    return 0.5 * (chi**2 + chi_sq)


def cartesian_characters(group: PointGroup) -> np.ndarray:
    """χ(R) of the 3N Cartesian displacements: (atoms left in place by R) × tr R [Cotton]_."""
    unmoved = np.sum(group.permutations == np.arange(group.n_atoms)[None, :], axis=1)
    return unmoved * vector_characters(group)


def vibrational_characters(group: PointGroup) -> np.ndarray:
    """χ of Γ_vib = Γ_3N − Γ_trans − Γ_rot [Cotton]_.

    For a linear molecule the rotation about the molecular axis is no degree of freedom, so
    only the two rotations across the axis are removed (z of :attr:`PointGroup.axes`).
    """
    chi = cartesian_characters(group) - vector_characters(group)
    rot = axial_characters(group)
    if group.linear:
        z = group.axes[2]
        rot = rot - np.linalg.det(group.operations) * np.einsum(
            "i,gij,j->g", z, group.operations, z
        )
    return chi - rot


def reduce(group: PointGroup, op_chars: np.ndarray) -> np.ndarray:
    """How many times each species occurs in a representation, n_Γ = ⟨χ_Γ, χ⟩ / ⟨χ_Γ, χ_Γ⟩.

    ⟨a, b⟩ = (1/g) Σ_R a(R) b(R) over the operations [Cotton]_.  Dividing by ⟨χ_Γ, χ_Γ⟩
    (1 for an irreducible species) also counts real species that combine a complex pair and
    the Π species of linear molecules correctly, once per degenerate set.

    Raises
    ------
    ValueError
        If the result is not a whole number (the characters are not those of a representation
        of this group).
    """
    chars = np.asarray(op_chars, dtype=float)
    counts = group.op_characters @ chars / group.order / group.norms
    rounded = np.rint(counts)
    if np.max(np.abs(counts - rounded), initial=0.0) > 1e-6:
        raise ValueError(f"characters do not reduce to whole numbers in {group.symbol}: {counts}")
    return rounded.astype(int)


def gamma_vib(group: PointGroup) -> dict[str, int]:
    """Γ_vib as {species: count}, textbook order, species that occur only."""
    counts = reduce(group, vibrational_characters(group))
    return {name: int(c) for name, c in zip(group.irreps, counts, strict=True) if c}


def format_representation(counts: dict[str, int]) -> str:
    """'2A1 + B2' from {'A1': 2, 'B2': 1}."""
    return " + ".join(f"{c if c > 1 else ''}{name}" for name, c in counts.items()) or "0"


@dataclass(frozen=True)
class SpeciesRule:
    """Selection rules of one symmetry species.

    Attributes
    ----------
    irrep : str
    dim : int
        Degeneracy (modes per set).
    ir_active : bool
        Transforms as x, y or z (fundamental allowed in the infrared).
    raman_active : bool
        Contained in the symmetric square of (x, y, z) (fundamental allowed in Raman).
    totally_symmetric : bool
        Only these bands are polarized (ρ_linear < 3/4); all others have ρ_linear = 3/4
        (D. A. Long, *The Raman Effect*, 2002, ch. 5).
    ir_components : str
        Which of x, y, z (in the labelling frame) belong to the species, e.g. 'z' or 'x, y'.
    """

    irrep: str
    dim: int
    ir_active: bool
    raman_active: bool
    totally_symmetric: bool
    ir_components: str

    @property
    def polarization(self) -> str:
        """Expected Raman polarization: 'polarized', 'depolarized' or 'inactive'."""
        if not self.raman_active:
            return "inactive"
        return "polarized" if self.totally_symmetric else "depolarized"


def species_rules(group: PointGroup) -> tuple[SpeciesRule, ...]:
    """Selection rules of every species of ``group``, in textbook order [Wilson]_.

    For linear molecules (subgroup characters) the Σ⁻ species are marked Raman-inactive: in
    the subgroup they share a species with Δ, which is Raman-active in D∞h and C∞v.
    """
    ir = reduce(group, vector_characters(group)) > 0
    raman = reduce(group, symmetric_square_characters(group)) > 0
    dims = group.dims
    chi = group.op_characters
    components = []
    for r in range(len(group.irreps)):
        proj = (
            dims[r]
            / (group.order * group.norms[r])
            * np.einsum("g,gij->ij", chi[r], group.operations)
        )
        components.append(
            ", ".join(a for a, v in zip("xyz", group.axes, strict=True) if v @ proj @ v > 0.5)
        )
    rules = []
    for r, name in enumerate(group.irreps):
        active = bool(raman[r]) and not (group.linear and "⁻" in name)
        rules.append(
            SpeciesRule(
                irrep=name,
                dim=int(dims[r]),
                ir_active=bool(ir[r]),
                raman_active=active,
                totally_symmetric=name == group.totally_symmetric,
                ir_components=components[r] if ir[r] else "",
            )
        )
    return tuple(rules)


@dataclass(frozen=True)
class BandCounts:
    """How many fundamentals (degenerate sets count once) of each kind a structure has.

    Attributes
    ----------
    fundamentals : int
    raman_active, ir_active, polarized : int
        Polarized = totally symmetric (all of them are Raman-active).
    coincident : int
        Active in both IR and Raman (none in centrosymmetric molecules: mutual exclusion).
    silent : int
        Active in neither.
    """

    fundamentals: int
    raman_active: int
    ir_active: int
    polarized: int
    coincident: int
    silent: int


def band_counts(group: PointGroup) -> BandCounts:
    """Counts of Raman-active, IR-active, polarized, coincident and silent fundamentals."""
    rules = {r.irrep: r for r in species_rules(group)}
    counts = gamma_vib(group)

    def total(pred) -> int:  # noqa: ANN001
        return sum(c for name, c in counts.items() if pred(rules[name]))

    return BandCounts(
        fundamentals=sum(counts.values()),
        raman_active=total(lambda r: r.raman_active),
        ir_active=total(lambda r: r.ir_active),
        polarized=total(lambda r: r.totally_symmetric),
        coincident=total(lambda r: r.raman_active and r.ir_active),
        silent=total(lambda r: not r.raman_active and not r.ir_active),
    )
