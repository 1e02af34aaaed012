"""Test structures for the symmetry tests, built here with their ideal symmetry.

Bond lengths and angles are rounded literature values quoted from memory; they only need to be
near a real molecule (for the PySCF tests) since the symmetry is exact by construction.
Also: molecules of every crystallographic and common point group, generated as orbits of a
few general points under the group's generators.
"""

from __future__ import annotations

import itertools
import re

import numpy as np


def rotation(axis, angle_rad: float) -> np.ndarray:
    """Rotation matrix (Rodrigues)."""
    u = np.asarray(axis, dtype=float)
    u = u / np.linalg.norm(u)
    k = np.array([[0, -u[2], u[1]], [u[2], 0, -u[0]], [-u[1], u[0], 0]])
    return np.eye(3) + np.sin(angle_rad) * k + (1 - np.cos(angle_rad)) * k @ k


def _polar(r, theta, phi):
    return [r * np.sin(theta) * np.cos(phi), r * np.sin(theta) * np.sin(phi), r * np.cos(theta)]


def water():
    r, t = 0.9572, np.deg2rad(104.52)
    s, c = np.sin(t / 2), np.cos(t / 2)
    return [8, 1, 1], np.array([[0, 0, 0], [0, r * s, r * c], [0, -r * s, r * c]])


def _pyramid(zc, zl, r, angle_deg):
    c = np.cos(np.deg2rad(angle_deg))
    theta = np.pi - np.arcsin(np.sqrt((1 - c) / 1.5))
    x = [[0, 0, 0]] + [_polar(r, theta, 2 * np.pi * k / 3) for k in range(3)]
    return [zc] + [zl] * 3, np.array(x)


def ammonia():
    return _pyramid(7, 1, 1.012, 106.7)


def _tetrahedral(zc, zl, r):
    v = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]]) / np.sqrt(3)
    return [zc] + [zl] * 4, np.vstack([[0, 0, 0], r * v])


def methane():
    return _tetrahedral(6, 1, 1.087)


def ccl4():
    return _tetrahedral(6, 17, 1.766)


def sf6():
    v = np.vstack([np.eye(3), -np.eye(3)])
    return [16] + [9] * 6, np.vstack([[0, 0, 0], 1.561 * v])


def benzene():
    ring = [[np.cos(np.pi * k / 3), np.sin(np.pi * k / 3), 0] for k in range(6)]
    ring = np.array(ring)
    return [6] * 6 + [1] * 6, np.vstack([1.397 * ring, (1.397 + 1.084) * ring])


def co2():
    return [6, 8, 8], np.array([[0, 0, 0], [0, 0, 1.162], [0, 0, -1.162]])


def hcn():
    return [1, 6, 7], np.array([[0, 0, -1.066], [0, 0, 0], [0, 0, 1.153]])


def ethylene():
    cc, ch, t = 1.331, 1.087, np.deg2rad(117.4)
    x = [[0, 0, cc / 2], [0, 0, -cc / 2]]
    for s in (1, -1):
        for y in (1, -1):
            x.append([0, y * ch * np.sin(t / 2), s * (cc / 2 + ch * np.cos(t / 2))])
    return [6, 6, 1, 1, 1, 1], np.array(x)


def ethane_staggered():
    cc, ch, a = 1.535, 1.094, np.deg2rad(111.2)
    x = [[0, 0, cc / 2], [0, 0, -cc / 2]]
    x += [_polar(ch, np.pi - a, 2 * np.pi * k / 3) for k in range(3)]
    x[2:] = [[p[0], p[1], p[2] + cc / 2] for p in x[2:]]
    x += [
        [p[0], p[1], p[2] - cc / 2]
        for p in (_polar(ch, a, 2 * np.pi * k / 3 + np.pi / 3) for k in range(3))
    ]
    return [6, 6] + [1] * 6, np.array(x)


