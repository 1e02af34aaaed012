"""Tables as text, CSV, JSON, Markdown and LaTeX: the Raman table and the symmetry report."""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import math

import numpy as np

from vibrapol.ramantable import RamanTable
from vibrapol.scaling import FrequencyScale
from vibrapol.symmetry import (
    ModeSymmetry,
    PointGroup,
    band_counts,
    format_representation,
    gamma_vib,
    species_rules,
)
from vibrapol.units import CODATA_VERSION

#: Columns of the per-mode CSV, in order (units: cm⁻¹, –, Å⁴/amu ×3, –, –, –, –, –, –).
#: ``ir_active`` and ``raman_active`` are the selection rules of the mode's species (empty when
#: the symmetry is not known).
TABLE_COLUMNS = (
    "mode",
    "frequency_cm1",
    "irrep",
    "a2",
    "gamma2",
    "activity",
    "rho_linear",
    "rho_natural",
    "polarized",
    "degenerate_set",
    "ir_active",
    "raman_active",
)


def _fmt_g(value: float | None) -> str:
    return "" if value is None or not math.isfinite(value) else f"{value:.4g}"


def _fmt(value: float, digits: int) -> str:
    return "" if value is None or not math.isfinite(value) else f"{value:.{digits}f}"


def _finite_or_none(value: float) -> float | None:
    return value if math.isfinite(value) else None


def _flag(values: np.ndarray | None, i: int) -> bool | None:
    return None if values is None else bool(values[i])


def _csv_flag(value: bool | None) -> str:
    return "" if value is None else ("true" if value else "false")


def table_rows(table: RamanTable) -> list[dict[str, object]]:
    """One dictionary per mode with the keys of :data:`TABLE_COLUMNS`.

    NaN ρ → None.  When the source gives only activities, a², γ², ρ and ``polarized`` are
    None (unknown).  ``ir_active`` and ``raman_active`` are None when the table carries no
    symmetry.
    """
    rows = []
    for i in range(table.n_modes):
        rho_l = float(table.rho_linear[i])
        rho_n = float(table.rho_natural[i])
        known = math.isfinite(float(table.a2[i]))
        rows.append(
            {
                "mode": i + 1,
                "frequency_cm1": float(table.freqs_cm1[i]),
                "irrep": table.irreps[i],
                "a2": _finite_or_none(float(table.a2[i])),
                "gamma2": _finite_or_none(float(table.gamma2[i])),
                "activity": float(table.activity[i]),
                "rho_linear": rho_l if math.isfinite(rho_l) else None,
                "rho_natural": rho_n if math.isfinite(rho_n) else None,
                "polarized": bool(table.polarized[i]) if known else None,
                "degenerate_set": int(table.degenerate_set[i]),
                "ir_active": _flag(table.ir_active, i),
                "raman_active": _flag(table.raman_active, i),
            }
        )
    return rows


