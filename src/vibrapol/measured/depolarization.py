"""Measured depolarization ratios per band, and the instrument polarization correction.

The measured ratio of a band is ρ = A_VH / A_VV, the ratio of its areas fitted jointly in the
crossed and parallel spectra (same positions, by default same widths).  A spectrometer passes
the two scattered polarizations with different efficiency (grating, mirrors, detector), so
what is measured is ρ_meas = g ρ_true with an instrument factor g.  :func:`derive_correction`
finds g from a reference measurement of bands whose ρ is known (for example bands that must be
3/4 by symmetry), :func:`apply_correction` divides later ratios by it, and
:func:`write_correction` / :func:`read_correction` store it as a small JSON file.

A polarization scrambler before the spectrometer makes g ≈ 1; the correction is then a check.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.fileio import write_atomic
from vibrapol.measured.fitting import SHAPE, BandFit, Starts, fit_bands, fit_joint
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair
from vibrapol.textio import read_text

if TYPE_CHECKING:
    import pandas as pd


#: Schema name and version of stored corrections.
CORRECTION_SCHEMA = "vibrapol.polarization-correction"
CORRECTION_VERSION = 1


def ratio_with_error(
    vv_area: np.ndarray,
    vh_area: np.ndarray,
    var_vv: np.ndarray,
    var_vh: np.ndarray,
    cov: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """ρ = A_VH/A_VV and its standard error by first-order propagation.

    σ²(ρ) = gᵀ C g with g = (−A_VH/A_VV², 1/A_VV) and C the 2×2 covariance of (A_VV, A_VH);
    the covariance term matters because the two areas share positions and widths in the fit.

    References
    ----------
    JCGM 100:2008 (GUM), eq. (13) (law of propagation of uncertainty).
    """
    vv, vh = np.asarray(vv_area, float), np.asarray(vh_area, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = vh / vv
        g_vv, g_vh = -vh / vv**2, 1.0 / vv
        var = g_vv**2 * var_vv + g_vh**2 * var_vh + 2 * g_vv * g_vh * cov
    return rho, np.sqrt(np.clip(var, 0.0, None))


@dataclass(frozen=True)
class MeasuredBand:
    """One band measured in VV and (when given) VH.

    Attributes
    ----------
    position_cm1, position_err_cm1 : float
        Centre (shared by VV and VH) and its standard error, cm⁻¹.
    fwhm_cm1, fwhm_err_cm1 : float
        FWHM in VV and its standard error, cm⁻¹.
    vh_fwhm_cm1 : float
        FWHM in VH (equal to ``fwhm_cm1`` when widths are shared; NaN without VH).
    eta : float
        Lorentzian fraction (pseudo-Voigt only, else NaN).
    vv_area, vv_area_err : float
        Area in VV and its standard error.
    vh_area, vh_area_err : float
        Area in VH and its standard error (NaN without VH).
    rho, rho_err : float
        Depolarization ratio A_VH/A_VV and its standard error, after the instrument
        correction when one was applied (NaN without VH).
    """

    position_cm1: float
    position_err_cm1: float
    fwhm_cm1: float
    fwhm_err_cm1: float
    vh_fwhm_cm1: float
    eta: float
    vv_area: float
    vv_area_err: float
    vh_area: float
    vh_area_err: float
    rho: float
    rho_err: float


@dataclass(frozen=True)
class PolarizationCorrection:
    """Instrument factor g in ρ_measured = g · ρ_true.

    Attributes
    ----------
    factor, factor_err : float
        g and its standard error.
    n_reference_bands : int
        Bands it was derived from.
    reference : tuple of (float, float, float, float)
        Per reference band: (position_cm1, rho_true, rho_measured, rho_measured_err).
    reduced_chi2 : float
        Scatter of the reference bands about g ρ_true relative to their errors (NaN for one
        band); ≫ 1 means the reference values or the fits disagree.
    laser_nm : float or None
        Laser line of the reference measurement (g depends on wavelength).
    note : str
        What the reference was (sample, date, geometry).
    """

    factor: float
    factor_err: float
    n_reference_bands: int
    reference: tuple[tuple[float, ...], ...]
    reduced_chi2: float
    laser_nm: float | None = None
    note: str = ""

    def to_dict(self) -> dict[str, object]:
        """JSON-ready dict with schema name and version."""
        body = dataclasses.asdict(self)
        body["reference"] = [list(r) for r in self.reference]
        return {"schema": CORRECTION_SCHEMA, "version": CORRECTION_VERSION, **body}

    @classmethod
    def from_dict(cls, data: dict[str, Any], where: str = "") -> PolarizationCorrection:
        """Inverse of :meth:`to_dict`."""
        if data.get("schema") != CORRECTION_SCHEMA or data.get("version") != CORRECTION_VERSION:
            raise InputFormatError(
                f"{where}: not a vibrapol polarization correction (schema {CORRECTION_SCHEMA} "
                f"version {CORRECTION_VERSION})"
            )
        try:
            ref = tuple(tuple(float(v) for v in row) for row in data["reference"])
            factor = float(data["factor"])
            out = cls(
                factor=factor,
                factor_err=float(data["factor_err"]),
                n_reference_bands=int(data["n_reference_bands"]),
                reference=ref,
                reduced_chi2=float(data["reduced_chi2"]),
                laser_nm=None if data.get("laser_nm") is None else float(data["laser_nm"]),
                note=str(data.get("note", "")),
            )
        except (KeyError, TypeError, ValueError, OverflowError) as exc:
            raise InputFormatError(
                f"{where}: polarization correction is incomplete ({exc})"
            ) from exc
        if not (np.isfinite(factor) and factor > 0):
            raise InputFormatError(f"{where}: instrument factor {factor} must be positive")
        return out


@dataclass(frozen=True, eq=False)
class MeasuredBands:
    """Bands of a measured VV/VH pair with their depolarization ratios.

    Attributes
    ----------
    bands : tuple of MeasuredBand
        Sorted by position.
    vv_fit : BandFit
        The VV channel of the fit (model curves, χ², windows).
    vh_fit : BandFit or None
        The VH channel (None without VH).
    correction : PolarizationCorrection or None
        Instrument correction applied to ``rho`` (None: raw ratios).
    laser_nm : float or None
        Laser line of the measurement when known.
    source_files : tuple of str
        VV file and VH file.
    """

    bands: tuple[MeasuredBand, ...]
    vv_fit: BandFit
    vh_fit: BandFit | None
    correction: PolarizationCorrection | None = None
    laser_nm: float | None = None
    source_files: tuple[str, ...] = ()

    def __repr__(self) -> str:
        from vibrapol.display import bands_lines

        return "\n".join(bands_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import bands_html

        return bands_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The bands as a pandas DataFrame, one row per band.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.measured_bands_dataframe`.
        """
        from vibrapol.output.frames import measured_bands_dataframe

        return measured_bands_dataframe(self)

    def __len__(self) -> int:
        return len(self.bands)

    def _column(self, name: str) -> np.ndarray:
        return np.array([getattr(b, name) for b in self.bands], dtype=float)

    @property
    def positions_cm1(self) -> np.ndarray:
        """Band centres, cm⁻¹."""
        return self._column("position_cm1")

    @property
    def rho(self) -> np.ndarray:
        """Depolarization ratios."""
        return self._column("rho")

    @property
    def rho_err(self) -> np.ndarray:
        """Standard errors of the depolarization ratios."""
        return self._column("rho_err")

    @property
    def vv_area(self) -> np.ndarray:
        """VV areas."""
        return self._column("vv_area")

    @property
    def vh_area(self) -> np.ndarray:
        """VH areas."""
        return self._column("vh_area")


