"""Measured Raman spectra: reading, cleaning, band finding and fitting, depolarization ratios.

Typical use (a parallel and a crossed spectrum recorded with a 532 nm laser)::

    from vibrapol import measured as m

    pair = m.read_pair("sample_vv.txt", "sample_vh.txt", laser_nm=532.0)
    pair, vv_report, vh_report = m.clean_pair(pair)        # spikes, arPLS baseline
    bands = m.measure_bands(pair)                          # joint VV/VH fit, ρ per band
    for b in bands.bands:
        print(f"{b.position_cm1:8.1f} {b.rho:.3f} ± {b.rho_err:.3f}")

With a reference measurement of bands of known ρ (e.g. 3/4 by symmetry), derive the
instrument factor once and apply it to later measurements::

    corr = m.derive_correction(m.measure_bands(reference_pair), [(218.0, 0.75), (314.0, 0.75)])
    m.write_correction("instrument.json", corr)
    bands = m.measure_bands(pair, correction=m.read_correction("instrument.json"))

Safety: laser radiation can injure eyes and skin; follow the laser safety rules of your
institution and local regulations.  Handle samples and solvents per their safety data sheets.
"""

from __future__ import annotations

from vibrapol.measured.axis import MAX_SHIFT_CM1, axis_from_units, to_raman_shift
from vibrapol.measured.cleaning import (
    CleaningReport,
    clean,
    clean_pair,
    estimate_baseline,
    find_spikes,
    noise_sigma,
    remove_spikes,
    smooth,
)
from vibrapol.measured.density import NoiseEstimate, noise_estimate
from vibrapol.measured.depolarization import (
    MeasuredBand,
    MeasuredBands,
    PolarizationCorrection,
    apply_correction,
    derive_correction,
    measure_bands,
    ratio_with_error,
    read_correction,
    write_correction,
)
from vibrapol.measured.fitting import Band, BandFit, JointResult, fit_bands, fit_joint
from vibrapol.measured.jcamp import JcampBlock, read_jcamp
from vibrapol.measured.peaks import BandCandidate, find_bands
from vibrapol.measured.reading import read_pair, read_spectra, read_spectrum
from vibrapol.measured.spectrum import MeasuredSpectrum, PolarizedPair, align_pair

__all__ = [
    "MAX_SHIFT_CM1",
    "Band",
    "BandCandidate",
    "BandFit",
    "CleaningReport",
    "JcampBlock",
    "JointResult",
    "MeasuredBand",
    "MeasuredBands",
    "MeasuredSpectrum",
    "NoiseEstimate",
    "PolarizationCorrection",
    "PolarizedPair",
    "align_pair",
    "apply_correction",
    "axis_from_units",
    "clean",
    "clean_pair",
    "derive_correction",
    "estimate_baseline",
    "find_bands",
    "find_spikes",
    "fit_bands",
    "fit_joint",
    "measure_bands",
    "noise_estimate",
    "noise_sigma",
    "ratio_with_error",
    "read_correction",
    "read_jcamp",
    "read_pair",
    "read_spectra",
    "read_spectrum",
    "remove_spikes",
    "smooth",
    "to_raman_shift",
    "write_correction",
]
