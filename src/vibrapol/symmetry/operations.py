"""Geometry of a single symmetry operation given as an orthogonal 3×3 matrix."""

from __future__ import annotations

import numpy as np


def operation_kind(matrix: np.ndarray) -> str:
    """Kind of an orthogonal 3×3 matrix: 'E', 'C', 'σ', 'i' or 'S'."""
    det = np.linalg.det(matrix)
    if det > 0:
        return "E" if np.allclose(matrix, np.eye(3), atol=1e-6) else "C"
    if np.allclose(matrix, -np.eye(3), atol=1e-6):
        return "i"
    return "σ" if abs(np.trace(matrix) - 1.0) < 1e-6 else "S"


def operation_axis(matrix: np.ndarray) -> np.ndarray:
    """Unit axis of a rotation or improper rotation, or the normal of a reflection plane."""
    det = np.sign(np.linalg.det(matrix))
    _, _, vt = np.linalg.svd(np.asarray(matrix) - det * np.eye(3))
    return vt[-1]


def rotation_angle(matrix: np.ndarray) -> float:
    """Angle (rad, in [0, π]) of the proper rotation det(M)·M."""
    proper = np.sign(np.linalg.det(matrix)) * np.asarray(matrix)
    return float(np.arccos(np.clip((np.trace(proper) - 1.0) / 2.0, -1.0, 1.0)))


def improper_angle(matrix: np.ndarray) -> float:
    """Angle θ (rad) of the rotation part of an improper rotation S(θ) = σh·C(θ).

    tr S(θ) = 2cos θ − 1, so a reflection gives 0 and the inversion π.
    """
    return float(np.arccos(np.clip((np.trace(matrix) + 1.0) / 2.0, -1.0, 1.0)))
