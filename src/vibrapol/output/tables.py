"""Tables as text, CSV, JSON, Markdown and LaTeX: the per-mode Raman table and band tables.

Every format carries the same header: source, program, method, point group, the notes and the
warnings of the table (CSV: ``#`` lines before the column names, which
``pandas.read_csv(comment="#")`` skips; JSON: fields of ``"header"``).
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Sequence
from typing import TypedDict

import numpy as np

from vibrapol.polarization import MARKS, RULE_TEXT
from vibrapol.ramantable import RamanTable
from vibrapol.spectrum.scaling import FrequencyScale
from vibrapol.tablechecks import FORBIDDEN_NOISE_FRACTION
from vibrapol.units import CODATA_VERSION

#: Columns of the per-mode CSV, in order (units: cm⁻¹, –, Å⁴/amu ×3, –, –, –, –, –, –,
#: km/mol, –, –, –).  ``ir_active`` and ``raman_active`` are the selection rules of the mode's
#: species and ``purity`` the quality of its label (empty when the symmetry is not known);
#: ``polarization`` is the outcome of the rule of :mod:`vibrapol.polarization`;
#: ``description`` says what the mode does (:mod:`vibrapol.describe`; empty when the modes
#: were not described).
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
    "ir_intensity_km_mol",
    "purity",
    "polarization",
    "description",
)


#: Significant digits of a², γ² and activities in CSV: enough for every digit a program prints
#: (ORCA: 1036.771663, ten digits), so that no printed number is rounded away.
CSV_DIGITS = ".10g"


def _fmt_g(value: float | None) -> str:
    return "" if value is None or not math.isfinite(value) else f"{value:.4g}"


def _fmt(value: float | None, digits: int) -> str:
    return "" if value is None or not math.isfinite(value) else f"{value:.{digits}f}"


def _finite_or_none(value: float) -> float | None:
    return value if math.isfinite(value) else None


def _flag(values: np.ndarray | None, i: int) -> bool | None:
    return None if values is None else bool(values[i])


def _at(values: np.ndarray | None, i: int) -> float | None:
    return None if values is None else _finite_or_none(float(values[i]))


class TableRow(TypedDict):
    """One mode of the table, keyed by :data:`TABLE_COLUMNS` (None: unknown or not given)."""

    mode: int
    frequency_cm1: float
    irrep: str
    a2: float | None
    gamma2: float | None
    activity: float | None
    rho_linear: float | None
    rho_natural: float | None
    polarized: bool | None
    degenerate_set: int
    ir_active: bool | None
    raman_active: bool | None
    ir_intensity_km_mol: float | None
    purity: float | None
    polarization: str
    description: str


def table_rows(table: RamanTable, *, show_zero: bool = False) -> list[TableRow]:
    """One dictionary per mode with the keys of :data:`TABLE_COLUMNS`.

    NaN → None.  When the source gives only activities, a², γ², ρ and ``polarized`` are None
    (unknown); without Raman data the activity is None too.  ``ir_active``, ``raman_active``
    and ``purity`` are None when the table carries no symmetry.  With ``show_zero`` (the text
    table), Raman-forbidden modes whose activity is numerical noise
    (:attr:`RamanTable.shown_zero`) show 0 and no ratio; the machine formats (CSV, JSON) keep
    the numbers as read and the header note names the modes.
    """
    rows = []
    noise_a2, noise_ir = _noise_sets(table) if show_zero else (set(), set())
    for i in range(table.n_modes):
        known = math.isfinite(float(table.a2[i]))
        zero = show_zero and table.shown_zero is not None and bool(table.shown_zero[i])
        row: TableRow = {
            "mode": i + 1,
            "frequency_cm1": float(table.freqs_cm1[i]),
            "irrep": table.irreps[i],
            "a2": _at(table.a2, i),
            "gamma2": _at(table.gamma2, i),
            "activity": _at(table.activity, i),
            "rho_linear": _at(table.rho_linear, i),
            "rho_natural": _at(table.rho_natural, i),
            "polarized": bool(table.polarized[i]) if known else None,
            "degenerate_set": int(table.degenerate_set[i]),
            "ir_active": _flag(table.ir_active, i),
            "raman_active": _flag(table.raman_active, i),
            "ir_intensity_km_mol": _at(table.ir_intensity_km_mol, i),
            "purity": _at(table.purity, i),
            "polarization": table.polarization[i] if table.polarization else "",
            "description": table.descriptions[i] if table.descriptions else "",
        }
        if zero:
            row.update(
                {"rho_linear": None, "rho_natural": None, "polarization": "", "activity": 0.0}
            )
            row.update({"a2": 0.0 if known else None, "gamma2": 0.0 if known else None})
        if show_zero and i in noise_a2:
            row["a2"] = 0.0
        if show_zero and i in noise_ir:
            row["ir_intensity_km_mol"] = 0.0
        rows.append(row)
    return rows


def _symmetry_noise(values: np.ndarray | None, forbidden: np.ndarray | None) -> set[int]:
    """Modes where symmetry makes ``values`` zero and the value read is numerical noise.

    Noise: at most :data:`~vibrapol.tablechecks.FORBIDDEN_NOISE_FRACTION` of the largest
    |value| of the table, the same level as for forbidden Raman activities.
    """
    if values is None or forbidden is None or values.size == 0:
        return set()
    v = np.abs(np.asarray(values, dtype=float))
    if not np.all(np.isfinite(v)) or float(v.max()) <= 0.0:
        return set()
    noise = np.asarray(forbidden, dtype=bool) & (v <= FORBIDDEN_NOISE_FRACTION * float(v.max()))
    return {int(k) for k in np.flatnonzero(noise & (v != 0.0))}


def _noise_sets(table: RamanTable) -> tuple[set[int], set[int]]:
    """(a² noise of non-totally-symmetric modes, IR noise of IR-forbidden modes)."""
    not_ts = None if table.totally_symmetric is None else ~table.totally_symmetric
    not_ir = None if table.ir_active is None else ~table.ir_active
    return _symmetry_noise(table.a2, not_ts), _symmetry_noise(table.ir_intensity_km_mol, not_ir)


def header_fields(table: RamanTable) -> dict[str, str]:
    """Source, program, method, point group and species convention of the table."""
    p = table.provenance
    program = " ".join(x for x in (p.program, p.program_version) if x)
    method = p.level_of_theory()
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


def table_notes(table: RamanTable) -> list[str]:
    """The provenance notes and the table's own notes, in that order."""
    return [*table.provenance.notes, *table.notes]


