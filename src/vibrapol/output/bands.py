"""Measured bands as CSV rows: positions, widths, areas and depolarization ratios of a fit.

The columns are the fields of :class:`~vibrapol.measured.MeasuredBand`; the ``#`` lines before
them (:func:`measured_conditions`) name the files, the band shape, the fit quality and the
instrument correction, and are skipped by ``pandas.read_csv(comment="#")``.
"""

from __future__ import annotations

import dataclasses
import math

from vibrapol.measured import MeasuredBand, MeasuredBands
from vibrapol.output.tables import csv_document

#: Columns of the measured-band CSV, one row per band (positions and widths in cm⁻¹; areas in
#: the spectrum's intensity unit × cm⁻¹; ``rho`` = A_VH/A_VV after the instrument correction
#: when one was applied; ``*_err`` standard errors; ``eta`` the Lorentzian fraction of a
#: pseudo-Voigt band, empty for other shapes).
MEASURED_BAND_COLUMNS = tuple(f.name for f in dataclasses.fields(MeasuredBand))

#: How :func:`measured_bands_csv` writes each column (others with ``.6g``).
MEASURED_BAND_CSV_FORMATS = {
    "position_cm1": ".2f",
    "position_err_cm1": ".2f",
    "fwhm_cm1": ".2f",
    "fwhm_err_cm1": ".2f",
    "vh_fwhm_cm1": ".2f",
    "rho": ".4f",
    "rho_err": ".4f",
}


def measured_band_rows(bands: MeasuredBands) -> list[dict[str, object]]:
    """One dictionary per band keyed by :data:`MEASURED_BAND_COLUMNS` (NaN → None)."""
    rows = []
    for band in bands.bands:
        row: dict[str, object] = {}
        for name in MEASURED_BAND_COLUMNS:
            value = float(getattr(band, name))
            row[name] = value if math.isfinite(value) else None
        rows.append(row)
    return rows


def measured_conditions(bands: MeasuredBands) -> list[tuple[str, str]]:
    """(name, value) pairs saying how the bands were measured, for file headers."""
    vv = bands.vv_fit
    items = [
        ("vibrapol", "bands fitted in a measured spectrum"),
        ("measured", ", ".join(bands.source_files) or "(in memory)"),
        ("laser", "not given" if bands.laser_nm is None else f"{bands.laser_nm:g} nm"),
        ("band shape", vv.shape),
        (
            "fit",
            f"reduced chi2 {vv.reduced_chi2:.3g} over {vv.n_points} VV points"
            + ("" if bands.vh_fit is None else f" and {bands.vh_fit.n_points} VH points")
            + ("" if vv.converged else f"; NOT CONVERGED: {vv.message}"),
        ),
    ]
    c = bands.correction
    items.append(
        (
            "instrument correction",
            "none (raw ratios A_VH/A_VV)"
            if c is None
            else f"rho divided by g = {c.factor:.4f} ± {c.factor_err:.4f}"
            + (f" ({c.note})" if c.note else ""),
        )
    )
    items.append(
        (
            "columns",
            "position_cm1, fwhm_cm1 (VV), vh_fwhm_cm1 and their errors in cm-1; areas in the "
            "spectrum's intensity unit x cm-1; rho = vh_area/vv_area for 90 deg scattering",
        )
    )
    return items


def measured_bands_csv(bands: MeasuredBands) -> str:
    """``#`` lines with the conditions, then :data:`MEASURED_BAND_COLUMNS`, one row per band."""
    formats = {**dict.fromkeys(MEASURED_BAND_COLUMNS, ".6g"), **MEASURED_BAND_CSV_FORMATS}
    return csv_document(
        measured_conditions(bands), MEASURED_BAND_COLUMNS, measured_band_rows(bands), formats
    )
