"""Oriented samples: molecules fixed in the laboratory frame and uniaxially aligned ensembles.

An orientation distribution is a set of rotations R (molecule frame → laboratory frame, see
:mod:`vibrapol.spectrum.channels` for the laboratory axes) with quadrature weights.  The
intensity of a mode for polarizations e_i, e_s is Σ_r w_r |e_s·R α′ Rᵀ·e_i|², evaluated as
Σ_r w_r ((Rᵀe_s)·α′·(Rᵀe_i))².

The quadratures are exact for the isotropic average: the integrand is a polynomial of degree 4
in the entries of R, i.e. a trigonometric polynomial of degree ≤ 4 in each Euler angle, which an
N-point trapezoid rule integrates exactly for N ≥ 5 (azimuth and twist) and a Gauss–Legendre
rule in cos θ with 3 or more nodes integrates exactly in the tilt.

References
----------
.. [Long] D. A. Long, *The Raman Effect*, Wiley (2002), ch. 5 (isotropic averages; the closed
   forms these quadratures reproduce).
.. [Goldstein] H. Goldstein, *Classical Mechanics*, 2nd ed., Addison-Wesley (1980), sec. 4-4
   (Euler angles; the z-y-z convention used here).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import VibrapolError
from vibrapol.spectrum.channels import channel_terms

#: Quadrature sizes of :func:`isotropic` (tilt nodes in cos θ, azimuth, twist).
ISOTROPIC_NODES = (4, 6, 6)

_AXES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


def _rz(angle: np.ndarray) -> np.ndarray:
    c, s = np.cos(angle), np.sin(angle)
    z, o = np.zeros_like(c), np.ones_like(c)
    return np.stack(
        [np.stack([c, -s, z], -1), np.stack([s, c, z], -1), np.stack([z, z, o], -1)], -2
    )


def _ry(angle: np.ndarray) -> np.ndarray:
    c, s = np.cos(angle), np.sin(angle)
    z, o = np.zeros_like(c), np.ones_like(c)
    return np.stack(
        [np.stack([c, z, s], -1), np.stack([z, o, z], -1), np.stack([-s, z, c], -1)], -2
    )


def euler_zyz(alpha_deg: float, beta_deg: float, gamma_deg: float) -> np.ndarray:
    """Rotation matrix R = R_z(α) R_y(β) R_z(γ) for Euler angles in degrees [Goldstein]_."""
    a, b, g = np.deg2rad([alpha_deg, beta_deg, gamma_deg])
    return _rz(np.array(a)) @ _ry(np.array(b)) @ _rz(np.array(g))


def unit_vector(axis: str | Sequence[float] | np.ndarray, what: str = "axis") -> np.ndarray:
    """A unit vector from ``"x"``, ``"y"``, ``"z"`` (optionally signed, ``"-z"``) or 3 numbers."""
    if isinstance(axis, str):
        key = axis.strip().lower()
        sign = -1.0 if key.startswith("-") else 1.0
        key = key.lstrip("+-")
        if key in _AXES:
            return sign * np.array(_AXES[key])
        try:
            axis = [float(t) for t in key.replace(",", " ").split()]
        except ValueError as exc:
            raise VibrapolError(f"{what} must be x, y, z or three numbers, got {axis!r}") from exc
        axis = [sign * t for t in axis]
    v = np.asarray(axis, dtype=float)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or np.linalg.norm(v) == 0:
        raise VibrapolError(f"{what} must be a non-zero 3-vector, got {axis!r}")
    return v / np.linalg.norm(v)


def rotation_between(
    a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray
) -> np.ndarray:
    """The smallest rotation R with R·a ∥ b (Rodrigues' formula); unit vectors not required."""
    ua = unit_vector(a)
    ub = unit_vector(b)
    v = np.cross(ua, ub)
    c = float(np.dot(ua, ub))
    if np.linalg.norm(v) < 1e-12:
        if c > 0:
            return np.eye(3)
        perp = np.cross(ua, [1.0, 0.0, 0.0])
        if np.linalg.norm(perp) < 1e-6:
            perp = np.cross(ua, [0.0, 1.0, 0.0])
        perp /= np.linalg.norm(perp)
        return 2.0 * np.outer(perp, perp) - np.eye(3)  # rotation by π about perp
    k = np.array([[0.0, -v[2], v[1]], [v[2], 0.0, -v[0]], [-v[1], v[0], 0.0]])
    return np.eye(3) + k + k @ k / (1.0 + c)


@dataclass(frozen=True, eq=False)
class Orientation:
    """Weighted rotations molecule → laboratory frame.

    Attributes
    ----------
    rotations : ndarray, shape (n, 3, 3)
    weights : ndarray, shape (n,), non-negative, summing to 1
    description : str
        One line for headers and captions.
    """

    rotations: np.ndarray
    weights: np.ndarray
    description: str

    def __post_init__(self) -> None:
        r = np.array(self.rotations, dtype=float, copy=True)
        if r.ndim == 2:
            r = r[None]
        w = np.array(self.weights, dtype=float, copy=True).reshape(-1)
        if r.ndim != 3 or r.shape[1:] != (3, 3) or w.shape != (r.shape[0],):
            raise VibrapolError(
                f"rotations must be (n, 3, 3) with n weights, got {r.shape} and {w.shape}"
            )
        err = np.max(np.abs(np.einsum("nij,nkj->nik", r, r) - np.eye(3)))
        if err > 1e-8 or np.any(np.linalg.det(r) < 0):
            raise VibrapolError(
                f"rotations must be proper orthogonal matrices (max |RRᵀ − 1| = {err:.2g})"
            )
        if np.any(w < 0) or not math.isclose(w.sum(), 1.0, rel_tol=1e-9):
            raise VibrapolError("orientation weights must be non-negative and sum to 1")
        r.setflags(write=False)
        w.setflags(write=False)
        object.__setattr__(self, "rotations", r)
        object.__setattr__(self, "weights", w)

    @property
    def n_rotations(self) -> int:
        """Number of quadrature points."""
        return int(self.weights.shape[0])


def fixed(rotation: np.ndarray, description: str = "fixed orientation") -> Orientation:
    """Every molecule in one orientation, given as the rotation molecule → laboratory."""
    return Orientation(np.asarray(rotation, dtype=float)[None], np.ones(1), description)


def aligned(mol_axis: str | Sequence[float], lab_axis: str | Sequence[float] = "z") -> Orientation:
    """All molecules with ``mol_axis`` (molecule frame) along ``lab_axis`` (smallest rotation)."""
    r = rotation_between(
        unit_vector(mol_axis, "molecular axis"), unit_vector(lab_axis, "laboratory axis")
    )
    return fixed(r, f"molecular axis {_fmt(mol_axis)} along laboratory {_fmt(lab_axis)}")


def _fmt(axis: str | Sequence[float]) -> str:
    return axis if isinstance(axis, str) else "(" + ", ".join(f"{t:g}" for t in axis) + ")"


def _euler_grid(
    cos_theta: np.ndarray, w_theta: np.ndarray, n_phi: int, n_psi: int
) -> tuple[np.ndarray, np.ndarray]:
    phi = 2.0 * np.pi * np.arange(n_phi) / n_phi
    psi = 2.0 * np.pi * np.arange(n_psi) / n_psi
    theta = np.arccos(np.clip(cos_theta, -1.0, 1.0))
    p, t, s = np.meshgrid(phi, theta, psi, indexing="ij")
    rot = _rz(p.ravel()) @ _ry(t.ravel()) @ _rz(s.ravel())
    w = np.broadcast_to(w_theta[None, :, None], p.shape).ravel()
    return rot, w / w.sum()


def isotropic(nodes: tuple[int, int, int] = ISOTROPIC_NODES) -> Orientation:
    """All orientations equally likely, as an exact quadrature (see the module notes)."""
    n_tilt, n_phi, n_psi = nodes
    if n_tilt < 3 or n_phi < 5 or n_psi < 5:
        raise VibrapolError(
            "isotropic quadrature needs ≥ 3 tilt and ≥ 5 azimuth and twist nodes to be exact"
        )
    u, w = np.polynomial.legendre.leggauss(n_tilt)
    rot, wt = _euler_grid(u, w, n_phi, n_psi)
    return Orientation(rot, wt, "isotropic")


def uniaxial(
    mol_axis: str | Sequence[float] = "z",
    director: str | Sequence[float] = "z",
    *,
    tilt_deg: float = 0.0,
    tilt_spread_deg: float = 0.0,
    twist_deg: float | None = None,
    n_tilt: int = 40,
    n_azimuth: int = 8,
    n_twist: int = 8,
) -> Orientation:
    """Uniaxially aligned ensemble: the molecular axis tilted from a director, azimuth uniform.

    The molecular axis makes the angle θ with the director (a surface normal, the stretching
    direction of a film) with density ∝ exp(−(θ − θ₀)²/(2σ²)) per unit solid angle, the azimuth of
    the axis about the director is uniform, and so is the twist of the molecule about its own axis
    unless ``twist_deg`` fixes it.

    Parameters
    ----------
    mol_axis : axis in the molecule frame (``"x"``, ``"-z"``, or three numbers).
    director : axis in the laboratory frame.
    tilt_deg : float
        θ₀, the most probable tilt.
    tilt_spread_deg : float
        σ; 0 means every molecule has the tilt θ₀; ``math.inf`` means no preferred tilt (uniform
        on the sphere, i.e. the isotropic average when the twist is uniform too).
    twist_deg : float, optional
        Fixed rotation of the molecule about its own axis; default: uniform.
    n_tilt, n_azimuth, n_twist : int
        Quadrature nodes (Gauss–Legendre in the tilt, trapezoid in the two angles; ≥ 5 azimuth
        and twist nodes make the angular averages exact).
    """
    if n_azimuth < 5 or (twist_deg is None and n_twist < 5):
        raise VibrapolError("uniaxial averages need at least 5 azimuth and 5 twist nodes")
    if not (math.isfinite(tilt_deg) and 0.0 <= tilt_deg <= 180.0):
        raise VibrapolError(f"tilt must be between 0 and 180 degrees, got {tilt_deg}")
    if not tilt_spread_deg >= 0:  # also refuses NaN; inf means no preferred tilt
        raise VibrapolError(f"tilt spread must be ≥ 0 degrees (or inf), got {tilt_spread_deg}")
    if twist_deg is not None and not math.isfinite(twist_deg):
        raise VibrapolError(f"twist must be a finite angle in degrees, got {twist_deg}")
    if math.isinf(tilt_spread_deg):
        u, w = np.polynomial.legendre.leggauss(max(n_tilt, 3))
        what = "no preferred tilt"
    elif tilt_spread_deg == 0:
        u, w = np.array([math.cos(math.radians(tilt_deg))]), np.ones(1)
        what = f"tilt {tilt_deg:g}°"
    else:
        t0, sig = math.radians(tilt_deg), math.radians(tilt_spread_deg)
        lo, hi = max(0.0, t0 - 6 * sig), min(math.pi, t0 + 6 * sig)
        x, wx = np.polynomial.legendre.leggauss(n_tilt)
        theta = 0.5 * (hi - lo) * x + 0.5 * (hi + lo)
        w = 0.5 * (hi - lo) * wx * np.exp(-0.5 * ((theta - t0) / sig) ** 2) * np.sin(theta)
        u = np.cos(theta)
        what = f"tilt {tilt_deg:g}° ± {tilt_spread_deg:g}° (Gaussian)"
    if twist_deg is None:
        rot, wt = _euler_grid(u, w, n_azimuth, n_twist)
    else:
        rot, wt = _euler_grid(u, w, n_azimuth, 1)
        rot = rot @ _rz(np.array(math.radians(twist_deg)))
    to_z = rotation_between(unit_vector(mol_axis, "molecular axis"), [0.0, 0.0, 1.0])
    from_z = rotation_between([0.0, 0.0, 1.0], unit_vector(director, "director"))
    rot = from_z[None] @ rot @ to_z[None]
    twist = "uniform twist" if twist_deg is None else f"twist {twist_deg:g}°"
    return Orientation(
        rot, wt, f"molecular axis {_fmt(mol_axis)} about director {_fmt(director)}: {what}, {twist}"
    )


def orientation_average(
    dalpha_dq: np.ndarray, e_incident: np.ndarray, e_scattered: np.ndarray, orientation: Orientation
) -> np.ndarray:
    """Σ_r w_r |e_s·R α′ Rᵀ·e_i|² for each mode, shape (n_modes,), in the tensor's unit squared."""
    t = np.asarray(dalpha_dq, dtype=float)
    t = 0.5 * (t + np.swapaxes(t, -1, -2))
    rt = np.swapaxes(orientation.rotations, -1, -2)
    u = rt @ np.asarray(e_incident, dtype=float)  # (n_rot, 3): e_i in the molecule frame
    v = rt @ np.asarray(e_scattered, dtype=float)
    amp = np.einsum("ra,kab,rb->rk", v, t, u)
    return orientation.weights @ amp**2


def oriented_channel_activity(
    dalpha_dq: np.ndarray, channels: Sequence[str], orientation: Orientation, geometry_deg: int = 90
) -> np.ndarray:
    """Channel heights 45 Σ_r w_r |e_s·R α′ Rᵀ·e_i|², shape (n_modes, n_channels), Å⁴ amu⁻¹.

    Same normalisation as :func:`vibrapol.spectrum.channels.isotropic_channel_activity`, to
    which it is equal for the :func:`isotropic` orientation.
    """
    t = np.asarray(dalpha_dq, dtype=float)
    out = np.zeros((t.shape[0], len(channels)))
    for j, name in enumerate(channels):
        for ei, es, w in channel_terms(name, geometry_deg):
            out[:, j] += 45.0 * w * orientation_average(t, ei, es, orientation)
    return out
