"""Molecular structures: reading one with ASE, and the checks every consumer of a structure shares.

The embedded engine and the symmetry analysis both start from atomic numbers and Cartesian
coordinates in Å; :func:`check_structure` refuses what neither can use (one atom, overlapping
atoms, non-finite or absurd coordinates) before any work is done, with one line naming the file.
"""

from __future__ import annotations

import codecs
import io
import os
import warnings
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from vibrapol.errors import GeometryError, InputFormatError, VibrapolError, VibrapolWarning

if TYPE_CHECKING:
    from ase import Atoms

#: Atoms closer than this are taken to overlap (a broken structure): the shortest bond, H₂,
#: is 0.74 Å (common practice).
MIN_SEPARATION_ANG = 0.3

#: Largest coordinate accepted.  A molecule spans a few nm at most; values beyond this are
#: a unit or format error, and their squares overflow in later steps.
MAX_COORDINATE_ANG = 1.0e6


def distances_ang(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Euclidean distances between the rows of ``a`` (m, 3) and of ``b`` (n, 3), shape (m, n).

    The same sum of squares in the same order as :func:`scipy.spatial.distance.cdist` (equal to
    the last bit, tests/test_startup.py), without importing ``scipy.spatial`` (a tenth of a
    second at start-up) for one line.
    """
    diff = np.asarray(a, dtype=float)[:, None, :] - np.asarray(b, dtype=float)[None, :, :]
    return np.sqrt((diff * diff).sum(axis=-1))


def structure_arrays(
    atoms: Any, masses_da: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Atomic numbers, coordinates (Å) and masses of an ``ase.Atoms``.

    The masses are ``masses_da`` when given, else those set on the Atoms with ``set_masses``,
    else None (the caller's default: vibrapol uses the most abundant isotopes, not ASE's
    standard atomic weights).

    Raises
    ------
    GeometryError
        When ``atoms`` is not an ``ase.Atoms`` (or alike).
    """
    if not (hasattr(atoms, "get_atomic_numbers") and hasattr(atoms, "get_positions")):
        raise GeometryError(
            f"give an ase.Atoms, or atomic numbers and coordinates; got {type(atoms).__name__} "
            "without coordinates"
        )
    if masses_da is None and callable(getattr(atoms, "has", None)) and atoms.has("masses"):
        masses_da = np.asarray(atoms.get_masses(), dtype=float)
    return np.asarray(atoms.get_atomic_numbers()), np.asarray(atoms.get_positions()), masses_da


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
    d = distances_ang(coords, coords) + np.eye(len(coords)) * 1e9
    i, j = np.unravel_index(np.argmin(d), d.shape)
    if d[i, j] < MIN_SEPARATION_ANG:
        raise GeometryError(
            f"{prefix}atoms {min(i, j) + 1} and {max(i, j) + 1} are only {d[i, j]:.3f} Å apart "
            "(overlapping atoms); check the structure"
        )


_BOMS = (codecs.BOM_UTF8, codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE, codecs.BOM_UTF32_BE)


def _xyz_atom(line: str) -> tuple[int, tuple[float, float, float]] | None:
    """(atomic number, x, y, z) of an XYZ atom line, or None when it is not one."""
    from ase.data import atomic_numbers

    parts = line.split()
    if len(parts) < 4:
        return None
    symbol = parts[0]
    z = int(symbol) if symbol.isdigit() else atomic_numbers.get(symbol.capitalize(), 0)
    if not 1 <= z <= 118:
        return None
    try:
        xyz = (float(parts[1]), float(parts[2]), float(parts[3]))
    except ValueError:
        return None
    return z, xyz


def _xyz_frames(text: str, first_only: bool = False) -> list[tuple[list[int], list[tuple]]]:
    """Frames of plain XYZ text, or [] when the text is not XYZ.

    The layout, one block per frame (the comment line is free text)::

        3
        any comment, e.g. water_raman.out
        O   0.000  0.000  0.117
        H   0.000  0.757 -0.469
        H   0.000 -0.757 -0.469
    """
    lines = text.splitlines()
    frames: list[tuple[list[int], list[tuple]]] = []
    i = 0
    while i < len(lines):
        if not lines[i].strip():
            i += 1
            continue
        count = lines[i].strip()
        if not count.isdigit() or int(count) == 0 or i + 1 + int(count) >= len(lines):
            return []
        parsed = [_xyz_atom(line) for line in lines[i + 2 : i + 2 + int(count)]]
        atoms = [a for a in parsed if a is not None]
        if len(atoms) != len(parsed):
            return []
        frames.append(([a[0] for a in atoms], [a[1] for a in atoms]))
        if first_only:
            break
        i += 2 + int(count)
    return frames


def looks_like_xyz(text: str) -> bool:
    """True when ``text`` starts with a complete XYZ frame (atom count, comment, atoms)."""
    return bool(_xyz_frames(text[:200_000], first_only=True))


def _all_frames(source: str | io.StringIO, **options: Any) -> list[Atoms]:
    """Every frame ase reads from ``source`` (``index=":"`` always gives a list)."""
    import ase.io

    frames = ase.io.read(source, index=":", **options)
    return frames if isinstance(frames, list) else [frames]


def _read_frames(p: Path, warn_xyz: bool = True) -> list[Atoms]:
    """Every frame of the structure file ``p`` as ase Atoms (the file checked and bounded)."""
    import ase
    from ase.io.formats import filetype

    from vibrapol.textio import MAX_STRUCTURE_BYTES, decode_text, read_bytes

    data = read_bytes(p, MAX_STRUCTURE_BYTES, "structure file")
    if b"\x00" in data[:200_000] and not data.startswith(_BOMS):
        try:  # a binary format ase knows (.traj, ...)?
            return _all_frames(str(p))
        except Exception:  # noqa: BLE001 - not one: say what is wrong with it as text
            decode_text(data, str(p))
            raise
    text = decode_text(data, str(p))
    if not text.strip():
        raise InputFormatError(f"{p}: file is empty")
    frames = _xyz_frames(text)
    if frames:  # XYZ by its content, whatever the file is called
        if p.suffix.lower() not in (".xyz", ".extxyz") and warn_xyz:
            warnings.warn(f"{p}: the content is XYZ; read as XYZ", VibrapolWarning, stacklevel=3)
        try:
            # extended XYZ (key=value comment lines) first; a comment it cannot parse is
            # free text, as in plain XYZ
            return _all_frames(io.StringIO(text), format="extxyz")
        except Exception:  # noqa: BLE001 - ase raises many kinds for a comment it cannot parse
            return [ase.Atoms(numbers=z, positions=xyz) for z, xyz in frames]
    if data.startswith(_BOMS):  # ase's text readers trip over byte-order marks and UTF-16
        return _all_frames(io.StringIO(text), format=filetype(str(p), read=False))
    return _all_frames(str(p))


def read_structure(path: str | Path):  # noqa: ANN201
    """The structure in a file (any format ``ase.io.read`` accepts), checked.

    XYZ text is recognised by its content (whatever the file is called; a warning says so when
    the name says otherwise) and its comment line is free text.  A file with more than one
    frame (a trajectory) is refused: which frame to use is the user's choice.

    Raises
    ------
    InputFormatError
        Missing, non-regular, oversized, empty, binary or unreadable files, files with no
        atoms, and files with more than one frame.
    GeometryError
        Structures :func:`check_structure` refuses.
    """
    p = Path(path)
    if not os.path.lexists(p):
        raise InputFormatError(f"{p}: no such structure file")
    try:
        frames = _read_frames(p)
    except VibrapolError:
        raise
    except Exception as exc:  # ase raises many kinds for files it cannot parse
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
        raise InputFormatError(
            f"{p}: cannot read a structure, no atomic coordinates found "
            f"({type(exc).__name__}: {reason}); "
            "give a structure file ase.io.read understands (xyz, pdb, cif …)"
        ) from exc
    if not isinstance(frames, list):
        frames = [frames]
    if len(frames) > 1:
        raise InputFormatError(
            f"{p}: holds {len(frames)} structures (frames); give one, e.g. the last: "
            f"ase convert -n -1 {p} last.xyz"
        )
    if not frames or len(frames[0]) == 0:
        raise InputFormatError(f"{p}: the file holds no atoms; give a structure with coordinates")
    atoms = frames[0]
    check_structure(atoms.get_atomic_numbers(), atoms.get_positions(), where=str(p))
    return atoms
