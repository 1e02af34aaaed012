"""Tables as text, CSV, JSON, Markdown and LaTeX."""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np

from vibrapol.ramantable import RamanTable
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


def table_json(table: RamanTable) -> str:
    """JSON document: header fields, units, and one record per mode."""
    doc = {
        "header": _header(table),
        "units": {
            "frequency_cm1": "cm-1",
            "a2": "angstrom^4/amu",
            "gamma2": "angstrom^4/amu",
            "activity": "angstrom^4/amu",
        },
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
    lines += [
        "a2, gamma2, activity in Å⁴/amu; rho for 90° scattering (linear / natural incident light)",
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


FORMATTERS = {"text": table_text, "csv": table_csv, "json": table_json}
