"""The symmetry report of ``vibrapol symmetry``: point group, Γ_vib, selection rules, modes."""

from __future__ import annotations

import dataclasses
import json
from typing import TypedDict

from vibrapol.symmetry import (
    ModeSymmetry,
    PointGroup,
    band_counts,
    format_representation,
    gamma_vib,
    species_rules,
)


def _text_flag(value: bool | None) -> str:
    return "" if value is None else ("y" if value else "-")


def _character(value: float) -> str:
    return str(int(round(value))) if abs(value - round(value)) < 1e-6 else f"{value:.3f}"


def character_table_text(group: PointGroup) -> str:
    """The character table of ``group`` as fixed-width text (classes across, species down)."""
    width = max(6, *(len(c) + 1 for c in group.class_labels))
    lines = [f"{group.symbol:<8}" + "".join(f"{c:>{width}}" for c in group.class_labels)]
    for name, row in zip(group.irreps, group.characters, strict=True):
        lines.append(f"{name:<8}" + "".join(f"{_character(v):>{width}}" for v in row))
    if group.linear:
        lines.append("(operations of the finite subgroup used for the linear molecule)")
    return "\n".join(lines) + "\n"


class SpeciesRow(TypedDict):
    """One species of the point group, as :func:`symmetry_rows` gives it."""

    irrep: str
    dim: int
    count_vib: int
    ir_active: bool
    ir_components: str
    raman_active: bool
    polarization: str


class ModeRow(TypedDict):
    """One mode with its species, as :func:`mode_rows` gives it."""

    mode: int
    frequency_cm1: float
    irrep: str
    degenerate_set: int
    purity: float
    ir_active: bool
    raman_active: bool
    polarization: str


def symmetry_rows(group: PointGroup) -> list[SpeciesRow]:
    """One dictionary per species: name, dimension, count in Γ_vib and selection rules."""
    counts = gamma_vib(group)
    return [
        {
            "irrep": r.irrep,
            "dim": r.dim,
            "count_vib": counts.get(r.irrep, 0),
            "ir_active": r.ir_active,
            "ir_components": r.ir_components,
            "raman_active": r.raman_active,
            "polarization": r.polarization,
        }
        for r in species_rules(group)
    ]


def mode_rows(symmetry: ModeSymmetry) -> list[ModeRow]:
    """One dictionary per mode: frequency, species, set, purity, activities, expected band."""
    rules = {r.irrep: r for r in species_rules(symmetry.group)}
    set_of = {k: i for i, s in enumerate(symmetry.sets) for k in s}
    purity = symmetry.purity
    freqs = symmetry.modes.freqs_cm1
    return [
        {
            "mode": k + 1,
            "frequency_cm1": float(freqs[k]),
            "irrep": name,
            "degenerate_set": set_of[k] + 1,
            "purity": float(purity[k]),
            "ir_active": rules[name].ir_active,
            "raman_active": rules[name].raman_active,
            "polarization": rules[name].polarization,
        }
        for k, name in enumerate(symmetry.irreps)
    ]


def symmetry_text(
    group: PointGroup,
    *,
    symmetry: ModeSymmetry | None = None,
    source: str = "",
    characters: bool = False,
    warnings: list[str] | tuple[str, ...] = (),
) -> str:
    """What ``vibrapol symmetry`` prints: point group, Γ_vib, selection rules, mode species.

    ``warnings`` (texts already shown on stderr) are repeated in the header.
    """
    counts = band_counts(group)
    n_modes = sum(r["dim"] * r["count_vib"] for r in symmetry_rows(group))
    lines = [
        f"source: {source or '(in memory)'} ({group.n_atoms} atoms)",
        f"point group: {group.symbol}   (tolerance {group.tolerance_ang:g} Å; largest atom "
        f"mismatch {group.max_deviation_ang:.2g} Å)",
        f"species names: {group.convention}",
    ]
    lines += [f"note: {n}" for n in group.notes]
    lines += [f"warning: {w}" for w in warnings]
    lines += [
        f"Γ_vib = {format_representation(gamma_vib(group))}   ({n_modes} modes, "
        f"{counts.fundamentals} fundamentals)",
        "",
        f"{'species':<8} {'dim':>3} {'in Γ_vib':>8}  {'IR':<9} {'Raman':<6} expected Raman band",
    ]
    for row in symmetry_rows(group):
        ir = row["ir_components"] if row["ir_active"] else "-"
        band = {
            "polarized": "polarized (rho_linear < 3/4)",
            "depolarized": "depolarized (rho_linear = 3/4)",
            "inactive": "-",
        }[row["polarization"]]
        lines.append(
            f"{row['irrep']:<8} {row['dim']:>3} {row['count_vib']:>8}  {ir:<9} "
            f"{'active' if row['raman_active'] else '-':<6} {band}"
        )
    lines += [
        "",
        f"fundamentals: {counts.fundamentals}; Raman-active {counts.raman_active} "
        f"({counts.polarized} polarized); IR-active {counts.ir_active}; "
        f"in both {counts.coincident}; in neither {counts.silent}",
    ]
    if characters:
        lines += ["", character_table_text(group).rstrip("\n")]
    if symmetry is not None:
        lines += ["", "modes (species of each degenerate set; purity 1 = pure species):"]
        lines += [f"note: {n}" for n in symmetry.notes]
        lines.append(
            f"{'mode':>4} {'freq/cm-1':>10} {'irrep':>6} {'set':>4} {'purity':>7} "
            f"{'IR':>3} {'Ra':>3}  Raman band"
        )
        for mode in mode_rows(symmetry):
            lines.append(
                f"{mode['mode']:>4} {mode['frequency_cm1']:>10.2f} {mode['irrep']:>6} "
                f"{mode['degenerate_set']:>4} {mode['purity']:>7.4f} "
                f"{_text_flag(mode['ir_active']):>3} {_text_flag(mode['raman_active']):>3}  "
                f"{mode['polarization']}"
            )
    return "\n".join(lines) + "\n"


def symmetry_json(
    group: PointGroup,
    *,
    symmetry: ModeSymmetry | None = None,
    source: str = "",
    warnings: list[str] | tuple[str, ...] = (),
) -> str:
    """JSON document with the same content as :func:`symmetry_text`."""
    doc: dict[str, object] = {
        "source": source,
        "point_group": group.symbol,
        "tolerance_ang": group.tolerance_ang,
        "max_deviation_ang": group.max_deviation_ang,
        "convention": group.convention,
        "notes": list(group.notes),
        "warnings": list(warnings),
        "gamma_vib": gamma_vib(group),
        "band_counts": dataclasses.asdict(band_counts(group)),
        "species": symmetry_rows(group),
        "character_table": {
            "classes": list(group.class_labels),
            "class_sizes": group.class_sizes.tolist(),
            "irreps": list(group.irreps),
            "characters": group.characters.round(12).tolist(),
        },
    }
    if symmetry is not None:
        doc["modes"] = mode_rows(symmetry)
        doc["symmetrized"] = symmetry.symmetrized
        doc["mode_notes"] = list(symmetry.notes)
    return json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False) + "\n"
