"""Polarization channels: which incident and scattered polarizations a spectrum records.

Laboratory frame (used by every channel and by :mod:`vibrapol.spectrum.orientation`):

* the incident beam travels along +z;
* the scattering plane is the xz plane; **V** (vertical) is y, perpendicular to it;
* **H** of the incident light is x;
* 90° scattering collects light travelling along +x, whose H is z; 180° (back-scattering)
  collects light travelling along −z, whose H is x.

A channel is named by two letters, incident then analyzer: ``v`` or ``h`` (linear), ``n``
(natural, i.e. unpolarized, incident light: the average over V and H) and ``u`` (no analyzer:
the sum over V and H).  So ``vv`` and ``vh`` are the parallel and crossed spectra, ``vu`` is
V-polarized excitation without analyzer, ``nv``/``nh`` the two components under natural light.
Any polarizer/analyzer pair is ``p<θ>a<φ>`` with both angles in degrees from V towards H (e.g.
``p45a-45``): e_i = cos θ V + sin θ H_i, e_s = cos φ V + sin φ H_s.

The height of a channel is reported as 45⟨|e_s·α′·e_i|²⟩ (Å⁴ amu⁻¹), so that for an isotropic
sample VV = 45a² + 4γ², VH = 3γ² and VU = VV + VH = 45a² + 7γ², the Raman activity.

References
----------
.. [Long] D. A. Long, *The Raman Effect*, Wiley (2002), ch. 5: the orientation average
   ⟨|e_s·α′·e_i|²⟩ = a²c² + γ²(3 + c²)/45 with c = e_i·e_s, and the intensities for natural
   incident light.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence

import numpy as np

from vibrapol import invariants as inv
from vibrapol.errors import VibrapolError

#: Scattering geometries (angle between incident and collected beam, degrees).
GEOMETRIES = (90, 180)

#: The named two-letter channels.
NAMED_CHANNELS = ("vv", "vh", "vu", "hv", "hh", "hu", "nv", "nh", "nu")

#: Channels every spectrum carries first.
BASE_CHANNELS = ("vv", "vh")

#: Channels behind the two depolarization ratios: VH/VV (linear) and NH/NV (natural light).
RATIO_CHANNELS = ("vv", "vh", "nv", "nh")

#: A band whose parallel channel is below this fraction of the strongest band's total has no
#: measurable ratio (NaN): forbidden bands print numerical noise of this order or smaller.
RATIO_NOISE = 1e-10

_V = np.array([0.0, 1.0, 0.0])
_H_INCIDENT = np.array([1.0, 0.0, 0.0])
_H_SCATTERED = {90: np.array([0.0, 0.0, 1.0]), 180: np.array([1.0, 0.0, 0.0])}
_ANGLES = re.compile(r"^p(-?\d+(?:\.\d+)?)a(-?\d+(?:\.\d+)?)$")

#: One term of a channel: (incident unit vector, scattered unit vector, weight).
Term = tuple[np.ndarray, np.ndarray, float]


def check_geometry(geometry_deg: int) -> int:
    """Return the geometry as an int, or raise for anything but 90 and 180."""
    if geometry_deg not in GEOMETRIES:
        raise VibrapolError(f"scattering geometry must be 90 or 180 degrees, got {geometry_deg}")
    return int(geometry_deg)


def _incident(letter: str) -> list[tuple[np.ndarray, float]]:
    if letter == "v":
        return [(_V, 1.0)]
    if letter == "h":
        return [(_H_INCIDENT, 1.0)]
    return [(_V, 0.5), (_H_INCIDENT, 0.5)]  # natural light: half the irradiance in each


def _scattered(letter: str, geometry_deg: int) -> list[tuple[np.ndarray, float]]:
    h = _H_SCATTERED[geometry_deg]
    if letter == "v":
        return [(_V, 1.0)]
    if letter == "h":
        return [(h, 1.0)]
    return [(_V, 1.0), (h, 1.0)]  # no analyzer: both components are detected


def polarization_vector(angle_deg: float, h_vector: np.ndarray) -> np.ndarray:
    """Unit vector cos θ V + sin θ H for an angle θ measured from V towards ``h_vector``."""
    t = math.radians(angle_deg)
    return math.cos(t) * _V + math.sin(t) * np.asarray(h_vector, dtype=float)


def angle_channel(polarizer_deg: float, analyzer_deg: float) -> str:
    """Name of the channel with the given polarizer and analyzer angles."""
    return f"p{polarizer_deg:g}a{analyzer_deg:g}"


def channel_terms(name: str, geometry_deg: int = 90) -> list[Term]:
    """The (e_i, e_s, weight) terms whose weighted sum is the channel's intensity.

    Raises
    ------
    VibrapolError
        For a name that is neither a two-letter channel nor ``p<θ>a<φ>``.
    """
    geometry_deg = check_geometry(geometry_deg)
    key = name.strip().lower()
    if key in NAMED_CHANNELS:
        return [
            (ei, es, wi * ws)
            for ei, wi in _incident(key[0])
            for es, ws in _scattered(key[1], geometry_deg)
        ]
    m = _ANGLES.match(key)
    if m:
        ei = polarization_vector(float(m.group(1)), _H_INCIDENT)
        es = polarization_vector(float(m.group(2)), _H_SCATTERED[geometry_deg])
        return [(ei, es, 1.0)]
    raise VibrapolError(
        f"unknown channel {name!r}: use two letters (incident v|h|n, analyzer v|h|u, e.g. vv, nh) "
        "or p<polarizer deg>a<analyzer deg> such as p45a-45"
    )


def with_base_channels(channels: Sequence[str] = ()) -> tuple[str, ...]:
    """``("vv", "vh", …)``: the base channels first, then the others in the given order."""
    out = list(BASE_CHANNELS)
    for name in channels:
        key = name.strip().lower()
        channel_terms(key)  # validate early
        if key not in out:
            out.append(key)
    return tuple(out)


def isotropic_channel_activity(
    a2: np.ndarray, gamma2: np.ndarray, channels: Sequence[str], geometry_deg: int = 90
) -> np.ndarray:
    """Channel heights 45⟨|e_s·α′·e_i|²⟩ of an isotropic sample, shape (n_modes, n_channels).

    Uses the closed-form orientation average [Long]_ through
    :func:`vibrapol.invariants.polarized_intensity`; a², γ² in Å⁴ amu⁻¹.
    """
    a2 = np.atleast_1d(np.asarray(a2, dtype=float))
    gamma2 = np.atleast_1d(np.asarray(gamma2, dtype=float))
    out = np.zeros((a2.shape[0], len(channels)))
    for j, name in enumerate(channels):
        for ei, es, w in channel_terms(name, geometry_deg):
            out[:, j] += w * 45.0 * inv.polarized_intensity(a2, gamma2, ei, es)
    return out


def depolarization_ratios(
    heights: np.ndarray, channels: Sequence[str]
) -> tuple[np.ndarray, np.ndarray]:
    """(VH/VV, NH/NV) per band, from channel heights of the geometry and sample computed.

    The ratios are those of the channels as computed, so they hold for the scattering
    geometry and the orientation of the sample: at 90° for an isotropic sample they are
    ρ_linear = 3γ²/(45a² + 4γ²) and ρ_natural = 6γ²/(45a² + 7γ²); at 180° the natural-light
    ratio is 1 [Long]_.  NaN where the denominator is below :data:`RATIO_NOISE` of the largest
    band height.

    Parameters
    ----------
    heights : ndarray (n_bands, n_channels)
    channels : sequence of str
        Names of the columns; must include :data:`RATIO_CHANNELS`.
    """
    h = np.asarray(heights, dtype=float)
    col = {name: j for j, name in enumerate(channels)}
    floor = RATIO_NOISE * (np.nanmax(h) if h.size and np.isfinite(h).any() else 0.0)

    def ratio(num: str, den: str) -> np.ndarray:
        n, d = h[:, col[num]], h[:, col[den]]
        out = np.full(n.shape, np.nan)
        np.divide(n, d, out=out, where=np.isfinite(d) & (d > floor))
        return out

    return ratio("vh", "vv"), ratio("nh", "nv")
