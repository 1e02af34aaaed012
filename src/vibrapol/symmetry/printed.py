"""Species labels as quantum-chemistry programs print them, read into our names."""

from __future__ import annotations

import re
import warnings
from collections.abc import Sequence
from typing import TYPE_CHECKING

from vibrapol.errors import AccuracyWarning

if TYPE_CHECKING:
    from vibrapol.symmetry.group import PointGroup

_SPECIES_ALIASES = {
    "SG": "Σ⁺",
    "SG+": "Σ⁺",
    "SIGMA+": "Σ⁺",
    "SG-": "Σ⁻",
    "SIGMA-": "Σ⁻",
    "SGG": "Σg⁺",
    "SGG+": "Σg⁺",
    "SGU": "Σu⁺",
    "SGU+": "Σu⁺",
    "SGG-": "Σg⁻",
    "SGU-": "Σu⁻",
    "PI": "Π",
    "PIG": "Πg",
    "PIU": "Πu",
    "DLT": "Δ",
    "DLTG": "Δg",
    "DLTU": "Δu",
    "PHI": "Φ",
}


def normalize_label(text: str) -> str:
    """Read a species label as programs print it into the names used here.

    'AG' → 'Ag', 'B1U' → 'B1u', 'F2' → 'T2', "A'" → "A'", 'A"' → "A''", 'E1G' → 'E1g',
    'SGG' or 'Sigma_g+' → 'Σg⁺', 'PIU' → 'Πu'.  Unknown or placeholder labels ('?A', '') give
    ''.  Whether 'E1' means 'E' depends on the group; see :meth:`PointGroup.species_name`.
    """
    t = text.strip().replace('"', "''").replace("′", "'").replace("″", "''")
    if not t or "?" in t:
        return ""
    key = t.upper().replace("_", "").replace("^", "").replace("SIGMA", "SG").replace("DELTA", "DLT")
    if key in _SPECIES_ALIASES:
        return _SPECIES_ALIASES[key]
    m = re.fullmatch(r"([ABETFGH])(\d*)([GU]?)('{0,2})", key)
    if not m:
        return ""
    letter = "T" if m.group(1) == "F" else m.group(1)
    return f"{letter}{m.group(2)}{m.group(3).lower()}{m.group(4)}"


def _same_but_subscript(a: str, b: str) -> bool:
    """True when two species names differ at most in their numeric subscript (B1 and B2)."""
    return re.sub(r"\d", "", a) == re.sub(r"\d", "", b)


def compare_program_species(
    group: PointGroup, ours: Sequence[str], printed: Sequence[str], where: str
) -> str:
    """Compare the species a program printed for each mode with vibrapol's; one note back.

    Programs and vibrapol may orient the axes differently, which renames species that differ
    only in their subscript (B1 ↔ B2 in C2v, B1g/B2g/B3g in D2h); such a consistent renaming is
    reported as agreement.  Labels of another group (programs often use an abelian subgroup)
    are not compared.

    Parameters
    ----------
    group : PointGroup
        vibrapol's point group of the structure.
    ours, printed : sequence of str
        vibrapol's species and the printed labels, one per mode, same order.
    where : str
        The file, first in the warning.

    Returns
    -------
    str
        A note for the report: agreement, agreement up to the axes, not compared, or the
        disagreement.

    Warns
    -----
    AccuracyWarning
        When the labels disagree, naming the modes (numbered from 1).
    """
    theirs = [group.species_name(p) for p in printed]
    foreign = sorted({p for p, t in zip(printed, theirs, strict=True) if t not in group.irreps})
    degenerate = any(group.dims[group.irreps.index(o)] > 1 for o in ours)
    if foreign or (degenerate and all(group.dims[group.irreps.index(t)] == 1 for t in theirs)):
        which = ", ".join(foreign) if foreign else "only non-degenerate species"
        return (
            f"the program's species labels ({which}) belong to another group than "
            f"{group.symbol} (a subgroup?): not compared with vibrapol's"
        )
    if list(theirs) == list(ours):
        return f"the program's species labels agree with vibrapol's for all {len(ours)} modes"
    rename: dict[str, str] = {}
    for t in dict.fromkeys(theirs):
        picked = [o for o, s in zip(ours, theirs, strict=True) if s == t]
        rename[t] = max(dict.fromkeys(picked), key=picked.count)
    total = group.totally_symmetric
    allowed = len(set(rename.values())) == len(rename) and all(
        _same_but_subscript(t, o) and (t == total) == (o == total) for t, o in rename.items()
    )

    def misses(names: dict[str, str]) -> list[int]:
        return [k for k, (o, t) in enumerate(zip(ours, theirs, strict=True)) if names[t] != o]

    same = {t: t for t in rename}
    if not allowed or len(misses(same)) <= len(misses(rename)):
        rename = same
    bad = misses(rename)
    renamed = ", ".join(f"{t} = {o}" for t, o in rename.items() if t != o)
    if not bad:
        return (
            "the program's species labels agree with vibrapol's up to the choice of axes "
            f"(printed {renamed})"
        )
    listed = ", ".join(f"mode {k + 1} (printed {theirs[k]}, vibrapol {ours[k]})" for k in bad[:6])
    more = f" and {len(bad) - 6} more" if len(bad) > 6 else ""
    axes = f" even with the printed {renamed} (another choice of axes)" if renamed else ""
    message = (
        f"the program's species labels disagree with vibrapol's in {group.symbol}{axes} for "
        f"{len(bad)} mode(s): {listed}{more}"
    )
    warnings.warn(f"{where}: {message}", AccuracyWarning, stacklevel=2)
    return message
