"""Short text and HTML summaries of vibrapol's objects, for the console and notebooks.

``repr(obj)`` is a few lines: what the object is, how many modes, bands or points, where the
numbers come from, and the conditions (laser, temperature, scale factor, warnings).
``obj._repr_html_()`` (what Jupyter shows) adds the rows as an HTML table with the same
columns as the object's CSV file; every text is HTML-escaped, long tables show their first and
last rows.  Nothing here changes a number: the cells are the rows the CSV writers use, printed
with six significant digits.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from vibrapol.compare.ranking import Ranking
    from vibrapol.compare.results import Assignment
    from vibrapol.measured import MeasuredBands
    from vibrapol.modeset import ModeSet
    from vibrapol.ramantable import RamanTable
    from vibrapol.spectrum import GridSpectrum, StickSpectrum

#: Longest text of one field in a ``repr`` line (longer ones keep their end, after "…").
MAX_FIELD = 100

#: Rows an HTML table shows in full; longer tables show the first and last rows.
MAX_HTML_ROWS = 60


def clip(text: str, limit: int = MAX_FIELD) -> str:
    """``text`` on one line, at most ``limit`` characters (the end kept: file names end there)."""
    one = " ".join(str(text).split())
    return one if len(one) <= limit else "…" + one[-(limit - 1) :]


def formula(symbols: Sequence[str]) -> str:
    """Hill formula ("CH2Cl2", "H2O"): C and H first when there is carbon, else alphabetical."""
    counts: dict[str, int] = {}
    for s in symbols:
        counts[s] = counts.get(s, 0) + 1
    order = sorted(counts)
    if "C" in counts:
        order = ["C", *(["H"] if "H" in counts else []), *(s for s in order if s not in ("C", "H"))]
    return "".join(f"{s}{counts[s] if counts[s] > 1 else ''}" for s in order)


def _method(program: str, method: str, basis: str) -> str:
    level = "/".join(x for x in (method, basis) if x)
    return " ".join(x for x in (program, level) if x) or "method not recorded"


def _span(values: Sequence[float]) -> str:
    finite = [v for v in values if math.isfinite(v)]
    if not finite:
        return ""
    return f"{min(finite):.1f}–{max(finite):.1f} cm⁻¹"


def _warning_line(warnings: Sequence[str], notes: Sequence[str] = ()) -> str:
    if not warnings:
        return f"  warnings: none; notes: {len(notes)}"
    first = clip(warnings[0], MAX_FIELD - 20)
    more = f" (+{len(warnings) - 1} more)" if len(warnings) > 1 else ""
    return f"  warnings: {first}{more}; notes: {len(notes)}"


# -- text ------------------------------------------------------------------------------------


def modeset_lines(modes: ModeSet) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.modeset.ModeSet`."""
    p = modes.provenance
    raman = (
        "∂α/∂x"
        if modes.dalpha_dx is not None
        else "∂α/∂Q"
        if modes.dalpha_dq is not None
        else "a², γ²"
        if modes.a2 is not None
        else "activities only"
        if modes.activity is not None
        else "none"
    )
    if p.raman_scale == "relative":
        raman += " (relative)"
    extra = "; IR intensities" if modes.ir_intensity_km_mol is not None else ""
    span = _span(modes.freqs_cm1.tolist())
    return [
        f"ModeSet: {formula(modes.symbols)}, {modes.n_atoms} atoms, {modes.n_modes} modes"
        + (f" ({span})" if span else ""),
        f"  source: {clip(p.source_file or '(in memory)')} ({p.source_kind or 'given'})",
        f"  {clip(_method(p.program, p.method, p.basis))}; Raman data: {raman}{extra}",
        f"  masses: {clip(p.masses or 'given')}; notes: {len(p.notes)}",
    ]