def header_lines(table: RamanTable) -> list[str]:
    """The header every per-mode format repeats: what, from where, notes, warnings."""
    h = header_fields(table)
    lines = [
        f"source: {h['source']}",
        f"program: {h['program'] or '-'}   method: {h['method'] or '-'}"
        f"   point group: {h['point_group'] or '-'}",
    ]
    if h["symmetry_convention"]:
        lines.append(f"species names: {h['symmetry_convention']}")
    lines += [f"note: {n}" for n in table_notes(table)]
    lines += [f"warning: {w}" for w in table.warnings]
    lines.append(
        (
            "a2, gamma2, activity RELATIVE (largest activity 100, not Å⁴/amu)"
            if _relative(table)
            else "a2, gamma2, activity in Å⁴/amu"
        )
        + "; IR intensity in km/mol; rho for 90° scattering (linear / natural incident light)"
    )
    lines.append(f"polarization: {RULE_TEXT}")
    return lines


#: How :func:`table_csv` writes each column of :data:`TABLE_COLUMNS` (None: an empty cell).
TABLE_CSV_FORMATS: dict[str, str] = {
    "frequency_cm1": ".4f",
    "a2": CSV_DIGITS,
    "gamma2": CSV_DIGITS,
    "activity": CSV_DIGITS,
    "rho_linear": ".6f",
    "rho_natural": ".6f",
    "ir_intensity_km_mol": ".6g",
    "purity": ".4f",
}


