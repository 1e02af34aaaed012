"""Displaced geometries for ∂α by central differences, and the derivatives from their α.

Two routes, each a list of independent tasks (one SCF + one α per displaced geometry):

* **Cartesian**: every coordinate x_i of every atom moved by ±h (6N tasks); gives the full
  ∂α/∂x (3N, 3, 3), from which ∂α/∂Q follows by projection.
* **Normal-mode**: every vibrational mode followed by ±h in Cartesian length (2·n_modes
  tasks); gives ∂α/∂Q (n_modes, 3, 3) directly.

Central differences: f′(x) = [f(x+h) − f(x−h)]/(2h) + O(h²) (e.g. W. H. Press et al.,
*Numerical Recipes*, 3rd ed., Cambridge (2007), §5.7).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vibrapol.errors import ShapeError


@dataclass(frozen=True, eq=False)
class DisplacementPlan:
    """The displaced geometries of one route, in (+h, −h) pairs.

    Attributes
    ----------
    route : str
        ``"cartesian"`` or ``"normal-mode"``.
    step_ang : float
        Displacement h in Å (Cartesian length of each displacement).
    coordinates_ang : ndarray, shape (n_tasks, N, 3)
        Geometry of each task; task 2k is +h and 2k+1 is −h along coordinate or mode k.
    labels : tuple of str
        A readable name per task (``"x3+"``: atom 1's z coordinate … ; ``"q2-"``: mode 2).
    scale : ndarray, shape (n_tasks // 2,)
        Factor turning [α(+h) − α(−h)]/(2h) into the derivative: 1 for Cartesians,
        |L_k/√m| (Da⁻¹ᐟ²) for mode k, since ΔQ_k = h/|L_k/√m|.
    """

    route: str
    step_ang: float
    coordinates_ang: np.ndarray
    labels: tuple[str, ...]
    scale: np.ndarray

    @property
    def n_tasks(self) -> int:
        """Number of displaced geometries."""
        return int(self.coordinates_ang.shape[0])


def check_step(step_ang: float) -> float:
    """The step as a float; raises :class:`ShapeError` outside (0, 0.1] Å."""
    step = float(step_ang)
    if not (0.0 < step <= 0.1):
        raise ShapeError(f"displacement step must be in (0, 0.1] Å, got {step_ang}")
    return step


def cartesian_plan(coordinates_ang: np.ndarray, step_ang: float) -> DisplacementPlan:
    """±h along each of the 3N Cartesian coordinates."""
    x0 = np.asarray(coordinates_ang, dtype=float)
    step = check_step(step_ang)
    n = x0.shape[0]
    coords, labels = [], []
    for i in range(3 * n):
        for sign, mark in ((1.0, "+"), (-1.0, "-")):
            x = x0.copy()
            x.reshape(-1)[i] += sign * step
            coords.append(x)
            labels.append(f"x{i + 1}{mark}")
    return DisplacementPlan("cartesian", step, np.array(coords), tuple(labels), np.ones(3 * n))


def normal_mode_plan(
    coordinates_ang: np.ndarray, modes: np.ndarray, masses_da: np.ndarray, step_ang: float
) -> DisplacementPlan:
    """±h (Cartesian length) along the displacement L_k/√m of each normal mode."""
    x0 = np.asarray(coordinates_ang, dtype=float)
    step = check_step(step_ang)
    inv_sqrt_m = np.repeat(1.0 / np.sqrt(np.asarray(masses_da, dtype=float)), 3)
    cart = np.asarray(modes, dtype=float) * inv_sqrt_m[None, :]
    norms = np.linalg.norm(cart, axis=1)
    coords, labels = [], []
    for k, d in enumerate(cart / norms[:, None]):
        for sign, mark in ((1.0, "+"), (-1.0, "-")):
            coords.append(x0 + sign * step * d.reshape(x0.shape))
            labels.append(f"q{k + 1}{mark}")
    return DisplacementPlan("normal-mode", step, np.array(coords), tuple(labels), norms)


def central_differences(plan: DisplacementPlan, alphas_ang3: np.ndarray) -> np.ndarray:
    """Derivatives of α from the α of every task of ``plan``.

    Parameters
    ----------
    plan : DisplacementPlan
    alphas_ang3 : ndarray, shape (n_tasks, 3, 3)
        α at each displaced geometry, in Å³, in the order of the plan.

    Returns
    -------
    ndarray, shape (n_tasks // 2, 3, 3)
        ∂α/∂x in Å² (Cartesian route) or ∂α/∂Q in Å² Da⁻¹ᐟ² (normal-mode route).
    """
    a = np.asarray(alphas_ang3, dtype=float)
    if a.shape != (plan.n_tasks, 3, 3):
        raise ShapeError(
            f"need α for {plan.n_tasks} tasks as ({plan.n_tasks}, 3, 3), got {a.shape}"
        )
    pairs = a.reshape(-1, 2, 3, 3)
    deriv = (pairs[:, 0] - pairs[:, 1]) / (2.0 * plan.step_ang)
    return deriv * plan.scale[:, None, None]
