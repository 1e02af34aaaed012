"""The isotope-shift table (parent and isotopologue side by side) as text, CSV and JSON."""

from __future__ import annotations

import json
import math

from vibrapol.isotopes import IsotopeShifts
from vibrapol.output.tables import csv_document

#: Columns of the shift CSV, in order: parent mode (1-based), its wavenumber (cm⁻¹), the
#: corresponding isotopologue mode (1-based) and wavenumber (cm⁻¹), ν̃′ − ν̃ (cm⁻¹), ν̃′/ν̃,
#: and the overlap |⟨d, d′⟩| of their unit Cartesian displacements.
SHIFT_COLUMNS = (
    "mode",
    "frequency_cm1",
    "isotopologue_mode",
    "isotopologue_cm1",
    "shift_cm1",
    "ratio",
    "overlap",
)
_FORMATS = {
    "frequency_cm1": ".4f",
    "isotopologue_cm1": ".4f",
    "shift_cm1": ".4f",
    "ratio": ".6f",
    "overlap": ".4f",
}


def shift_rows(shifts: IsotopeShifts) -> list[dict[str, object]]:
    """One dictionary per parent mode keyed by :data:`SHIFT_COLUMNS` (NaN → None)."""
    rows: list[dict[str, object]] = []
    for i in range(shifts.parent.n_modes):
        ratio = float(shifts.ratio[i])
        rows.append(
            {
                "mode": i + 1,
                "frequency_cm1": float(shifts.parent_cm1[i]),
                "isotopologue_mode": int(shifts.partner[i]) + 1,
                "isotopologue_cm1": float(shifts.isotopologue_cm1[i]),
                "shift_cm1": float(shifts.shift_cm1[i]),
                "ratio": ratio if math.isfinite(ratio) else None,
                "overlap": float(shifts.overlap[i]),
            }
        )
    return rows


def shift_header(shifts: IsotopeShifts, warnings: list[str] | tuple[str, ...] = ()) -> dict:
    """Source, masses of both sets, how modes are paired, and the warnings."""
    p = shifts.parent.provenance
    return {
        "source": p.source_file,
        "program": p.program,
        "method": p.level_of_theory(),
        "parent_masses": p.masses,
        "isotopologue_masses": shifts.heavy.provenance.masses,
        "pairing": "largest overlap of unit Cartesian displacements (one to one)",
        "isotopologue_modes": shifts.heavy.provenance.notes[-1]
        if shifts.heavy.provenance.notes
        else "",
        "warnings": list(warnings),
    }


def shifts_csv(shifts: IsotopeShifts, warnings: list[str] | tuple[str, ...] = ()) -> str:
    """CSV with :data:`SHIFT_COLUMNS` after ``#`` header lines."""
    header = shift_header(shifts, warnings)
    items = [(k, v) for k, v in header.items() if k != "warnings" and v]
    items += [("warning", w) for w in header["warnings"]]
    return csv_document(items, SHIFT_COLUMNS, shift_rows(shifts), _FORMATS)


def shifts_json(shifts: IsotopeShifts, warnings: list[str] | tuple[str, ...] = ()) -> str:
    """JSON object with ``header``, ``units`` and ``modes`` (one object per parent mode)."""
    units = {
        "frequency_cm1": "cm-1",
        "isotopologue_cm1": "cm-1",
        "shift_cm1": "cm-1",
        "ratio": "1",
        "overlap": "1",
    }
    doc = {"header": shift_header(shifts, warnings), "units": units, "modes": shift_rows(shifts)}
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def shifts_text(shifts: IsotopeShifts, warnings: list[str] | tuple[str, ...] = ()) -> str:
    """A readable table: one line per parent mode, header lines above."""
    header = shift_header(shifts, warnings)
    lines = [f"# {k}: {v}" for k, v in header.items() if k != "warnings" and v]
    lines += [f"# warning: {w}" for w in header["warnings"]]
    lines.append(
        f"{'mode':>4}  {'ν̃ (cm⁻¹)':>10}  {'iso mode':>8}  {'ν̃′ (cm⁻¹)':>10}  "
        f"{'Δν̃ (cm⁻¹)':>10}  {'ν̃′/ν̃':>8}  {'overlap':>7}"
    )
    for row in shift_rows(shifts):
        ratio = row["ratio"]
        lines.append(
            f"{row['mode']:>4}  {row['frequency_cm1']:>10.1f}  {row['isotopologue_mode']:>8}  "
            f"{row['isotopologue_cm1']:>10.1f}  {row['shift_cm1']:>10.1f}  "
            f"{'' if ratio is None else format(ratio, '.4f'):>8}  {row['overlap']:>7.3f}"
        )
    return "\n".join(lines) + "\n"


def shifts_dataframe(shifts: IsotopeShifts):  # noqa: ANN201 (pandas is imported here)
    """The shift table as a pandas DataFrame: :data:`SHIFT_COLUMNS`, ``attrs`` the header."""
    import pandas as pd

    df = pd.DataFrame(shift_rows(shifts), columns=list(SHIFT_COLUMNS))
    df.attrs.update(shift_header(shifts))
    return df


SHIFT_FORMATTERS = {"text": shifts_text, "csv": shifts_csv, "json": shifts_json}
