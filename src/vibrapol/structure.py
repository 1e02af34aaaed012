"""Molecular structures: reading one with ASE, and the checks every consumer of a structure shares.

The embedded engine and the symmetry analysis both start from atomic numbers and Cartesian
coordinates in Å; :func:`check_structure` refuses what neither can use (one atom, overlapping
atoms, non-finite or absurd coordinates) before any work is done, with one line naming the file.
"""

from __future__ import annotations

import codecs
import io
from pathlib import Path

import numpy as np
from scipy.spatial.distance import cdist

from vibrapol.errors import GeometryError, InputFormatError

#: Atoms closer than this are taken to overlap (a broken structure): the shortest bond, H₂,
#: is 0.74 Å (common practice).
MIN_SEPARATION_ANG = 0.3

#: Largest coordinate accepted.  A molecule spans a few nm at most; values beyond this are
#: a unit or format error, and their squares overflow in later steps.
MAX_COORDINATE_ANG = 1.0e6


def check_structure(
    atomic_numbers: np.ndarray, coordinates_ang: np.ndarray, where: str = ""
) -> None:
    """Check that a structure is a molecule the engine and the symmetry analysis can use.

    Parameters
    ----------
    atomic_numbers : array of int, shape (N,)
    coordinates_ang : array, shape (N, 3)
        Cartesian coordinates in Å.
    where : str
        File name, first in the message.

    Raises
    ------
    GeometryError
        Wrong shapes, atomic numbers outside 1–118, NaN, infinite or absurdly large coordinates,
        a single atom, or two atoms closer than :data:`MIN_SEPARATION_ANG`.
    """
    prefix = f"{where}: " if where else ""
    z = np.asarray(atomic_numbers)
    coords = np.asarray(coordinates_ang, dtype=float)
    if z.ndim != 1 or coords.ndim != 2 or coords.shape != (z.shape[0], 3):
        raise GeometryError(f"{prefix}coordinates should be an (N, 3) array for {z.shape[0]} atoms")
    if z.size and (np.any(z < 1) or np.any(z > 118)):
        raise GeometryError(
            f"{prefix}atomic numbers must be between 1 and 118, got {sorted(set(z.tolist()))}"
        )
    if not np.all(np.isfinite(coords)):
        raise GeometryError(f"{prefix}coordinates contain NaN or infinite values")
    if coords.size and np.max(np.abs(coords)) > MAX_COORDINATE_ANG:
        raise GeometryError(
            f"{prefix}a coordinate of {np.max(np.abs(coords)):.3g} Å is beyond any molecule "
            f"(limit {MAX_COORDINATE_ANG:g} Å); check the units and the file"
        )
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


_BOMS = (codecs.BOM_UTF8, codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE, codecs.BOM_UTF32_BE)


def _ase_read(path: Path):  # noqa: ANN202
    import ase.io
    from ase.io.formats import filetype

    from vibrapol.sources.registry import decode_text

    data = path.read_bytes()
    if data.startswith(_BOMS):  # ase's text readers trip over byte-order marks and UTF-16
        text = decode_text(data, str(path))
        return ase.io.read(io.StringIO(text), format=filetype(str(path), read=False))
    return ase.io.read(str(path))


def read_structure(path: str | Path):  # noqa: ANN201
    """The last frame of a structure file (any format ``ase.io.read`` accepts), checked.

    Raises
    ------
    InputFormatError
        Missing, empty, binary or unreadable files, and files with no atoms.
    GeometryError
        Structures :func:`check_structure` refuses.
    """
    from vibrapol.sources.registry import read_text

    p = Path(path)
    if not p.exists():
        raise InputFormatError(f"{p}: no such structure file")
    try:
        atoms = _ase_read(p)
    except Exception as exc:  # ase raises many kinds for files it cannot parse
        # An empty or text-less file gets the one-line error every reader gives
        # (binary formats ase knows, such as .traj, are read above and never get here).
        read_text(p)
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
        raise InputFormatError(
            f"{p}: cannot read a structure, no atomic coordinates found "
            f"({type(exc).__name__}: {reason}); "
            "give a structure file ase.io.read understands (xyz, pdb, cif …)"
        ) from exc
    if isinstance(atoms, list):
        atoms = atoms[-1]
    if len(atoms) == 0:
        raise InputFormatError(f"{p}: the file holds no atoms; give a structure with coordinates")
    check_structure(atoms.get_atomic_numbers(), atoms.get_positions(), where=str(p))
    return atoms