def allene():
    cc, ch, t = 1.308, 1.087, np.deg2rad(118.2)
    s, c = ch * np.sin(t / 2), ch * np.cos(t / 2)
    x = [
        [0, 0, 0],
        [0, 0, cc],
        [0, 0, -cc],
        [0, s, cc + c],
        [0, -s, cc + c],
        [s, 0, -cc - c],
        [-s, 0, -cc - c],
    ]
    return [6, 6, 6, 1, 1, 1, 1], np.array(x)


def naphthalene():
    """Idealised: two regular hexagons (C–C 1.40 Å) sharing the C9–C10 bond along y."""
    a = 1.40
    carbons = []
    for cx in (-a * np.sqrt(3) / 2, a * np.sqrt(3) / 2):
        for k in range(6):
            p = np.round(
                [cx + a * np.cos(np.pi / 2 + np.pi * k / 3), a * np.sin(np.pi / 2 + np.pi * k / 3)],
                9,
            )
            if not any(np.allclose(p, q) for q in carbons):
                carbons.append(p)
    carbons = np.array(carbons)
    hydrogens = []
    for p in carbons:
        near = [q for q in carbons if 0 < np.linalg.norm(q - p) < 1.1 * a]
        if len(near) == 2:
            d = 2 * p - near[0] - near[1]
            hydrogens.append(p + 1.09 * d / np.linalg.norm(d))
    xy = np.vstack([carbons, hydrogens])
    return [6] * len(carbons) + [1] * len(hydrogens), np.c_[xy, np.zeros(len(xy))]


def dichloromethane():
    a, b = np.deg2rad(112.0), np.deg2rad(111.8)
    x = [
        [0, 0, 0],
        [0, 1.772 * np.sin(a / 2), 1.772 * np.cos(a / 2)],
        [0, -1.772 * np.sin(a / 2), 1.772 * np.cos(a / 2)],
    ]
    x += [
        [1.087 * np.sin(b / 2), 0, -1.087 * np.cos(b / 2)],
        [-1.087 * np.sin(b / 2), 0, -1.087 * np.cos(b / 2)],
    ]
    return [6, 17, 17, 1, 1], np.array(x)


def b12h12():
    """The icosahedral closo-borane B12H12(2-) (radii 1.70 and 2.90 Å), group Ih."""
    phi = (1 + 5**0.5) / 2
    v = []
    for s1 in (1, -1):
        for s2 in (1, -1):
            v += [[0, s1, s2 * phi], [s1, s2 * phi, 0], [s2 * phi, 0, s1]]
    v = np.array(v, dtype=float)
    v /= np.linalg.norm(v, axis=1)[:, None]
    return [5] * 12 + [1] * 12, np.vstack([1.70 * v, 2.90 * v])


def c60():
    """Buckminsterfullerene as a truncated icosahedron (edge 1.40 Å: cyclic permutations of
    (0, ±1, ±3φ), (±1, ±(2+φ), ±2φ), (±φ, ±2, ±(2φ+1)) for edge 2), group Ih."""
    phi = (1 + 5**0.5) / 2
    points = set()
    for base in ((0, 1, 3 * phi), (1, 2 + phi, 2 * phi), (phi, 2, 2 * phi + 1)):
        for signs in itertools.product((1, -1), repeat=3):
            v = np.array(base) * signs
            for k in range(3):
                points.add(tuple(np.round(np.roll(v, k), 9)))
    return [6] * 60, 0.70 * np.array(sorted(points))


def chfclbr():
    """Bromochlorofluoromethane, a chiral molecule with no symmetry (C1)."""
    z, x = _tetrahedral(6, 1, 1.0)
    lengths = [0, 1.09, 1.35, 1.77, 1.94]
    return [6, 1, 9, 17, 35], np.array([x[i] * lengths[i] for i in range(5)])


MOLECULES = {
    "water": water,
    "ammonia": ammonia,
    "methane": methane,
    "ccl4": ccl4,
    "sf6": sf6,
    "benzene": benzene,
    "co2": co2,
    "hcn": hcn,
    "ethylene": ethylene,
    "ethane": ethane_staggered,
    "allene": allene,
    "naphthalene": naphthalene,
    "dichloromethane": dichloromethane,
    "b12h12": b12h12,
    "chfclbr": chfclbr,
}


