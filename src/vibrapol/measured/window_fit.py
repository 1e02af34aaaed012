"""Least-squares fit of the bands of one connected fit window (used by :mod:`.fitting`).

Model of channel c on the window's points:

    y_c(x) = Σ_j A_jc P(x; x0_j, w_jc, η_j) + b_c + s_c (x − x̄) + t_c(x)

with t_c the fixed tails of bands fitted in other windows.  Residuals are divided by the
channel's noise σ_c; the covariance is s²(JᵀJ)⁻¹ τ with s² the reduced χ² of the whole fit
and τ the variance factor of correlated noise (:class:`~vibrapol.measured.density.
NoiseEstimate`).  The Jacobian is dense but only as large as the window: the cost of a whole
spectrum grows with its points and its bands, not their product.

References
----------
Covariance of least-squares estimates from the Jacobian: W. H. Press et al., *Numerical
Recipes*, 3rd ed., Cambridge (2007), §15.5.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from vibrapol.errors import VibrapolError
from vibrapol.measured.profiles import height_factor, profile_derivatives

#: Most residuals (points × channels) of a window solved with an SVD of the Jacobian at every
#: step of the trust-region method; larger windows use LSMR (SciPy's advice for large
#: problems).  Windows of spectra sampled about 1 cm⁻¹ apart stay far below it.
EXACT_MAX_ROWS = 4_000


@dataclass(frozen=True, eq=False)
class WindowFit:
    """Parameters of the bands of one window, in the spectra's intensity units.

    ``value(kind, j, c)`` and ``error(kind, j, c)`` give position (``"pos"``), width
    (``"w"``), Lorentzian fraction (``"eta"``) and area (``"area"``) of band j in channel c.
    ``covariance`` is (JᵀJ)⁻¹ τ, to be multiplied by the reduced χ² s² of the whole fit;
    ``chi2`` is this window's sum of squared weighted residuals.
    """

    window_cm1: tuple[float, float]
    starts_cm1: np.ndarray
    start_fwhm_cm1: np.ndarray
    index: dict[str, np.ndarray]
    params: np.ndarray
    covariance: np.ndarray
    chi2: float
    n_rows: int
    n_params: int
    n_points: int
    success: bool
    message: str
    problems: tuple[str, ...]

    def value(self, kind: str, j: int, c: int = 0) -> float:
        """Fitted value of a parameter of band j in channel c."""
        return float(self.params[self._at(kind, j, c)])

    def error(self, kind: str, j: int, c: int = 0, s2: float | None = None) -> float:
        """Standard error of that parameter (s² default: this window's reduced χ²)."""
        i = self._at(kind, j, c)
        s2 = self.chi2 / (self.n_rows - self.n_params) if s2 is None else s2
        return float(np.sqrt(max(self.covariance[i, i] * s2, 0.0)))

    def _at(self, kind: str, j: int, c: int) -> int:
        idx = self.index[kind]
        return int(idx[j, c] if idx.ndim == 2 else idx[j])

    def area_snr(self) -> np.ndarray:
        """Area over its standard error in the first channel, per band."""
        out = []
        for j in range(self.starts_cm1.size):
            area, err = self.value("area", j), self.error("area", j)
            out.append(area / err if err > 0 else np.inf)
        return np.array(out)


def fit_window(
    x: np.ndarray,
    ys: Sequence[np.ndarray],
    sigmas: Sequence[float],
    pos0: np.ndarray,
    w0: np.ndarray,
    *,
    shape: str,
    share_fwhm: bool,
    n_base: int,
    position_freedom_cm1: float | None,
    tau: float,
    where: str,
    init: WindowFit | None = None,
) -> WindowFit:
    """Fit the bands starting at ``pos0`` (FWHM ``w0``) to the channels ``ys`` on ``x``.

    ``ys`` are the intensities on the window's points minus any fixed contribution; the first
    channel's areas are bounded at ≥ 0, the others' are free.  ``init``, a fit of the same
    bands, gives the starting values (the bounds stay those of ``pos0`` and ``w0``).  Windows
    of more than :data:`EXACT_MAX_ROWS` residuals take the iterative trust-region solver
    (LSMR) instead of an SVD of the Jacobian at every step.

    Raises
    ------
    VibrapolError
        When the window has no more residuals than parameters.
    """
    n_b, n_c = pos0.size, len(ys)
    lo_x, hi_x = float(x[0]), float(x[-1])
    # Fit in units of the largest intensity: areas and baselines become numbers of order one
    # beside positions in cm-1, which the optimizer's tolerances need.
    unit = max(float(np.max(np.abs(ys[0]))), 1e-300)
    yu = [np.asarray(y, dtype=float) / unit for y in ys]
    su = [float(s) / unit for s in sigmas]
    centre = 0.5 * (lo_x + hi_x)
    dx = x - centre

    n_w = 1 if share_fwhm else n_c
    per_band = 1 + n_w + (1 if shape == "pseudo_voigt" else 0) + n_c
    i_pos = np.arange(n_b) * per_band
    i_w = i_pos[:, None] + 1 + (np.zeros((1, n_c), int) if share_fwhm else np.arange(n_c)[None, :])
    i_eta = i_pos + 1 + n_w
    i_area = i_pos[:, None] + 1 + n_w + (shape == "pseudo_voigt") + np.arange(n_c)[None, :]
    i_base = n_b * per_band + np.arange(n_c * n_base).reshape(n_c, n_base)
    n_p = n_b * per_band + i_base.size
    m = x.size * n_c
    if m <= n_p:
        raise VibrapolError(
            f"{where}: {m} points in the fit window {lo_x:g}–{hi_x:g} cm-1 cannot fix "
            f"{n_p} parameters"
        )

    local = np.interp(pos0, x[1:], np.diff(x)) if x.size > 1 else np.ones(n_b)
    p0, lo_b, hi_b = np.zeros(n_p), np.full(n_p, -np.inf), np.full(n_p, np.inf)
    for j in range(n_b):
        d = position_freedom_cm1 or max(w0[j], 2 * local[j])
        p0[i_pos[j]], lo_b[i_pos[j]], hi_b[i_pos[j]] = pos0[j], pos0[j] - d, pos0[j] + d
        wlo, whi = 0.5 * local[j], max(10 * w0[j], 20 * local[j])
        p0[i_w[j]], lo_b[i_w[j]], hi_b[i_w[j]] = np.clip(w0[j], wlo, whi), wlo, whi
        if shape == "pseudo_voigt":
            p0[i_eta[j]], lo_b[i_eta[j]], hi_b[i_eta[j]] = 0.5, 0.0, 1.0
    if n_base:
        for c in range(n_c):
            p0[i_base[c, 0]] = np.percentile(yu[c], 10)
    for j in range(n_b):
        for c in range(n_c):
            h = np.interp(pos0[j], x, yu[c]) - (p0[i_base[c, 0]] if n_base else 0.0)
            h = max(h, su[c]) if c == 0 else h
            p0[i_area[j, c]] = h * w0[j] / height_factor(shape)
        lo_b[i_area[j, 0]] = 0.0
    scale = np.ones(n_p)  # from fit units back to the spectra's intensity units
    scale[i_area.ravel()] = unit
    scale[i_base.ravel()] = unit
    if init is not None:
        p0 = init.params / scale
    p0 = np.clip(p0, lo_b, hi_b)

    def parts(p: np.ndarray, want_jac: bool) -> tuple[np.ndarray, np.ndarray | None]:
        r = np.empty(m)
        jac = np.zeros((m, n_p)) if want_jac else None
        for c in range(n_c):
            rows = slice(c * x.size, (c + 1) * x.size)
            model = np.zeros(x.size)
            for j in range(n_b):
                eta = p[i_eta[j]] if shape == "pseudo_voigt" else 0.5
                area = p[i_area[j, c]]
                prof, d_x0, d_w, d_eta = profile_derivatives(
                    shape, x, p[i_pos[j]], p[i_w[j, c]], eta
                )
                model += area * prof
                if jac is not None:
                    jac[rows, i_area[j, c]] = prof / su[c]
                    jac[rows, i_pos[j]] = area * d_x0 / su[c]
                    jac[rows, i_w[j, c]] = area * d_w / su[c]
                    if shape == "pseudo_voigt":
                        jac[rows, i_eta[j]] = area * d_eta / su[c]
            if n_base >= 1:
                model += p[i_base[c, 0]]
                if jac is not None:
                    jac[rows, i_base[c, 0]] = 1 / su[c]
            if n_base == 2:
                model += p[i_base[c, 1]] * dx
                if jac is not None:
                    jac[rows, i_base[c, 1]] = dx / su[c]
            r[rows] = (model - yu[c]) / su[c]
        return r, jac

    def residuals(p: np.ndarray) -> np.ndarray:
        return parts(p, False)[0]

    def jacobian(p: np.ndarray) -> np.ndarray:
        jac = parts(p, True)[1]
        assert jac is not None  # parts(p, True) always builds it
        return jac

    res = least_squares(
        residuals,
        p0,
        jac=jacobian,
        bounds=(lo_b, hi_b),
        method="trf",
        x_scale="jac",
        max_nfev=100 * n_p,
        tr_solver="exact" if m <= EXACT_MAX_ROWS else "lsmr",
    )
    p = res.x
    r, jac = residuals(p), jacobian(p)
    rr = float(r @ r)
    # J = QR, so JᵀJ = RᵀR: the SVD of the small R gives the pseudo-inverse of JᵀJ as
    # accurately as the SVD of the tall J, for a fraction of the cost.
    _, sv, vt = np.linalg.svd(np.linalg.qr(jac, mode="r"), full_matrices=False)
    keep = sv > np.finfo(float).eps * max(jac.shape) * sv[0]
    cov = (vt[keep].T / sv[keep] ** 2) @ vt[keep] * tau  # times s² by the caller
    problems = []
    if not res.success:
        problems.append(f"{where}: band fit did not converge ({res.message})")
    for j in range(n_b):
        for name, idx in (("position", i_pos[j]), ("width", i_w[j, 0])):
            if res.active_mask[idx] != 0:
                problems.append(
                    f"{where}: band starting at {pos0[j]:.1f} cm-1 ended at a bound of its {name}; "
                    "check the starting positions and widths"
                )
    return WindowFit(
        window_cm1=(lo_x, hi_x),
        starts_cm1=pos0,
        start_fwhm_cm1=w0,
        index={"pos": i_pos, "w": i_w, "eta": i_eta, "area": i_area},
        params=p * scale,
        covariance=cov * np.outer(scale, scale),
        chi2=rr,
        n_rows=m,
        n_params=n_p,
        n_points=int(x.size),
        success=bool(res.success),
        message=str(res.message),
        problems=tuple(problems),
    )
