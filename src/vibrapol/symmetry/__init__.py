"""Molecular symmetry: point group, species of every normal mode, selection rules.

- :func:`find_point_group` → :class:`PointGroup` (operations, atom permutations, character
  table, labelling frame and axis convention): adapter over the pymsym library with our own
  check in Å (``tolerance_ang``) and help where the library fails (docs/symmetry.md);
- :func:`gamma_vib`, :func:`species_rules`, :func:`band_counts`: structure-only prediction;
- :func:`mode_symmetry` / :func:`analyse_modes` → :class:`ModeSymmetry`: species of every mode
  and degenerate set, with purity, optionally after averaging over the group
  (:func:`symmetrize_modeset`, :func:`symmetrize_hessian`, :func:`symmetrize_dalpha_dx`).
"""

from vibrapol.symmetry.characters import (
    BandCounts,
    SpeciesRule,
    band_counts,
    format_representation,
    gamma_vib,
    species_rules,
)
from vibrapol.symmetry.modes import (
    PURITY_MIN,
    ModeSymmetry,
    analyse_modes,
    mode_symmetry,
    symmetrize_dalpha_dx,
    symmetrize_hessian,
    symmetrize_modeset,
)
from vibrapol.symmetry.pointgroup import (
    DEFAULT_TOLERANCE_ANG,
    GeometryError,
    PointGroup,
    find_point_group,
    symmetrize_coordinates,
)
from vibrapol.symmetry.printed import compare_program_species, normalize_label

__all__ = [
    "DEFAULT_TOLERANCE_ANG",
    "PURITY_MIN",
    "ModeSymmetry",
    "analyse_modes",
    "mode_symmetry",
    "symmetrize_dalpha_dx",
    "symmetrize_hessian",
    "symmetrize_modeset",
    "BandCounts",
    "GeometryError",
    "PointGroup",
    "SpeciesRule",
    "band_counts",
    "compare_program_species",
    "find_point_group",
    "format_representation",
    "gamma_vib",
    "normalize_label",
    "species_rules",
    "symmetrize_coordinates",
]