def moved(z, x, seed: int, noise_ang: float = 0.0):
    """A randomly rotated and shifted copy, with uniform ±noise_ang noise on every coordinate."""
    rng = np.random.default_rng(seed)
    y = np.asarray(x, dtype=float) @ rotation(
        rng.normal(size=3), rng.uniform(0, np.pi)
    ).T + rng.normal(size=3)
    return z, y + rng.uniform(-noise_ang, noise_ang, y.shape)


# -- molecules of a given group: orbits of general points under the group's generators -------


def _c(n, axis=(0, 0, 1)):
    return rotation(axis, 2 * np.pi / n)


def _sigma(normal):
    v = np.asarray(normal, dtype=float)
    v /= np.linalg.norm(v)
    return np.eye(3) - 2 * np.outer(v, v)


def generators(symbol: str) -> list[np.ndarray]:
    """Generators of a point group in a standard orientation (principal axis z)."""
    if symbol == "C1":
        return [np.eye(3)]
    if symbol == "Cs":
        return [_sigma([0, 0, 1])]
    if symbol == "Ci":
        return [-np.eye(3)]
    m = re.fullmatch(r"([CDS])(\d+)([hvd]?)", symbol)
    if m:
        family, n, sub = m.group(1), int(m.group(2)), m.group(3)
        if family == "S":
            return [_sigma([0, 0, 1]) @ _c(n)]
        gens = [_c(n)]
        if family == "D":
            gens.append(_c(2, (1, 0, 0)))
        if sub == "h":
            gens.append(_sigma([0, 0, 1]))
        elif sub == "v":
            gens.append(_sigma([0, 1, 0]))
        elif sub == "d":
            gens.append(_sigma([-np.sin(np.pi / (2 * n)), np.cos(np.pi / (2 * n)), 0]))
        return gens
    c3, c2 = _c(3, (1, 1, 1)), _c(2)
    cubic = {
        "T": [c3, c2],
        "Td": [c3, c2, _sigma([1, -1, 0])],
        "Th": [c3, c2, -np.eye(3)],
        "O": [c3, _c(4)],
        "Oh": [c3, _c(4), -np.eye(3)],
    }
    return cubic[symbol]


def closure(gens: list[np.ndarray]) -> list[np.ndarray]:
    """All products of the generators (the group)."""
    ops = [np.eye(3)]
    todo = list(gens)
    while todo:
        a = todo.pop()
        if any(np.allclose(a, b, atol=1e-9) for b in ops):
            continue
        ops.append(a)
        todo += [a @ b for b in ops] + [b @ a for b in ops]
    return ops


#: Four general points (found by a random search for the largest smallest distance between
#: atoms over all groups in :data:`GROUPS`: 0.45 Å).
GENERAL_POINTS = tuple(
    tuple(2.5 * c for c in p)
    for p in (
        (-0.13, -1.46, -0.44),
        (-1.31, 1.49, 0.87),
        (-0.22, -1.55, -1.39),
        (-0.86, 0.09, -1.42),
    )
)


def group_molecule(symbol: str):
    """A molecule of exactly this symmetry: orbits of general points, one element per orbit.

    Returns atomic numbers, coordinates and the group order.
    """
    ops = closure(generators(symbol))
    z, x = [], []
    for element, point in zip((6, 7, 8, 9), GENERAL_POINTS, strict=True):
        orbit = []
        for r in ops:
            p = r @ np.asarray(point)
            if not any(np.linalg.norm(p - q) < 1e-6 for q in orbit):
                orbit.append(p)
        z += [element] * len(orbit)
        x += orbit
    return z, np.array(x), len(ops)


GROUPS = (
    "C1 Cs Ci C2 C3 C4 C5 C6 C2v C3v C4v C5v C6v C2h C3h C4h C5h C6h D2 D3 D4 D5 D6 D2h D3h D4h "
    "D5h D6h D2d D3d D4d D5d D6d S4 S6 S8 T Td Th O Oh"
).split()
