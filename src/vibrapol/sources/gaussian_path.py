"""Gaussian's route line, ``Freq=Projected`` and the program's own messages about its results.

``Freq=Projected`` (for points along a reaction path, where the gradient is not zero) makes
Gaussian project the path direction — the mass-weighted gradient — out of the Hessian together
with the overall translations and rotations, and print 3N−7 modes.  Diagonalising the
unprojected Hessian instead gives one mode more (often imaginary) and other modes and
activities, so vibrapol detects the keyword and projects the same way
(:func:`path_projected_modes`), then compares with the printed frequencies as for every job.
"""

from __future__ import annotations

import re

import numpy as np

from vibrapol.errors import ShapeError
from vibrapol.vibrations import (
    HarmonicModes,
    modes_in_complement,
    rigid_body_vectors,
)

#: ``freq`` then ``=option``, ``=(options)`` or ``(options)``; options by commas or spaces.
_FREQ_KEYWORD = re.compile(
    r"(?:^|[\s/#])freq(?:uency)?\s*(?:=\s*\(([^)]*)\)|\(([^)]*)\)|=\s*([^\s/()]+))?",
    re.IGNORECASE,
)

#: Lines in which Gaussian says that something went wrong with the job or its results.
PROGRAM_MESSAGES = (
    "Error termination",
    "Optimization stopped",
    "Convergence failure",
    "Convergence criterion not met",
    "Number of steps exceeded",
    "Linear angle in Tors",
    "Problem with the distance matrix",
)

#: At most this many distinct messages are passed on (the rest are counted).
MAX_MESSAGES = 5


def route_blocks(lines: list[str]) -> list[tuple[int, str]]:
    """Every route section of a log: (line index, text), continuation lines joined.

    Layout (the route is printed between rules, wrapped at 70 characters, sometimes inside a
    word)::

         ----------------------------------------------------------------------
         #p b3lyp/6-31g(d) freq=(raman,projected) scf=tight integral=ultrafine
          iop(7/33=1)
         ----------------------------------------------------------------------
    """
    found = []
    for i, line in enumerate(lines):
        if not line.startswith(" #") or i == 0 or not lines[i - 1].strip().startswith("---"):
            continue
        text = line[1:]
        for nxt in lines[i + 1 : i + 20]:
            if nxt.strip().startswith("---"):
                break
            text += nxt[1:]
        found.append((i, text))
    return found


def freq_options(route: str) -> list[str]:
    """The options given to the ``Freq`` keyword of a route, lower case ([] for none)."""
    options: list[str] = []
    for match in _FREQ_KEYWORD.finditer(route):
        given = next((g for g in match.groups() if g), "")
        options += [opt.lower() for opt in re.split(r"[,\s]+", given) if opt]
    return options


def asks_projected(route: str) -> bool:
    """True when the route's ``Freq`` keyword has the ``Projected`` option.

    Any case; the option may be shortened (``Proj``), as Gaussian's keywords may.
    """
    return any(opt.startswith("proj") for opt in freq_options(route))


def program_messages(lines: list[str]) -> list[str]:
    """Gaussian's own lines about failures, "<text> (line N)", distinct, at most a few."""
    found: dict[str, int] = {}
    for i, line in enumerate(lines):
        if any(m in line for m in PROGRAM_MESSAGES):
            found.setdefault(" ".join(line.split()), i + 1)
    messages = [f"'{text}' (line {n})" for text, n in found.items()]
    if len(messages) > MAX_MESSAGES:
        messages = [*messages[:MAX_MESSAGES], f"and {len(messages) - MAX_MESSAGES} more"]
    return messages


def path_projected_modes(
    hessian_au: np.ndarray,
    masses_da: np.ndarray,
    coordinates_ang: np.ndarray,
    gradient_au: np.ndarray,
) -> HarmonicModes:
    """Modes of the Hessian with translations, rotations and the path direction projected out.

    The path direction is the mass-weighted gradient g̃ = M⁻¹ᐟ² g, normalised; the modes are
    the eigenvectors of the mass-weighted Hessian in the complement of the rigid-body vectors
    and g̃ (3N−7 of them; 3N−6 for a linear molecule) [1]_.

    Raises
    ------
    ShapeError
        For a zero gradient (nothing to project: not a point along a path).

    References
    ----------
    .. [1] Miller, Handy and Adams, J. Chem. Phys. 72, 99 (1980), eq. 2.17 onwards.
    """
    masses = np.asarray(masses_da, dtype=float)
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(masses), 3)
    hmw = np.asarray(hessian_au, dtype=float) * np.outer(inv_sqrt_m, inv_sqrt_m)
    hmw = 0.5 * (hmw + hmw.T)
    rigid = rigid_body_vectors(coordinates_ang, masses)
    path = np.asarray(gradient_au, dtype=float) * inv_sqrt_m
    path -= rigid.T @ (rigid @ path)  # a gradient has no rigid-body part; remove rounding
    norm = float(np.linalg.norm(path))
    if norm < 1e-12:
        raise ShapeError("the gradient is zero: there is no path direction to project out")
    fixed = np.vstack([rigid, path / norm])
    return modes_in_complement(hmw, fixed, inv_sqrt_m, linear=rigid.shape[0] == 5)
