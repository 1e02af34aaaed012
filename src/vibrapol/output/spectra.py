"""Spectra as CSV and JSON text (sticks, grids, polar sweeps).

CSV files start with ``#`` comment lines that state their conditions (laser, temperature,
geometry, sample, detector, scale factor and its source, line shape and width, method and basis,
sources), then the column header: ``pandas.read_csv(path, comment="#")`` reads them as a table.
The JSON form carries the same conditions as fields.
"""

from __future__ import annotations

import csv
import io
import json
import math
from typing import Any

import numpy as np

from vibrapol.output.tables import csv_cell
from vibrapol.spectrum import Conditions, GridSpectrum, StickSpectrum
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.sweep import PolarSweep
from vibrapol.units import CODATA_VERSION

#: Leading columns of the stick table, before one column per channel.
STICK_COLUMNS = (
    "shift_cm1",
    "harmonic_cm1",
    "modes",
    "irrep",
    "rho_linear",
    "rho_natural",
    "polarized",
    "component",
)


def _num(value: float, fmt: str = ".6g") -> str:
    return "" if not math.isfinite(value) else format(value, fmt)


def _csv(rows: list[list[object]]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    return buf.getvalue()


def lineshape_text(lineshape: LineShape | None) -> str:
    """The line shape and its width in words ('none (sticks)' for stick tables)."""
    if lineshape is None:
        return "none (sticks)"
    text = f"{lineshape.shape}, FWHM {lineshape.fwhm_cm1:g} cm-1"
    if lineshape.fwhm_slope:
        text += f" + {lineshape.fwhm_slope:g} x shift"
    if lineshape.shape == "voigt":
        text += f", Lorentzian share {lineshape.lorentzian_share:g}"
    return text


def conditions_items(
    conditions: Conditions,
    lineshape: LineShape | None = None,
    components: tuple[str, ...] = (),
    weights: tuple[float, ...] = (),
    columns: str = "",
    warned: tuple[str, ...] = (),
) -> list[tuple[str, str]]:
    """(name, value) pairs stating how a spectrum was computed (CSV header, DataFrame attrs).

    Each warning given while computing it (``warned``) is one ``warning`` pair.
    """
    items = [("vibrapol", "computed Raman spectrum (a prediction, not a measurement)")]
    items += conditions.items()
    items.append(("line shape", lineshape_text(lineshape)))
    if components:
        items.append(
            (
                "sources",
                "; ".join(
                    f"{c or '(in memory)'} (weight {w:.6g})"
                    for c, w in zip(components, weights, strict=True)
                ),
            )
        )
    items += [("warning", w) for w in warned]
    if columns:
        items.append(("columns", columns))
    items.append(("constants", CODATA_VERSION))
    return [(k, " ".join(str(v).split())) for k, v in items]


def conditions_lines(
    conditions: Conditions,
    lineshape: LineShape | None = None,
    components: tuple[str, ...] = (),
    weights: tuple[float, ...] = (),
    columns: str = "",
) -> str:
    """``# name: value`` lines stating how a spectrum was computed (for CSV files)."""
    items = conditions_items(conditions, lineshape, components, weights, columns)
    return "".join(f"# {k}: {v}\n" for k, v in items)


def _shift_note(conditions: Conditions) -> str:
    if conditions.scale.is_unscaled:
        return "shift_cm1 = unscaled harmonic wavenumber"
    return "shift_cm1 = scaled wavenumber (see scale)"


def grid_items(grid: GridSpectrum) -> list[tuple[str, str]]:
    """The conditions of a broadened spectrum: the ``#`` lines of :func:`grid_csv`."""
    st = grid.sticks
    return conditions_items(
        st.conditions,
        grid.lineshape,
        st.components,
        st.weights,
        f"{_shift_note(st.conditions)}; channels in {grid.unit}",
        st.warnings,
    )


def grid_columns(grid: GridSpectrum) -> tuple[str, ...]:
    """Column names of the grid table: ``shift_cm1`` and one per channel."""
    return ("shift_cm1", *grid.channels)


def grid_array(grid: GridSpectrum) -> np.ndarray:
    """The grid table as one array, shape (m, 1 + n_channels), in :func:`grid_columns` order."""
    return np.column_stack([grid.shift_cm1, grid.values])


#: How :func:`grid_csv` writes the shift and the channel values.
GRID_CSV_FORMATS = (".4f", ".8g")


def grid_csv(grid: GridSpectrum) -> str:
    """Conditions as ``#`` lines, then ``shift_cm1,vv,vh,…``: one row per grid point."""
    head = "".join(f"# {k}: {v}\n" for k, v in grid_items(grid))
    rows: list[list[object]] = [list(grid_columns(grid))]
    x_fmt, v_fmt = GRID_CSV_FORMATS
    for x, *vals in grid_array(grid):
        rows.append([f"{x:{x_fmt}}", *(_num(v, v_fmt) for v in vals)])
    return head + _csv(rows)


def stick_items(sticks: StickSpectrum) -> list[tuple[str, str]]:
    """The conditions of a stick table: the ``#`` lines of :func:`sticks_csv`."""
    c = sticks.conditions
    return conditions_items(
        c,
        None,
        sticks.components,
        sticks.weights,
        f"{_shift_note(c)}; harmonic_cm1 = unscaled; rho_linear = vh/vv and rho_natural = "
        f"nh/nv at {c.geometry_deg} deg for this sample ({c.orientation}); channels in {c.unit}",
        sticks.warnings,
    )


def stick_columns(sticks: StickSpectrum) -> tuple[str, ...]:
    """Column names of the stick table: :data:`STICK_COLUMNS`, then one per channel."""
    return (*STICK_COLUMNS, *sticks.channels)


def stick_rows(sticks: StickSpectrum) -> list[dict[str, object]]:
    """One dictionary per band keyed by :func:`stick_columns` (NaN → None).

    ``modes`` holds the 1-based numbers of the modes behind the band ("4 5" for a degenerate
    set), ``component`` the label of the conformer it belongs to.
    """
    rows = []
    for i in range(sticks.n_bands):
        row: dict[str, object] = {
            "shift_cm1": float(sticks.positions_cm1[i]),
            "harmonic_cm1": float(sticks.harmonic_cm1[i]),
            "modes": " ".join(str(k + 1) for k in sticks.mode_sets[i]),
            "irrep": sticks.irreps[i],
            "rho_linear": _or_none(sticks.rho_linear[i]),
            "rho_natural": _or_none(sticks.rho_natural[i]),
            "polarized": bool(sticks.polarized[i]),
            "component": sticks.components[sticks.component[i]],
        }
        for j, name in enumerate(sticks.channels):
            row[name] = _or_none(sticks.heights[i, j])
        rows.append(row)
    return rows


#: How :func:`sticks_csv` writes each column (channels: ``.8g``; others as they are).
STICK_CSV_FORMATS = {
    "shift_cm1": ".4f",
    "harmonic_cm1": ".4f",
    "rho_linear": ".6f",
    "rho_natural": ".6f",
}


def sticks_csv(sticks: StickSpectrum) -> str:
    """Conditions as ``#`` lines, then one row per band: :data:`STICK_COLUMNS`, then heights."""
    head = "".join(f"# {k}: {v}\n" for k, v in stick_items(sticks))
    columns = stick_columns(sticks)
    formats = {**dict.fromkeys(sticks.channels, ".8g"), **STICK_CSV_FORMATS}
    rows: list[list[object]] = [list(columns)]
    for row in stick_rows(sticks):
        rows.append([csv_cell(row[name], formats.get(name, "")) for name in columns])
    return head + _csv(rows)


def _or_none(value: float) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def _finite(values: np.ndarray) -> list[float | None]:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, dtype=float)]


