"""One rule for calling a Raman band polarized, depolarized, or too close to 3/4 to tell.

Every non-totally-symmetric fundamental has ρ_linear = 3/4 exactly; only totally symmetric
ones can have ρ_linear < 3/4 (D. A. Long, *The Raman Effect*, 2002, ch. 5).  Whether a band
is *called* polarized is a question about a measurement, so the same rule serves computed
ratios (tables, figures, summaries) and measured ones (assignment scores):

- **polarized**: ρ_linear + 2σ < 3/4 − :data:`POLARIZED_MARGIN` (σ = 0 for a computed ratio);
- **unresolved**: totally symmetric by its species, but ρ_linear too close to 3/4 for any
  measurement to tell it from a depolarized band;
- **depolarized**: every other band with a ratio.

The margin is the typical uncertainty of a measured ratio (common practice, from memory):
polarizers extinguish the crossed component to about 1 % only, the collection cone of a real
lens mixes the two channels, and the spectrometer transmits the two polarizations unequally
(corrected with reference bands to a few hundredths); together a band of true ρ = 3/4 is
commonly measured anywhere between about 0.70 and 0.80.  A computed ρ within 0.05 of 3/4 is
therefore not a prediction anyone can check.  A measured ratio adds its own 2σ on top.
"""

from __future__ import annotations

import numpy as np

#: ρ_linear of every Raman-active band that is not totally symmetric (Long 2002, ch. 5).
RHO_DEPOLARIZED = 0.75

#: Half-width of the zone below 3/4 where a ratio cannot be told from 3/4 by measurement (see
#: the module notes for why 0.05).
POLARIZED_MARGIN = 0.05

#: A band is measurably polarized when ρ_linear (+ 2σ) lies below this.
POLARIZED_BELOW = RHO_DEPOLARIZED - POLARIZED_MARGIN

POLARIZED = "polarized"
DEPOLARIZED = "depolarized"
UNRESOLVED = "unresolved"
#: Predictions from the species alone, for sources without depolarization ratios.
POLARIZED_BY_SYMMETRY = "polarized_by_symmetry"
DEPOLARIZED_BY_SYMMETRY = "depolarized_by_symmetry"

#: Short marks for tables and figure legends.
MARKS = {
    POLARIZED: "p",
    DEPOLARIZED: "dp",
    UNRESOLVED: "p?",
    POLARIZED_BY_SYMMETRY: "p(sym)",
    DEPOLARIZED_BY_SYMMETRY: "dp(sym)",
    "": "",
}

#: One sentence that states the rule, for table footers, captions and file headers.
RULE_TEXT = (
    f"p: polarized (rho_linear < {POLARIZED_BELOW:.2f}); dp: depolarized; p?: totally "
    f"symmetric but rho_linear within {POLARIZED_MARGIN:.2f} of 3/4, which no measurement "
    "tells from depolarized (the margin is the typical uncertainty of a measured ratio)"
)


def measurably_polarized(rho_linear: np.ndarray, rho_err: np.ndarray | float = 0.0) -> np.ndarray:
    """True where ρ_linear + 2σ < 3/4 − :data:`POLARIZED_MARGIN`; NaN ρ gives False.

    Parameters
    ----------
    rho_linear : array
        Depolarization ratios for linearly polarized excitation (computed or measured).
    rho_err : array or float
        Standard uncertainty of each ratio (0 for computed ratios; NaN counts as 0).
    """
    r = np.asarray(rho_linear, dtype=float)
    e = np.nan_to_num(np.broadcast_to(np.asarray(rho_err, dtype=float), r.shape), nan=0.0)
    with np.errstate(invalid="ignore"):
        return np.nan_to_num(r + 2.0 * e, nan=np.inf) < POLARIZED_BELOW


def polarization_class(
    rho_linear: np.ndarray,
    totally_symmetric: np.ndarray | None = None,
    rho_err: np.ndarray | float = 0.0,
) -> np.ndarray:
    """The outcome of the rule for each band: 'polarized', 'unresolved', 'depolarized' or ''.

    Parameters
    ----------
    rho_linear : array
        ρ_linear of each band; NaN (inactive, or unknown) gives ''.
    totally_symmetric : array of bool, optional
        Whether each band's species is totally symmetric; without it no band is 'unresolved'
        (a ratio near 3/4 then reads 'depolarized', which is what a measurement would say).
    rho_err : array or float
        Standard uncertainty of measured ratios.

    Returns
    -------
    ndarray of str
    """
    r = np.asarray(rho_linear, dtype=float)
    out = np.full(r.shape, DEPOLARIZED, dtype=object)
    if totally_symmetric is not None:
        out[np.asarray(totally_symmetric, dtype=bool)] = UNRESOLVED
    out[measurably_polarized(r, rho_err)] = POLARIZED
    out[~np.isfinite(r)] = ""
    return out


def symmetry_prediction(totally_symmetric: np.ndarray, raman_active: np.ndarray) -> np.ndarray:
    """Expected class from the species alone, for bands whose ρ is unknown.

    Totally symmetric Raman-active species: 'polarized_by_symmetry'; other Raman-active ones:
    'depolarized_by_symmetry' (ρ_linear = 3/4 exactly); Raman-inactive: ''.
    """
    ts = np.asarray(totally_symmetric, dtype=bool)
    active = np.asarray(raman_active, dtype=bool)
    out = np.full(ts.shape, "", dtype=object)
    out[active & ts] = POLARIZED_BY_SYMMETRY
    out[active & ~ts] = DEPOLARIZED_BY_SYMMETRY
    return out