def csv_cell(value: object, fmt: str = "") -> object:
    """One CSV cell: None → empty, booleans → true/false, numbers with ``fmt``."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    return format(value, fmt) if fmt else value


def csv_document(
    items: Sequence[tuple[str, str]],
    columns: Sequence[str],
    rows: Sequence[dict[str, object]],
    formats: dict[str, str],
) -> str:
    """``# name: value`` lines, the column names, then the rows (cells by :func:`csv_cell`)."""
    buf = io.StringIO()
    for key, value in items:
        buf.write(f"# {key}: {' '.join(str(value).split())}\n")
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([csv_cell(row[name], formats.get(name, "")) for name in columns])
    return buf.getvalue()


def table_csv(table: RamanTable) -> str:
    """CSV with exactly :data:`TABLE_COLUMNS`, after ``#`` lines with the header.

    The cells are those of :func:`table_rows` (the rows of :meth:`RamanTable.to_dataframe`
    too), written with :data:`TABLE_CSV_FORMATS`.
    """
    buf = io.StringIO()
    for line in header_lines(table):
        buf.write(f"# {line}\n")
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(TABLE_COLUMNS)
    for row in table_rows(table):
        writer.writerow(
            [csv_cell(row[name], TABLE_CSV_FORMATS.get(name, "")) for name in TABLE_COLUMNS]  # type: ignore[literal-required]
        )
    return buf.getvalue()


def table_units(table: RamanTable) -> dict[str, str]:
    """Unit of each numeric column of the per-mode table (JSON ``units``, DataFrame attrs)."""
    unit = "relative (largest activity 100)" if _relative(table) else "angstrom^4/amu"
    return {
        "frequency_cm1": "cm-1",
        "a2": unit,
        "gamma2": unit,
        "activity": unit,
        "ir_intensity_km_mol": "km/mol",
    }


def table_header(table: RamanTable) -> dict[str, object]:
    """The JSON header of the table: source, method, point group, notes, warnings, rule."""
    header: dict[str, object] = dict(header_fields(table))
    header.update(
        symmetrized=table.symmetrized,
        notes=table_notes(table),
        warnings=list(table.warnings),
        polarization_rule=RULE_TEXT,
    )
    return header


def table_json(table: RamanTable) -> str:
    """JSON document: header (with ``notes`` and ``warnings``), units, one record per mode."""
    doc = {
        "header": table_header(table),
        "units": table_units(table),
        "constants": CODATA_VERSION,
        "modes": table_rows(table),
    }
    return json.dumps(doc, indent=1, allow_nan=False) + "\n"