def table_lines(table: RamanTable) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.ramantable.RamanTable`."""
    p = table.provenance
    counts = {k: table.polarization.count(k) for k in ("polarized", "unresolved", "depolarized")}
    split = ", ".join(f"{n} {k}" for k, n in counts.items() if n)
    group = f", point group {table.point_group}" if table.point_group else ", no symmetry"
    return [
        f"RamanTable: {table.n_modes} modes{group}" + (f" ({split})" if split else ""),
        f"  source: {clip(p.source_file or '(in memory)')}",
        f"  {clip(_method(p.program, p.method, p.basis))}"
        + ("; RELATIVE activities" if p.raman_scale == "relative" else ""),
        _warning_line(table.warnings, (*p.notes, *table.notes)),
    ]


def _files(files: Sequence[str]) -> str:
    return clip(", ".join(f for f in files if f) or "(in memory)")


def _conditions_line(sticks: StickSpectrum) -> str:
    c = sticks.conditions
    parts = [c.quantity]
    if c.quantity != "activity":
        parts += [f"laser {c.laser_nm:g} nm", f"{c.temperature_k:g} K"]
    parts += [f"{c.geometry_deg}° scattering", c.orientation]
    if c.scale.is_unscaled:
        parts.append("unscaled")
    else:
        source = f" ({c.scale.entry.source})" if c.scale.entry is not None else ""
        parts.append(f"scale factor {c.scale.factor:g}{source}")
    return "  " + "; ".join(parts)


def _sources_line(sticks: StickSpectrum) -> str:
    parts = [
        f"{c or '(in memory)'}" + (f" ×{w:.3g}" if len(sticks.components) > 1 else "")
        for c, w in zip(sticks.components, sticks.weights, strict=True)
    ]
    return "  source: " + clip("; ".join(parts))


def sticks_lines(sticks: StickSpectrum) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.spectrum.StickSpectrum`."""
    span = _span(sticks.positions_cm1.tolist())
    return [
        f"StickSpectrum: {sticks.n_bands} bands"
        + (f" ({span})" if span else "")
        + f", channels {', '.join(sticks.channels)}; {sticks.conditions.unit}",
        _sources_line(sticks),
        _conditions_line(sticks),
    ]


def grid_lines(grid: GridSpectrum) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.spectrum.GridSpectrum`."""
    from vibrapol.output.spectra import lineshape_text

    span = _span(grid.shift_cm1.tolist())
    return [
        f"GridSpectrum: {grid.shift_cm1.shape[0]} points"
        + (f" ({span})" if span else "")
        + f", channels {', '.join(grid.channels)}; {lineshape_text(grid.lineshape)}",
        _sources_line(grid.sticks),
        _conditions_line(grid.sticks),
    ]