def measure_bands(
    pair: PolarizedPair | MeasuredSpectrum,
    starts: Starts = None,
    *,
    shape: str = SHAPE,
    share_fwhm: bool = True,
    correction: PolarizationCorrection | None = None,
    **options: object,
) -> MeasuredBands:
    """Fit bands jointly in VV and VH and compute their depolarization ratios.

    Parameters
    ----------
    pair : PolarizedPair or MeasuredSpectrum
        Cleaned spectra (:func:`vibrapol.measured.cleaning.clean_pair`); a lone spectrum is
        taken as VV without VH (ratios NaN).
    starts : sequence of BandCandidate or float, optional
        Starting bands; default: detected in VV (VV is the stronger channel for every band,
        since ρ ≤ 3/4 for linearly polarized excitation).
    shape, share_fwhm, **options
        See :func:`vibrapol.measured.fitting.fit_joint`.
    correction : PolarizationCorrection, optional
        Instrument correction to apply to the ratios.

    Returns
    -------
    MeasuredBands
    """
    if isinstance(pair, MeasuredSpectrum):
        pair = PolarizedPair(pair)
    if pair.vh is None:
        vv_fit = fit_bands(pair.vv, starts, shape=shape, **options)
        nan = float("nan")
        bands = tuple(
            MeasuredBand(
                b.position_cm1, b.position_err_cm1, b.fwhm_cm1, b.fwhm_err_cm1, nan, b.eta,
                b.area, b.area_err, nan, nan, nan, nan,
            )
            for b in vv_fit.bands
        )  # fmt: skip
        return MeasuredBands(bands, vv_fit, None, None, pair.vv.laser_nm, (pair.vv.source_file,))
    joint = fit_joint([pair.vv, pair.vh], starts, shape=shape, share_fwhm=share_fwhm, **options)  # type: ignore[arg-type]
    vv_fit, vh_fit = joint.fits
    cov = joint.area_covariance
    rho, rho_err = ratio_with_error(
        vv_fit.areas, vh_fit.areas, cov[:, 0, 0], cov[:, 1, 1], cov[:, 0, 1]
    )
    bands = tuple(
        MeasuredBand(
            v.position_cm1, v.position_err_cm1, v.fwhm_cm1, v.fwhm_err_cm1, h.fwhm_cm1, v.eta,
            v.area, v.area_err, h.area, h.area_err, float(r), float(e),
        )
        for v, h, r, e in zip(vv_fit.bands, vh_fit.bands, rho, rho_err, strict=True)
    )  # fmt: skip
    result = MeasuredBands(
        bands, vv_fit, vh_fit, None, pair.vv.laser_nm, (pair.vv.source_file, pair.vh.source_file)
    )
    return result if correction is None else apply_correction(result, correction)


