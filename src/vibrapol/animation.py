"""Frames of one normal mode for a molecular viewer: multi-frame XYZ and ASE trajectories.

Frame k of n (k = 0 … n − 1) places every atom at x₀ + A sin(2πk/n) d, with d the mode's
Cartesian displacement (L/√m, :meth:`vibrapol.modeset.ModeSet.displacements`) scaled so that
the atom that moves most moves by A (``amplitude_ang``, Å) at the turning points.  The frames
show the *shape* of the motion: A is chosen for the eye, not the amplitude of a real
vibration (the classical turning point of the v = 0 level is about 0.1 Å for an O–H stretch,
less for heavier atoms; common practice).  Any viewer that plays multi-frame XYZ files
(one block per frame, the usual format) or ASE trajectories shows the motion as a loop.
"""

from __future__ import annotations

import io
import math
import os
import tempfile

import numpy as np

from vibrapol.errors import OptionError
from vibrapol.modeset import ModeSet

#: Largest atom displacement of the frames, Å: large enough to see, small next to bonds.
DEFAULT_AMPLITUDE_ANG = 0.25
#: Frames per period of the vibration.
DEFAULT_FRAMES = 20
#: Largest amplitude accepted, Å (beyond it the frames break bonds on screen).
MAX_AMPLITUDE_ANG = 2.0


def _check(modes: ModeSet, index: int, amplitude_ang: float, frames: int) -> None:
    if not 0 <= index < modes.n_modes:
        raise OptionError(
            f"mode {index + 1} does not exist: the source has modes 1 to {modes.n_modes}"
        )
    if not (math.isfinite(amplitude_ang) and 0 < amplitude_ang <= MAX_AMPLITUDE_ANG):
        raise OptionError(
            f"amplitude must be above 0 and at most {MAX_AMPLITUDE_ANG:g} Å, got {amplitude_ang}"
        )
    if not 2 <= frames <= 1000:
        raise OptionError(f"frames per period must be between 2 and 1000, got {frames}")


def mode_frames(
    modes: ModeSet,
    index: int,
    amplitude_ang: float = DEFAULT_AMPLITUDE_ANG,
    frames: int = DEFAULT_FRAMES,
) -> np.ndarray:
    """Coordinates of each frame of one period of mode ``index`` (0-based), Å.

    Parameters
    ----------
    modes : ModeSet
    index : int
        Mode index, 0-based, in the order of ``modes.freqs_cm1``.
    amplitude_ang : float
        Displacement of the atom that moves most at the turning points, Å.
    frames : int
        Frames per period (2–1000); the last frame is one step before the first, so the
        frames loop without a repeated picture.

    Returns
    -------
    ndarray, shape (frames, N, 3)

    Raises
    ------
    OptionError
        For a mode that does not exist, an amplitude outside (0, 2] Å or a frame count
        outside 2–1000.
    """
    _check(modes, index, amplitude_ang, frames)
    d = modes.displacements()[index]
    d = d / float(np.max(np.linalg.norm(d, axis=1)))
    phase = np.sin(2 * np.pi * np.arange(frames) / frames)
    x0 = np.asarray(modes.coordinates_ang, dtype=float)
    return x0[None] + amplitude_ang * phase[:, None, None] * d[None]


def _comment(modes: ModeSet, index: int, k: int, frames: int, amplitude_ang: float) -> str:
    nu = float(modes.freqs_cm1[index])
    kind = f"{nu:.1f} cm-1" if nu >= 0 else f"{-nu:.1f}i cm-1 (imaginary)"
    masses = modes.provenance.masses
    isotopes = f"; masses {masses}".replace("→", "->") if masses.startswith("given") else ""
    return (
        f"mode {index + 1} {kind} frame {k + 1}/{frames} largest displacement "
        f"{amplitude_ang:g} A (vibrapol; displaced for display, not a geometry{isotopes})"
    )


def frames_xyz(
    modes: ModeSet,
    index: int,
    amplitude_ang: float = DEFAULT_AMPLITUDE_ANG,
    frames: int = DEFAULT_FRAMES,
) -> str:
    """The frames of :func:`mode_frames` as a multi-frame XYZ text (Å, element symbols).

    Each frame is the usual XYZ block: the number of atoms, a comment line (mode number,
    wavenumber, frame number, amplitude, and the masses when they are not the source's), then
    one ``symbol x y z`` line per atom.
    """
    xyz = mode_frames(modes, index, amplitude_ang, frames)
    out = io.StringIO()
    for k, coords in enumerate(xyz):
        out.write(f"{modes.n_atoms}\n{_comment(modes, index, k, frames, amplitude_ang)}\n")
        for symbol, (x, y, z) in zip(modes.symbols, coords, strict=True):
            out.write(f"{symbol:<2} {x:14.8f} {y:14.8f} {z:14.8f}\n")
    return out.getvalue()


def frames_trajectory(
    modes: ModeSet,
    index: int,
    amplitude_ang: float = DEFAULT_AMPLITUDE_ANG,
    frames: int = DEFAULT_FRAMES,
) -> bytes:
    """The frames of :func:`mode_frames` as the bytes of an ASE trajectory (``.traj``).

    Each frame is an ``ase.Atoms`` with the source's masses; ``ase.io.read(path, ":")`` gives
    them back and ``ase gui`` plays them.
    """
    from ase import Atoms
    from ase.io.trajectory import Trajectory

    xyz = mode_frames(modes, index, amplitude_ang, frames)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "mode.traj")
        with Trajectory(path, "w") as traj:
            for coords in xyz:
                atoms = Atoms(numbers=modes.atomic_numbers, positions=coords)
                atoms.set_masses(modes.masses_da)
                traj.write(atoms)
        with open(path, "rb") as f:  # our own temporary file, not a user's
            return f.read()
