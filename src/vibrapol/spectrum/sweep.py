"""Polar sweeps: intensity of chosen bands versus the angle of the incident polarization.

The polarizer turns by θ from V towards H (laboratory frame of :mod:`vibrapol.spectrum.channels`);
the analyzer follows it (parallel, channel ``p<θ>a<θ>``) or stays 90° away (crossed,
``p<θ>a<θ+90>``). In back-scattering (180°, the usual microscope geometry) both beams share the xy
plane, so parallel means e_s = e_i. For an isotropic sample the curves are flat; for oriented
samples (:mod:`vibrapol.spectrum.orientation`) they show the symmetry of the Raman tensor.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from vibrapol.errors import ShapeError, VibrapolError
from vibrapol.modeset import ModeSet
from vibrapol.spectrum import Conditions, StickSpectrum, stick_spectrum
from vibrapol.spectrum.channels import angle_channel

#: Default polarizer angles: 0 to 360° every 5°.
DEFAULT_ANGLES_DEG = np.arange(0.0, 360.0 + 1e-9, 5.0)


@dataclass(frozen=True, eq=False)
class PolarSweep:
    """Band heights versus polarizer angle.

    Attributes
    ----------
    angles_deg : ndarray (n_angles,)
    positions_cm1 : ndarray (n_bands,)
        Raman shift of each chosen band.
    irreps : tuple of str
    parallel, crossed : ndarray (n_angles, n_bands)
        Heights with the analyzer parallel and crossed, in ``conditions.unit``.
    conditions : Conditions
    """

    angles_deg: np.ndarray
    positions_cm1: np.ndarray
    irreps: tuple[str, ...]
    parallel: np.ndarray
    crossed: np.ndarray
    conditions: Conditions

    def __post_init__(self) -> None:
        shape = (np.asarray(self.angles_deg).size, np.asarray(self.positions_cm1).size)
        for name in ("parallel", "crossed"):
            arr = np.array(getattr(self, name), dtype=float)
            if arr.shape != shape:
                raise ShapeError(f"{name} should have shape {shape}, got {arr.shape}")
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        for name in ("angles_deg", "positions_cm1"):
            arr = np.array(getattr(self, name), dtype=float).reshape(-1)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        if len(self.irreps) != shape[1]:
            raise ShapeError(f"irreps needs one entry per band ({shape[1]})")

    @property
    def n_bands(self) -> int:
        """Number of bands swept."""
        return int(self.positions_cm1.size)


def choose_bands(
    sticks: StickSpectrum, bands_cm1: Sequence[float] | None, top: int, channels: Sequence[str]
) -> list[int]:
    """Indices of the bands nearest ``bands_cm1``, or the ``top`` strongest over ``channels``."""
    if bands_cm1:
        return list(dict.fromkeys(sticks.nearest(b) for b in bands_cm1))
    if top < 1:
        raise VibrapolError("choose at least one band to sweep")
    cols = [sticks.channels.index(c) for c in channels]
    strength = sticks.heights[:, cols].max(axis=1)
    return [int(i) for i in np.argsort(-strength, kind="stable")[:top]]


def polar_sweep(
    modes: ModeSet,
    *,
    angles_deg: Sequence[float] | np.ndarray = DEFAULT_ANGLES_DEG,
    bands_cm1: Sequence[float] | None = None,
    top: int = 4,
    geometry_deg: int = 180,
    **stick_options: Any,
) -> PolarSweep:
    """Parallel and crossed heights of the chosen bands at each polarizer angle.

    Parameters
    ----------
    modes : ModeSet
    angles_deg : sequence of float
        Polarizer angles from V towards H.
    bands_cm1 : sequence of float, optional
        Raman shifts of the bands to sweep (the nearest band is taken); default: the ``top``
        strongest bands.
    geometry_deg : int
        90 or 180 (default 180, back-scattering).
    **stick_options
        Passed to :func:`vibrapol.spectrum.stick_spectrum` (``orientation``, ``scale``,
        ``quantity``, ``laser_nm``, ``temperature_k``, ``table``).
    """
    angles = np.asarray(angles_deg, dtype=float).reshape(-1)
    if angles.size == 0 or not np.all(np.isfinite(angles)):
        raise VibrapolError("give at least one finite polarizer angle")
    par = [angle_channel(a, a) for a in angles]
    crs = [angle_channel(a, a + 90.0) for a in angles]
    sticks = stick_spectrum(
        modes, channels=[*par, *crs], geometry_deg=geometry_deg, **stick_options
    )
    pick = sorted(choose_bands(sticks, bands_cm1, top, par), key=lambda i: sticks.positions_cm1[i])
    ip = [sticks.channels.index(c) for c in par]
    ic = [sticks.channels.index(c) for c in crs]
    return PolarSweep(
        angles_deg=angles,
        positions_cm1=sticks.positions_cm1[pick],
        irreps=tuple(sticks.irreps[i] for i in pick),
        parallel=sticks.heights[np.ix_(pick, ip)].T,
        crossed=sticks.heights[np.ix_(pick, ic)].T,
        conditions=sticks.conditions,
    )
