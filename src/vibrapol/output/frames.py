"""pandas DataFrames of the tables vibrapol writes, with the conditions in ``DataFrame.attrs``.

Each DataFrame is built from the very rows its CSV file is written from
(:func:`~vibrapol.output.tables.table_rows`, :func:`~vibrapol.output.spectra.stick_rows`,
:func:`~vibrapol.output.assignments.assignment_rows`, …) and has the CSV's columns in the
CSV's order, so the two cannot drift apart; the CSV rounds the numbers for print, the
DataFrame keeps them in full.  Unknown values (empty CSV cells) are NaN in number columns and
``pd.NA`` in the yes/no columns (pandas' nullable ``boolean`` type).  ``df.attrs`` holds what
the file's ``#`` lines say (source, method, laser, temperature, scale factor, notes,
warnings, units), as a dictionary.

pandas is imported when one of these functions is called, never when vibrapol is imported.
Works with pandas 2 and 3 (no in-place or chained assignment; string columns take pandas'
default string type).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

    from vibrapol.compare.ranking import Ranking
    from vibrapol.compare.results import Assignment
    from vibrapol.measured import MeasuredBands, PolarizedPair
    from vibrapol.ramantable import RamanTable
    from vibrapol.spectrum import GridSpectrum, StickSpectrum

#: Columns that hold yes/no answers (nullable ``boolean`` dtype when some are unknown).
BOOLEAN_COLUMNS = frozenset(
    {"polarized", "ir_active", "raman_active", "scale_fitted", "totally_symmetric"}
)


def _pandas() -> Any:
    try:
        import pandas
    except ImportError:  # pragma: no cover - pandas is a dependency
        from vibrapol.errors import VibrapolError

        raise VibrapolError(
            "to_dataframe needs pandas; install it with pip install 'pandas>=2.0'"
        ) from None
    return pandas


def _column(name: str, values: list[object]) -> Any:
    """One column as a pandas Series of the dtype its values call for."""
    pd = _pandas()
    known = [v for v in values if v is not None]
    if name in BOOLEAN_COLUMNS or (known and all(isinstance(v, bool) for v in known)):
        if len(known) == len(values):
            return pd.Series(values, dtype=bool)
        return pd.Series(values, dtype="boolean")
    if known and all(isinstance(v, str) for v in known):
        return pd.Series(["" if v is None else v for v in values])
    if known and all(isinstance(v, int) for v in known) and len(known) == len(values):
        return pd.Series(values, dtype="int64")
    return pd.Series([np.nan if v is None else v for v in values], dtype="float64")


def rows_dataframe(
    columns: Sequence[str], rows: Sequence[dict[str, object]], attrs: dict[str, Any]
) -> pd.DataFrame:
    """A DataFrame with ``columns`` (in order) from row dictionaries, and ``attrs``.

    Column types follow the values: numbers (None → NaN), whole numbers, text, yes/no
    (None → ``pd.NA``).  An empty column of :data:`BOOLEAN_COLUMNS` is ``boolean``, any other
    empty column float.
    """
    pd = _pandas()
    data = {name: _column(name, [row[name] for row in rows]) for name in columns}
    frame = pd.DataFrame(data, columns=list(columns))
    frame.attrs.update(attrs)
    return frame


def _pairs(items: Sequence[tuple[str, str]]) -> dict[str, Any]:
    """(name, value) header pairs as a dictionary; repeated names (notes) become lists."""
    out: dict[str, Any] = {}
    for key, value in items:
        if key in out:
            earlier = out[key]
            out[key] = [*earlier, value] if isinstance(earlier, list) else [earlier, value]
        else:
            out[key] = value
    return out


def table_dataframe(table: RamanTable) -> pd.DataFrame:
    """The per-mode Raman table: the columns of ``vibrapol table --format csv``.

    ``attrs``: the JSON header (source, program, method, point group, notes, warnings, the
    polarization rule) and ``units`` (a², γ², activity in Å⁴/amu, or relative).
    """
    from vibrapol.output.tables import TABLE_COLUMNS, table_header, table_rows, table_units
    from vibrapol.units import CODATA_VERSION

    attrs = {**table_header(table), "units": table_units(table), "constants": CODATA_VERSION}
    rows = [dict(row) for row in table_rows(table)]
    return rows_dataframe(TABLE_COLUMNS, rows, attrs)


def sticks_dataframe(sticks: StickSpectrum) -> pd.DataFrame:
    """One row per band: the columns of the stick CSV (``vibrapol spectrum --sticks``).

    ``attrs``: the JSON header of the spectrum (quantity, unit, laser_nm, temperature_k,
    geometry, detector, scale factor and its source, method, components) and ``conditions``
    (the ``#`` lines of the CSV, by name).
    """
    from vibrapol.output.spectra import header, stick_columns, stick_items, stick_rows

    attrs = {**header(sticks), "conditions": _pairs(stick_items(sticks))}
    return rows_dataframe(stick_columns(sticks), stick_rows(sticks), attrs)


def grid_dataframe(grid: GridSpectrum) -> pd.DataFrame:
    """One row per grid point: ``shift_cm1`` and one column per channel, as the grid CSV.

    ``attrs`` as :func:`sticks_dataframe`, with ``lineshape`` and ``grid_unit``.
    """
    from vibrapol.output.spectra import grid_array, grid_columns, grid_items, header, lineshape_text

    pd = _pandas()
    frame = pd.DataFrame(grid_array(grid), columns=list(grid_columns(grid)))
    frame.attrs.update(
        {
            **header(grid.sticks),
            "lineshape": lineshape_text(grid.lineshape),
            "grid_unit": grid.unit,
            "conditions": _pairs(grid_items(grid)),
        }
    )
    return frame


def measured_bands_dataframe(bands: MeasuredBands) -> pd.DataFrame:
    """One row per measured band: the columns of :func:`.bands.measured_bands_csv`."""
    from vibrapol.output.bands import (
        MEASURED_BAND_COLUMNS,
        measured_band_rows,
        measured_conditions,
    )

    attrs = {
        "source_files": list(bands.source_files),
        "laser_nm": bands.laser_nm,
        "correction_factor": None if bands.correction is None else bands.correction.factor,
        "conditions": _pairs(measured_conditions(bands)),
    }
    return rows_dataframe(MEASURED_BAND_COLUMNS, measured_band_rows(bands), attrs)


def assignment_dataframe(
    assignment: Assignment, pair: PolarizedPair | None = None, notes: Sequence[str] = ()
) -> pd.DataFrame:
    """One row per measured band: the columns of ``vibrapol match`` CSV files.

    ``attrs``: ``conditions`` (the ``#`` lines of the CSV: candidate, measured files, scale,
    laser, temperature, scores), ``scale_factor``, ``scale_factor_err``, ``scale_fitted`` and
    ``overall`` (the overall score).
    """
    from vibrapol.output.assignments import (
        ASSIGNMENT_COLUMNS,
        assignment_conditions,
        assignment_rows,
    )

    s = assignment.scale
    attrs = {
        "candidate": assignment.label,
        "scale_factor": s.factor,
        "scale_factor_err": s.factor_err,
        "scale_fitted": s.fitted,
        "overall": assignment.scores.overall,
        "conditions": _pairs(assignment_conditions(assignment, pair, notes)),
    }
    return rows_dataframe(ASSIGNMENT_COLUMNS, assignment_rows(assignment), attrs)


def ranking_dataframe(ranking: Ranking) -> pd.DataFrame:
    """One row per candidate, best first: the columns of :func:`.assignments.ranking_csv`."""
    from vibrapol.output.assignments import RANKING_COLUMNS, ranking_conditions, ranking_rows

    attrs = {"conditions": _pairs(ranking_conditions(ranking))}
    return rows_dataframe(RANKING_COLUMNS, ranking_rows(ranking), attrs)