def _scale_source(c: Conditions) -> dict[str, Any] | None:
    entry = c.scale.entry
    if entry is None:
        return None
    return {
        "name": entry.name,
        "factor": entry.factor,
        "source": entry.source,
        "citation": entry.citation,
        "doi": entry.doi,
        "where_seen": list(entry.where_seen),
        "note": entry.note,
    }


def header(sticks: StickSpectrum) -> dict[str, Any]:
    """What a spectrum was computed for, as a JSON-ready dictionary."""
    c = sticks.conditions
    return {
        "quantity": c.quantity,
        "unit": c.unit,
        "laser_nm": c.laser_nm,
        "temperature_k": c.temperature_k,
        "geometry_deg": c.geometry_deg,
        "side": c.side,
        "detector": c.detector,
        "detector_note": c.detector_note,
        "scale": c.scale.describe(),
        "scale_factor": c.scale.factor,
        "scale_source": _scale_source(c),
        "method": c.method,
        "orientation": c.orientation,
        "ratios": f"rho_linear = vh/vv, rho_natural = nh/nv at {c.geometry_deg} deg",
        "components": [
            {"source": s, "weight": w}
            for s, w in zip(sticks.components, sticks.weights, strict=True)
        ],
        "warnings": list(sticks.warnings),
        "constants": CODATA_VERSION,
    }