def derive_correction(
    reference: MeasuredBands,
    known_rho: Sequence[tuple[float, float]],
    *,
    tolerance_cm1: float = 5.0,
    note: str = "",
) -> PolarizationCorrection:
    """Instrument factor g from bands of known depolarization ratio.

    Weighted least squares for ρ_meas,i = g ρ_true,i:
    g = Σ wᵢ ρ_meas,i ρ_true,i / Σ wᵢ ρ_true,i², wᵢ = 1/σᵢ², σ(g) = (Σ wᵢ ρ_true,i²)^(−½),
    enlarged by √χ²_red when the references scatter more than their errors say.

    Parameters
    ----------
    reference : MeasuredBands
        Uncorrected bands of the reference measurement (with VH).
    known_rho : sequence of (position_cm1, rho_true)
        Reference bands and their true ratios (e.g. (218, 0.75) for a depolarized band of
        CCl₄; choose bands with ρ_true well above zero, which carry the information on g).
    tolerance_cm1 : float
        Largest distance between a reference position and the fitted band it names.
    note : str
        Stored with the correction.

    Raises
    ------
    VibrapolError
        Reference already corrected or without VH; a reference band not found; no band with
        ρ_true > 0.

    References
    ----------
    Weighted least squares through the origin: P. R. Bevington and D. K. Robinson, *Data
    Reduction and Error Analysis for the Physical Sciences*, 3rd ed., McGraw-Hill (2003), §6.
    """
    if reference.correction is not None:
        raise VibrapolError("derive the correction from uncorrected ratios (correction=None)")
    if reference.vh_fit is None:
        raise VibrapolError("a polarization correction needs a reference measured in VV and VH")
    rows = []
    pos = reference.positions_cm1
    for target, rho_true in known_rho:
        if not 0.0 <= rho_true <= 6.0 / 7.0:
            raise VibrapolError(f"true ratio {rho_true:g} for {target:g} cm-1 is outside 0–6/7")
        i = int(np.argmin(np.abs(pos - target)))
        if abs(pos[i] - target) > tolerance_cm1:
            raise VibrapolError(
                f"no fitted band within {tolerance_cm1:g} cm-1 of reference band {target:g} cm-1 "
                f"(nearest {pos[i]:.1f} cm-1)"
            )
        b = reference.bands[i]
        rows.append((b.position_cm1, float(rho_true), b.rho, b.rho_err))
    arr = np.array(rows)
    t, y, s = arr[:, 1], arr[:, 2], arr[:, 3]
    if not np.any(t > 0):
        raise VibrapolError("the reference bands need at least one with a true ratio above 0")
    w = 1.0 / np.where(s > 0, s, np.min(s[s > 0]) if np.any(s > 0) else 1.0) ** 2
    g = float(np.sum(w * y * t) / np.sum(w * t * t))
    g_err = float(np.sqrt(1.0 / np.sum(w * t * t)))
    chi2 = float(np.sum(w * (y - g * t) ** 2) / (len(t) - 1)) if len(t) > 1 else float("nan")
    if np.isfinite(chi2) and chi2 > 1:
        g_err *= np.sqrt(chi2)
    return PolarizationCorrection(
        g, g_err, len(rows), tuple(tuple(r) for r in rows), chi2, reference.laser_nm, note
    )