def table_csv(table: RamanTable) -> str:
    """CSV with exactly :data:`TABLE_COLUMNS`; empty ρ for Raman-inactive modes."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(TABLE_COLUMNS)
    for row in table_rows(table):
        writer.writerow(
            [
                row["mode"],
                f"{row['frequency_cm1']:.4f}",
                row["irrep"],
                "" if row["a2"] is None else f"{row['a2']:.6g}",
                "" if row["gamma2"] is None else f"{row['gamma2']:.6g}",
                f"{row['activity']:.6g}",
                "" if row["rho_linear"] is None else f"{row['rho_linear']:.6f}",
                "" if row["rho_natural"] is None else f"{row['rho_natural']:.6f}",
                "" if row["polarized"] is None else str(row["polarized"]).lower(),
                row["degenerate_set"],
                _csv_flag(row["ir_active"]),
                _csv_flag(row["raman_active"]),
            ]
        )
    return buf.getvalue()


def _header(table: RamanTable) -> dict[str, str]:
    p = table.provenance
    program = " ".join(x for x in (p.program, p.program_version) if x)
    method = "/".join(x for x in (p.method, p.basis) if x)
    return {
        "source": p.source_file or "(in memory)",
        "program": program,
        "method": method,
        "point_group": table.point_group,
        "symmetry_convention": table.symmetry_convention,
    }


def _relative(table: RamanTable) -> bool:
    """True when the source gave only relative Raman intensities (Provenance.raman_scale)."""
    return table.provenance.raman_scale == "relative"


def table_json(table: RamanTable) -> str:
    """JSON document: header fields, units, and one record per mode."""
    unit = "relative (largest activity 100)" if _relative(table) else "angstrom^4/amu"
    doc = {
        "header": _header(table),
        "units": {"frequency_cm1": "cm-1", "a2": unit, "gamma2": unit, "activity": unit},
        "constants": CODATA_VERSION,
        "modes": table_rows(table),
    }
    return json.dumps(doc, indent=1, allow_nan=False) + "\n"


def table_text(table: RamanTable) -> str:
    """A readable fixed-width table with a header naming source, method and point group."""
    h = _header(table)
    lines = [
        f"source: {h['source']}",
        f"program: {h['program'] or '-'}   method: {h['method'] or '-'}"
        f"   point group: {h['point_group'] or '-'}",
    ]
    if h["symmetry_convention"]:
        lines.append(f"species names: {h['symmetry_convention']}")
    lines += [f"note: {n}" for n in table.provenance.notes]
    lines += [
        (
            "a2, gamma2, activity RELATIVE (largest activity 100, not Å⁴/amu)"
            if _relative(table)
            else "a2, gamma2, activity in Å⁴/amu"
        )
        + "; rho for 90° scattering (linear / natural incident light)",
        "",
        f"{'mode':>4} {'freq/cm-1':>10} {'irrep':>6} {'a2':>11} {'gamma2':>11} {'activity':>11}"
        f" {'rho_lin':>7} {'rho_nat':>7} {'pol':>3} {'set':>4} {'IR':>3} {'Ra':>3}",
    ]
    for row in table_rows(table):
        lines.append(
            f"{row['mode']:>4} {row['frequency_cm1']:>10.2f} {row['irrep']:>6}"
            f" {_fmt_g(row['a2']):>11} {_fmt_g(row['gamma2']):>11} {row['activity']:>11.4g}"
            f" {_fmt(row['rho_linear'], 4):>7} {_fmt(row['rho_natural'], 4):>7}"
            f" {'P' if row['polarized'] else '':>3} {row['degenerate_set']:>4}"
            f" {_text_flag(row['ir_active']):>3} {_text_flag(row['raman_active']):>3}"
        )
    n_pol = int(table.polarized.sum())
    lines.append("")
    if table.n_modes and not np.isfinite(table.a2).any():
        lines.append(
            f"{table.n_modes} modes; a2, gamma2 and rho unknown: the source gives Raman "
            "activities only"
        )
    else:
        lines.append(
            f"{table.n_modes} modes, {n_pol} polarized (P: rho_linear < 0.74 and Raman-active)"
        )
    if table.ir_active is not None:
        lines.append("IR, Ra: fundamental allowed (y) or forbidden (-) by its species")
    return "\n".join(lines) + "\n"


def _text_flag(value: bool | None) -> str:
    return "" if value is None else ("y" if value else "-")


# -- band tables for a paper: one row per band (a degenerate set once) ------------------------

_GREEK_TEX = {"Σ": r"\Sigma", "Π": r"\Pi", "Δ": r"\Delta", "Φ": r"\Phi"}


def latex_species(name: str) -> str:
    r"""A species name in LaTeX math.

    'B1u' → '$B_{1u}$', "A''" → "$A''$", 'Σg⁺' → '$\Sigma_{g}^+$'.
    """
    if not name:
        return ""
    head, rest = name[0], name[1:]
    head = _GREEK_TEX.get(head, head)
    sign = ""
    if rest.endswith(("⁺", "⁻")):
        sign, rest = ("^+" if rest[-1] == "⁺" else "^-"), rest[:-1]
    primes = rest[len(rest.rstrip("'")) :]
    rest = rest.rstrip("'")
    sub = f"_{{{rest}}}" if rest else ""
    return f"${head}{sub}{sign}{primes}$"


def band_rows(
    table: RamanTable, scale: FrequencyScale | None = None, include_inactive: bool = False
) -> list[dict[str, object]]:
    """One dictionary per band, the rows of the paper tables.

    A band is a degenerate set counted once: wavenumber (scaled when ``scale`` is given),
    species, number of degenerate modes, activity summed over them, ρ (linear; None when
    Raman-inactive or unknown) and ``polarized``.  Raman-inactive bands (by their species, or
    with zero polarizability derivative) are left out unless ``include_inactive``; imaginary
    modes (negative wavenumbers: not a minimum) always are.
    """
    rows = []
    for members in table.sets():
        k = members[0]
        freq = float(table.freqs_cm1[k])
        if freq < 0.0:
            continue
        if scale is not None:
            freq = float(scale.apply(np.array([freq]))[0])
        rho = float(table.rho_linear[k])
        known = math.isfinite(float(table.a2[k]))
        inactive = (table.raman_active is not None and not table.raman_active[k]) or (
            known and not math.isfinite(rho)
        )
        if inactive and not include_inactive:
            continue
        rows.append(
            {
                "wavenumber_cm1": freq,
                "species": table.irreps[k],
                "degeneracy": len(members),
                "activity": float(np.sum(table.activity[list(members)])),
                "rho_linear": rho if math.isfinite(rho) else None,
                "polarized": bool(table.polarized[k]) if known and math.isfinite(rho) else None,
            }
        )
    return rows


def _caption_parts(table: RamanTable, scale: FrequencyScale | None) -> tuple[str, str, str]:
    """(what was computed, how the wavenumbers were scaled, point group) for a caption."""
    h = _header(table)
    what = " ".join(x for x in (h["program"], h["method"]) if x) or h["source"]
    how = "unscaled" if scale is None else scale.describe()
    n_imag = int(np.sum(table.freqs_cm1 < 0.0))
    if n_imag:
        how += f"; {n_imag} imaginary mode{'s' if n_imag > 1 else ''} omitted"
    return what, how, h["point_group"]


_CAPTION_TAIL = (
    "ρ for linearly polarized light at 90°; p: polarized, dp: depolarized; "
    "Raman-inactive bands omitted."
)


def _pol_mark(row: dict[str, object]) -> str:
    if row["polarized"] is None:
        return ""
    return "p" if row["polarized"] else "dp"


def table_markdown(table: RamanTable, scale: FrequencyScale | None = None) -> str:
    """A Markdown (pipe) table of the Raman-active bands, a caption line first."""
    what, how, group = _caption_parts(table, scale)
    group = f", point group {group}" if group else ""
    lines = [
        f"Computed Raman bands ({what}, harmonic wavenumbers {how}{group}); activity S in "
        f"Å⁴/amu; {_CAPTION_TAIL}",
        "",
        "| ν̃ / cm⁻¹ | species | S / Å⁴ amu⁻¹ | ρ | |",
        "|---:|:---|---:|---:|:---|",
    ]
    for row in band_rows(table, scale):
        rho = "–" if row["rho_linear"] is None else f"{row['rho_linear']:.3f}"
        lines.append(
            f"| {row['wavenumber_cm1']:.0f} | {row['species'] or '–'} | {row['activity']:.2f}"
            f" | {rho} | {_pol_mark(row)} |"
        )
    return "\n".join(lines) + "\n"


_TEX_SPECIAL = {
    "\\": r"\textbackslash{}",
    "&": r"\&",
    "%": r"\%",
    "_": r"\_",
    "#": r"\#",
    "$": r"\$",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
}


def tex_escape(text: str) -> str:
    """Plain text (a file name, a method) made safe inside a LaTeX paragraph."""
    return "".join(_TEX_SPECIAL.get(c, c) for c in text)


def latex_point_group(symbol: str) -> str:
    r"""A Schoenflies symbol in LaTeX math: 'C2v' → '$C_{2v}$', 'D∞h' → '$D_{\infty h}$'."""
    if len(symbol) < 2:
        return f"${symbol}$" if symbol else ""
    return f"${symbol[0]}_{{{symbol[1:].replace('∞', chr(92) + 'infty ')}}}$"


def table_latex(table: RamanTable, scale: FrequencyScale | None = None) -> str:
    r"""A booktabs LaTeX table of the Raman-active bands (needs ``\usepackage{booktabs}``)."""
    what, how, group = _caption_parts(table, scale)
    group = f", point group {latex_point_group(group)}" if group else ""
    tail = _CAPTION_TAIL.replace("ρ", r"$\rho$").replace("90°", r"90$^\circ$")
    caption = (
        f"Computed Raman bands ({tex_escape(what)}, harmonic wavenumbers {tex_escape(how)}"
        f"{group}); activity $S$ in \\AA$^4$\\,amu$^{{-1}}$; {tail}"
    )
    rows = []
    for row in band_rows(table, scale):
        rho = "--" if row["rho_linear"] is None else f"{row['rho_linear']:.3f}"
        rows.append(
            f"  {row['wavenumber_cm1']:.0f} & {latex_species(str(row['species'])) or '--'} & "
            f"{row['activity']:.2f} & {rho} & {_pol_mark(row)} \\\\"
        )
    return "\n".join(
        [
            "\\begin{table}",
            f"\\caption{{{caption}}}",
            "\\begin{tabular}{rlrrl}",
            "\\toprule",
            "$\\tilde\\nu$ / cm$^{-1}$ & species & $S$ / \\AA$^4$\\,amu$^{-1}$ & $\\rho$ & \\\\",
            "\\midrule",
            *rows,
            "\\bottomrule",
            "\\end{tabular}",
            "\\end{table}",
            "",
        ]
    )


FORMATTERS = {
    "text": table_text,
    "csv": table_csv,
    "json": table_json,
    "markdown": table_markdown,
    "latex": table_latex,
}


# -- symmetry report (``vibrapol symmetry``) ----------------------------------------------------


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


def symmetry_rows(group: PointGroup) -> list[dict[str, object]]:
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


def mode_rows(symmetry: ModeSymmetry) -> list[dict[str, object]]:
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
) -> str:
    """What ``vibrapol symmetry`` prints: point group, Γ_vib, selection rules, mode species."""
    counts = band_counts(group)
    n_modes = sum(r["dim"] * r["count_vib"] for r in symmetry_rows(group))
    lines = [
        f"source: {source or '(in memory)'} ({group.n_atoms} atoms)",
        f"point group: {group.symbol}   (tolerance {group.tolerance_ang:g} Å; largest atom "
        f"mismatch {group.max_deviation_ang:.2g} Å)",
        f"species names: {group.convention}",
    ]
    lines += [f"note: {n}" for n in group.notes]
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
        for row in mode_rows(symmetry):
            lines.append(
                f"{row['mode']:>4} {row['frequency_cm1']:>10.2f} {row['irrep']:>6} "
                f"{row['degenerate_set']:>4} {row['purity']:>7.4f} "
                f"{_text_flag(row['ir_active']):>3} {_text_flag(row['raman_active']):>3}  "
                f"{row['polarization']}"
            )
    return "\n".join(lines) + "\n"


def symmetry_json(
    group: PointGroup, *, symmetry: ModeSymmetry | None = None, source: str = ""
) -> str:
    """JSON document with the same content as :func:`symmetry_text`."""
    doc: dict[str, object] = {
        "source": source,
        "point_group": group.symbol,
        "tolerance_ang": group.tolerance_ang,
        "max_deviation_ang": group.max_deviation_ang,
        "convention": group.convention,
        "notes": list(group.notes),
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