def sticks_dict(sticks: StickSpectrum) -> dict[str, Any]:
    """The bands as JSON-ready columns."""
    return {
        "shift_cm1": _finite(sticks.positions_cm1),
        "harmonic_cm1": _finite(sticks.harmonic_cm1),
        "modes": [[k + 1 for k in s] for s in sticks.mode_sets],
        "irrep": list(sticks.irreps),
        "rho_linear": _finite(sticks.rho_linear),
        "rho_natural": _finite(sticks.rho_natural),
        "polarized": [bool(p) for p in sticks.polarized],
        "component": [int(k) for k in sticks.component],
        "heights": {ch: _finite(sticks.heights[:, j]) for j, ch in enumerate(sticks.channels)},
    }


def grid_json(grid: GridSpectrum) -> str:
    """Header, line shape, sticks and the sampled channels in one JSON document."""
    doc = {
        "format": "vibrapol.spectrum",
        "header": header(grid.sticks),
        "lineshape": {
            "shape": grid.lineshape.shape,
            "fwhm_cm1": grid.lineshape.fwhm_cm1,
            "fwhm_slope": grid.lineshape.fwhm_slope,
            "lorentzian_share": grid.lineshape.lorentzian_share,
            "description": lineshape_text(grid.lineshape),
        },
        "grid_unit": grid.unit,
        "sticks": sticks_dict(grid.sticks),
        "grid": {
            "shift_cm1": _finite(grid.shift_cm1),
            **{ch: _finite(grid.values[:, j]) for j, ch in enumerate(grid.channels)},
        },
    }
    return json.dumps(doc, indent=1, allow_nan=False) + "\n"


def sweep_csv(sweep: PolarSweep) -> str:
    """Conditions as ``#`` lines, then ``angle_deg,shift_cm1,irrep,parallel,crossed``."""
    c = sweep.conditions
    head = conditions_lines(c, None, columns=f"{_shift_note(c)}; parallel and crossed in {c.unit}")
    rows: list[list[object]] = [["angle_deg", "shift_cm1", "irrep", "parallel", "crossed"]]
    for b in range(sweep.n_bands):
        for a, angle in enumerate(sweep.angles_deg):
            rows.append(
                [
                    f"{angle:g}",
                    f"{sweep.positions_cm1[b]:.4f}",
                    sweep.irreps[b],
                    _num(sweep.parallel[a, b], ".8g"),
                    _num(sweep.crossed[a, b], ".8g"),
                ]
            )
    return head + _csv(rows)


def sweep_json(sweep: PolarSweep) -> str:
    """The sweep with its conditions as JSON."""
    c = sweep.conditions
    doc = {
        "format": "vibrapol.spectrum.sweep",
        "quantity": c.quantity,
        "unit": c.unit,
        "geometry_deg": c.geometry_deg,
        "orientation": c.orientation,
        "laser_nm": c.laser_nm,
        "temperature_k": c.temperature_k,
        "detector": c.detector,
        "detector_note": c.detector_note,
        "scale": c.scale.describe(),
        "scale_source": _scale_source(c),
        "method": c.method,
        "constants": CODATA_VERSION,
        "angles_deg": _finite(sweep.angles_deg),
        "bands": [
            {
                "shift_cm1": float(sweep.positions_cm1[b]),
                "irrep": sweep.irreps[b],
                "parallel": _finite(sweep.parallel[:, b]),
                "crossed": _finite(sweep.crossed[:, b]),
            }
            for b in range(sweep.n_bands)
        ],
    }
    return json.dumps(doc, indent=1, allow_nan=False) + "\n"
