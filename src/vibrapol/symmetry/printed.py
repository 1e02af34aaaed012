"""Species labels as quantum-chemistry programs print them, read into our names."""

from __future__ import annotations

import re

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