def bands_lines(bands: MeasuredBands) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.measured.MeasuredBands`."""
    span = _span(bands.positions_cm1.tolist())
    which = "VV only" if bands.vh_fit is None else "VV and VH"
    fix = "none" if bands.correction is None else f"g = {bands.correction.factor:.4f}"
    return [
        f"MeasuredBands: {len(bands)} bands"
        + (f" ({span})" if span else "")
        + f", {which}, {bands.vv_fit.shape} shape",
        f"  measured: {_files(bands.source_files)}",
        f"  reduced χ² {bands.vv_fit.reduced_chi2:.3g}; instrument correction: {fix}",
    ]


def assignment_lines(assignment: Assignment) -> list[str]:
    """The ``repr`` of an :class:`~vibrapol.compare.results.Assignment`."""
    s = assignment.scores
    rms = "-" if not math.isfinite(s.rms_cm1) else f"{s.rms_cm1:.1f} cm⁻¹"
    return [
        f"Assignment: {s.n_assigned} of {s.n_bands} measured bands assigned, rms {rms}, "
        f"overall {s.overall:.3f}",
        f"  candidate: {clip(assignment.label)}",
        f"  measured: {_files(assignment.measured.source_files)}",
        f"  {_scale(assignment)}",
    ]


def _scale(assignment: Assignment) -> str:
    fit = assignment.scale
    err = f" ± {fit.factor_err:.4f}" if math.isfinite(fit.factor_err) and fit.factor_err else ""
    return f"scale factor {fit.factor:.4f}{err} ({'fitted' if fit.fitted else 'given'})"


def ranking_lines(ranking: Ranking) -> list[str]:
    """The ``repr`` of a :class:`~vibrapol.compare.ranking.Ranking`."""
    if not ranking.assignments:
        return ["Ranking: no candidates"]
    best = ranking.best
    lines = [
        f"Ranking: {len(ranking)} candidates; best {clip(best.label, MAX_FIELD // 2)} "
        f"(overall {best.scores.overall:.3f})",
        f"  measured: {_files(best.measured.source_files)}",
    ]
    if len(ranking) > 1:
        lines.append(f"  margin of the best over the runner-up: {ranking.margin():.3f}")
    return lines


# -- HTML ------------------------------------------------------------------------------------


def _cell(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.6g}" if math.isfinite(value) else ""
    return str(value)


def html_table(columns: Sequence[str], rows: Sequence[dict[str, object]]) -> str:
    """An HTML table of ``rows`` (dictionaries keyed by ``columns``), every cell escaped."""
    shown: list[dict[str, object] | None] = list(rows)
    if len(rows) > MAX_HTML_ROWS:
        head = MAX_HTML_ROWS - 10
        shown = [*rows[:head], None, *rows[-10:]]
    out = ["<table>", "<thead><tr>"]
    out += [f"<th>{html.escape(c)}</th>" for c in columns]
    out.append("</tr></thead><tbody>")
    for row in shown:
        if row is None:
            gap = len(rows) - MAX_HTML_ROWS
            out.append(f'<tr><td colspan="{len(columns)}">… {gap} more rows …</td></tr>')
            continue
        cells = "".join(f"<td>{html.escape(_cell(row[c]))}</td>" for c in columns)
        out.append(f"<tr>{cells}</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def html_block(
    lines: Sequence[str],
    items: Sequence[str] = (),
    table: str = "",
) -> str:
    """A notebook block: the summary lines, notes and warnings as a list, then the table."""
    head = html.escape(lines[0])
    rest = "".join(f"<br>{html.escape(line.strip())}" for line in lines[1:])
    listed = ""
    if items:
        listed = "<ul>" + "".join(f"<li>{html.escape(i)}</li>" for i in items) + "</ul>"
    return f'<div class="vibrapol"><strong>{head}</strong>{rest}{listed}{table}</div>'


def modeset_html(modes: ModeSet) -> str:
    """The notebook view of a ModeSet: summary, provenance notes, one row per mode."""
    columns = ["mode", "frequency_cm1"]
    if modes.program_irreps is not None:
        columns.append("program_irrep")
    if modes.ir_intensity_km_mol is not None:
        columns.append("ir_intensity_km_mol")
    if modes.activity is not None:
        columns.append("activity")
    rows = []
    for i in range(modes.n_modes):
        row: dict[str, object] = {"mode": i + 1, "frequency_cm1": float(modes.freqs_cm1[i])}
        if modes.program_irreps is not None:
            row["program_irrep"] = modes.program_irreps[i]
        if modes.ir_intensity_km_mol is not None:
            row["ir_intensity_km_mol"] = float(modes.ir_intensity_km_mol[i])
        if modes.activity is not None:
            row["activity"] = float(modes.activity[i])
        rows.append(row)
    notes = [f"note: {n}" for n in modes.provenance.notes]
    return html_block(modeset_lines(modes), notes, html_table(columns, rows))


def _pairs_view(lines: list[str], pairs, columns, rows) -> str:  # noqa: ANN001
    """The notebook view of an object whose header is (name, value) pairs and a table."""
    return html_block(lines, [f"{k}: {v}" for k, v in pairs], html_table(columns, rows))


def table_html(table: RamanTable) -> str:
    """The notebook view of a RamanTable: the CSV's columns and the header's notes and warnings."""
    from vibrapol.output.tables import TABLE_COLUMNS, table_notes, table_rows

    items = [f"warning: {w}" for w in table.warnings]
    items += [f"note: {n}" for n in table_notes(table)]
    rows = [dict(r) for r in table_rows(table)]
    return html_block(table_lines(table), items, html_table(TABLE_COLUMNS, rows))


def sticks_html(sticks: StickSpectrum) -> str:
    """The notebook view of a StickSpectrum: conditions and the stick CSV's rows."""
    from vibrapol.output.spectra import stick_columns, stick_items, stick_rows

    return _pairs_view(
        sticks_lines(sticks), stick_items(sticks), stick_columns(sticks), stick_rows(sticks)
    )


def grid_html(grid: GridSpectrum) -> str:
    """The notebook view of a GridSpectrum: conditions and the sticks it was broadened from."""
    from vibrapol.output.spectra import grid_items, stick_columns, stick_rows

    return _pairs_view(
        grid_lines(grid), grid_items(grid), stick_columns(grid.sticks), stick_rows(grid.sticks)
    )


def bands_html(bands: MeasuredBands) -> str:
    """The notebook view of MeasuredBands: conditions and one row per band."""
    from vibrapol.output.bands import (
        MEASURED_BAND_COLUMNS,
        measured_band_rows,
        measured_conditions,
    )

    return _pairs_view(
        bands_lines(bands),
        measured_conditions(bands),
        MEASURED_BAND_COLUMNS,
        measured_band_rows(bands),
    )


def assignment_html(assignment: Assignment) -> str:
    """The notebook view of an Assignment: conditions and one row per measured band."""
    from vibrapol.output.assignments import (
        ASSIGNMENT_COLUMNS,
        assignment_conditions,
        assignment_rows,
    )

    return _pairs_view(
        assignment_lines(assignment),
        assignment_conditions(assignment),
        ASSIGNMENT_COLUMNS,
        assignment_rows(assignment),
    )


def ranking_html(ranking: Ranking) -> str:
    """The notebook view of a Ranking: one row per candidate, best first."""
    from vibrapol.output.assignments import RANKING_COLUMNS, ranking_conditions, ranking_rows

    return _pairs_view(
        ranking_lines(ranking), ranking_conditions(ranking), RANKING_COLUMNS, ranking_rows(ranking)
    )