def table_text(table: RamanTable) -> str:
    """A readable fixed-width table with a header naming source, method and point group."""
    noise_a2, noise_ir = _noise_sets(table)
    shown = (
        [
            f"note: a2 of {len(noise_a2)} non-totally-symmetric modes and the IR intensity of "
            f"{len(noise_ir)} IR-forbidden modes are shown as 0 in this table: symmetry makes "
            f"them zero and the values read are below {FORBIDDEN_NOISE_FRACTION:g} of the largest "
            "(CSV and JSON keep the numbers as read)"
        ]
        if (noise_a2 or noise_ir)
        else []
    )
    lines = [
        *header_lines(table),
        *shown,
        "",
        f"{'mode':>4} {'freq/cm-1':>10} {'irrep':>6} {'a2':>11} {'gamma2':>11} {'activity':>11}"
        f" {'rho_lin':>7} {'rho_nat':>7} {'pol':>7} {'set':>4} {'IR':>3} {'Ra':>3}"
        f" {'purity':>6} {'IR/km/mol':>10}" + ("  description" if table.descriptions else ""),
    ]
    for row in table_rows(table, show_zero=True):
        lines.append(
            f"{row['mode']:>4} {row['frequency_cm1']:>10.2f} {row['irrep']:>6}"
            f" {_fmt_g(row['a2']):>11} {_fmt_g(row['gamma2']):>11} {_fmt_g(row['activity']):>11}"
            f" {_fmt(row['rho_linear'], 4):>7} {_fmt(row['rho_natural'], 4):>7}"
            f" {MARKS[str(row['polarization'])]:>7} {row['degenerate_set']:>4}"
            f" {_text_flag(row['ir_active']):>3} {_text_flag(row['raman_active']):>3}"
            f" {_fmt(row['purity'], 3):>6} {_fmt_g(row['ir_intensity_km_mol']):>10}"
            f"  {row['description']}".rstrip()
        )
    lines.append("")
    counts = {k: table.polarization.count(k) for k in set(table.polarization)}
    if not table.has_raman_data:
        lines.append(
            f"{table.n_modes} modes; no Raman data: pol from the species alone "
            "(p(sym) polarized, dp(sym) depolarized by symmetry)"
        )
    elif table.n_modes and not np.isfinite(table.a2).any():
        lines.append(
            f"{table.n_modes} modes; a2, gamma2 and rho unknown: the source gives Raman "
            "activities only"
            + ("; pol from the species alone" if table.raman_active is not None else "")
        )
    else:
        lines.append(
            f"{table.n_modes} modes: {counts.get('polarized', 0)} polarized, "
            f"{counts.get('unresolved', 0)} totally symmetric but too close to 3/4 to tell (p?), "
            f"{counts.get('depolarized', 0)} depolarized"
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
    species, number of degenerate modes, activity summed over them (None without Raman data),
    ρ (linear; None when Raman-inactive or unknown), ``polarized`` and ``polarization`` (the
    outcome of the rule of :mod:`vibrapol.polarization`).  Raman-inactive bands (by their
    species, or with zero polarizability derivative) are left out unless
    ``include_inactive``; imaginary modes (negative wavenumbers: not a minimum) always are.
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
        activity = float(np.sum(table.activity[list(members)]))
        rows.append(
            {
                "wavenumber_cm1": freq,
                "species": table.irreps[k],
                "degeneracy": len(members),
                "activity": activity if math.isfinite(activity) else None,
                "rho_linear": rho if math.isfinite(rho) else None,
                "polarized": bool(table.polarized[k]) if known and math.isfinite(rho) else None,
                "polarization": table.polarization[k] if table.polarization else "",
            }
        )
    return rows


def _caption_parts(table: RamanTable, scale: FrequencyScale | None) -> tuple[str, str, str]:
    """(what was computed, how the wavenumbers were scaled, point group) for a caption."""
    h = header_fields(table)
    what = " ".join(x for x in (h["program"], h["method"]) if x) or h["source"]
    how = "unscaled" if scale is None else scale.describe()
    n_imag = int(np.sum(table.freqs_cm1 < 0.0))
    if n_imag:
        how += f"; {n_imag} imaginary mode{'s' if n_imag > 1 else ''} omitted"
    return what, how, h["point_group"]


_CAPTION_TAIL = f"ρ for linearly polarized light at 90°; {RULE_TEXT}; Raman-inactive bands omitted."


def _pol_mark(row: dict[str, object]) -> str:
    return MARKS[str(row["polarization"])]


def _activity(row: dict[str, object], dash: str) -> str:
    return dash if row["activity"] is None else f"{row['activity']:.2f}"


def _band_warnings(table: RamanTable) -> list[str]:
    """Warnings, and the note on missing Raman data, for the lines around a band table."""
    out = list(table.warnings)
    if not table.has_raman_data:
        out.append(
            "no Raman data in the source: activities and ratios are empty; p(sym), dp(sym): "
            "polarized, depolarized as expected from the species"
        )
    return out


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
            f"| {row['wavenumber_cm1']:.0f} | {row['species'] or '–'} | {_activity(row, '–')}"
            f" | {rho} | {_pol_mark(row)} |"
        )
    extra = _band_warnings(table)
    if extra:
        lines += ["", *(f"> warning: {w}" for w in extra)]
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
            f"{_activity(row, '--')} & {rho} & {_pol_mark(row)} \\\\"
        )
    return "\n".join(
        [
            *(f"% warning: {w}" for w in _band_warnings(table)),
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
