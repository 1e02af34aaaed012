"""Molecular symmetry: point group, species of every normal mode, selection rules."""

from vibrapol.symmetry.characters import (
    BandCounts,
    SpeciesRule,
    band_counts,
    format_representation,
    gamma_vib,
    species_rules,
)
from vibrapol.symmetry.labels import normalize_label
from vibrapol.symmetry.modes import (
    PURITY_MIN,
    ModeSymmetry,
    analyse_modes,
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

__all__ = [
    "DEFAULT_TOLERANCE_ANG",
    "PURITY_MIN",
    "ModeSymmetry",
    "analyse_modes",
    "symmetrize_dalpha_dx",
    "symmetrize_hessian",
    "symmetrize_modeset",
    "BandCounts",
    "GeometryError",
    "PointGroup",
    "SpeciesRule",
    "band_counts",
    "find_point_group",
    "format_representation",
    "gamma_vib",
    "normalize_label",
    "species_rules",
    "symmetrize_coordinates",
]