def apply_correction(bands: MeasuredBands, correction: PolarizationCorrection) -> MeasuredBands:
    """Divide the measured ratios by the instrument factor.

    σ²(ρ) = (σ_meas/g)² + (ρ_meas σ_g/g²)².

    Raises
    ------
    VibrapolError
        When ``bands`` is already corrected.
    """
    if bands.correction is not None:
        raise VibrapolError("these ratios are already corrected; apply a correction only once")
    g, sg = correction.factor, correction.factor_err
    new = tuple(
        dataclasses.replace(
            b, rho=b.rho / g, rho_err=float(np.hypot(b.rho_err / g, b.rho * sg / g**2))
        )
        for b in bands.bands
    )
    return dataclasses.replace(bands, bands=new, correction=correction)


def write_correction(
    path: str | Path, correction: PolarizationCorrection, force: bool = False
) -> Path:
    """Store a correction as JSON (atomically; no overwrite without ``force``)."""
    return write_atomic(path, json.dumps(correction.to_dict(), indent=2) + "\n", force=force)


def read_correction(path: str | Path) -> PolarizationCorrection:
    """Read a correction written by :func:`write_correction`.

    Raises
    ------
    InputFormatError
        Missing file, bad JSON, wrong schema, incomplete or non-positive factor.
    """
    p = Path(path)
    try:
        data = json.loads(read_text(p))  # one-line errors for missing, empty or binary files
    except json.JSONDecodeError as exc:
        raise InputFormatError(f"{p}: not valid JSON (line {exc.lineno}: {exc.msg})") from None
    except RecursionError:
        raise InputFormatError(f"{p}: JSON nested too deeply") from None
    if not isinstance(data, dict):
        raise InputFormatError(f"{p}: not a vibrapol polarization correction")
    return PolarizationCorrection.from_dict(data, str(p))
