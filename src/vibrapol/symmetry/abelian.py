"""Our own search for the symmetry of asymmetric tops, used beside the library.

A molecule whose three principal moments of inertia differ can only have a subgroup of D2h as
its point group, with every axis and plane normal along a principal axis: the inertia tensor
is invariant under the group, so each operation permutes its (distinct) eigenvectors up to
sign (common practice; e.g. Wilson, Decius and Cross, *Molecular Vibrations*, 1955, ch. 5).
That leaves 8 candidate operations, checked one by one in Å; the largest subset that is a
group is the point group.  This needs no thresholds of the library and helps where the library
fails on noisy or unusual geometries (it does, e.g., on some D2h structures with ±0.001 Å
noise, reporting only Ci).
"""

from __future__ import annotations

import itertools

import numpy as np

from vibrapol.symmetry.group import match_atoms

#: The three moments must differ by more than this fraction of the largest.
ASYMMETRY_MIN = 1e-3

# Diagonal of each D2h operation in the principal frame, and its name.
_OPS = (
    ((1, 1, 1), "E"),
    ((-1, -1, 1), "C2"),
    ((-1, 1, -1), "C2"),
    ((1, -1, -1), "C2"),
    ((-1, -1, -1), "i"),
    ((1, 1, -1), "σ"),
    ((1, -1, 1), "σ"),
    ((-1, 1, 1), "σ"),
)


def principal_frame(centred: np.ndarray, masses: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Principal axes (rows) and moments of inertia (ascending)."""
    second = np.einsum("i,ij,ik->jk", masses, centred, centred)
    inertia = np.trace(second) * np.eye(3) - second
    moments, vecs = np.linalg.eigh(inertia)
    return vecs.T, moments


def _closed(subset: tuple[int, ...]) -> bool:
    diags = {tuple(_OPS[k][0]) for k in subset}
    return all(tuple(np.multiply(a, b)) in diags for a in diags for b in diags)


def _symbol(names: list[str]) -> str:
    n_c2, n_sigma, has_i = names.count("C2"), names.count("σ"), "i" in names
    order = len(names)
    if order == 8:
        return "D2h"
    if order == 4:
        return "C2h" if has_i else ("C2v" if n_sigma == 2 else "D2")
    if order == 2:
        return "Ci" if has_i else ("C2" if n_c2 else "Cs")
    return "C1"


def _characters(diags: np.ndarray) -> np.ndarray:
    """All one-dimensional representations χ: H → ±1 of the group of diagonal matrices."""
    index = {tuple(d): k for k, d in enumerate(diags)}
    reps = []
    for signs in itertools.product((1, -1), repeat=len(diags)):
        if signs[0] != 1:
            continue
        if all(
            signs[index[tuple(np.multiply(a, b))]] == signs[i] * signs[j]
            for i, a in enumerate(diags)
            for j, b in enumerate(diags)
        ):
            reps.append(signs)
    return np.array(reps, dtype=float)


def _library_style_name(symbol: str, names: list[str], chi: np.ndarray) -> str:
    """Provisional species name; :func:`~vibrapol.symmetry.labels.standard_names` finishes it."""
    c2 = [k for k, n in enumerate(names) if n == "C2"]
    sigma = [k for k, n in enumerate(names) if n == "σ"]
    gu = ""
    if "i" in names:
        gu = "g" if chi[names.index("i")] > 0 else "u"
    if symbol == "Cs":
        return "A'" if chi[sigma[0]] > 0 else "A''"
    if symbol == "C2v":
        if chi[c2[0]] > 0:
            return "A1" if chi[sigma[0]] > 0 else "A2"
        return "B1" if chi[sigma[0]] > 0 else "B2"
    if symbol in ("D2", "D2h"):
        symmetric = [k for k in c2 if chi[k] > 0]
        return ("A1" if len(symmetric) == 3 else f"B{1 + c2.index(symmetric[0])}") + gu
    if c2:
        return ("A" if chi[c2[0]] > 0 else "B") + gu
    return "A" + gu


def abelian_group(
    centred: np.ndarray, species: np.ndarray, masses: np.ndarray, tolerance: float
) -> dict | None:
    """The largest subgroup of D2h along the principal axes that passes the check in Å.

    Returns
    -------
    dict or None
        None for symmetric and spherical tops (moments closer than :data:`ASYMMETRY_MIN`) and
        when only E passes; else the fields of a
        :class:`~vibrapol.symmetry.labels.GroupFacts` except atomic numbers, bonds and the
        coordinates, plus ``"deviation"``.
    """
    frame, moments = principal_frame(centred, masses)
    if moments[-1] <= 0 or np.min(np.diff(moments)) < ASYMMETRY_MIN * moments[-1]:
        return None
    mats = [frame.T @ np.diag(d) @ frame for d, _ in _OPS]
    checks = [match_atoms(m, centred, species, tolerance) for m in mats]
    valid = [k for k, (perm, _) in enumerate(checks) if perm is not None]
    best: tuple[int, ...] = (0,)
    for size in (8, 4, 2):
        for subset in itertools.combinations(valid, size):
            if 0 in subset and _closed(subset):
                best = subset
                break
        if len(best) > 1:
            break
    if len(best) == 1:
        return None
    names = [_OPS[k][1] for k in best]
    symbol = _symbol(names)
    chars = _characters(np.array([_OPS[k][0] for k in best]))
    irreps = tuple(_library_style_name(symbol, names, chi) for chi in chars)
    op_names = tuple({"σ": "σh" if symbol in ("Cs", "C2h") else "σv"}.get(n, n) for n in names)
    return {
        "symbol": symbol,
        "matrices": np.array([mats[k] for k in best]),
        "op_class": np.arange(len(best)),
        "op_names": op_names,
        "characters": chars,
        "irrep_names": irreps,
        "permutations": np.array([checks[k][0] for k in best]),
        "deviation": max(checks[k][1] for k in best),
    }
