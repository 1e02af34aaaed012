"""Analytic Hessian of an SCF (RHF/RKS, or UHF/UKS for open shells), (3N, 3N) atom-major."""

from __future__ import annotations

import numpy as np


def analytic_hessian(mf) -> np.ndarray:
    """Cartesian Hessian of the SCF energy by PySCF's analytic second derivatives.

    Parameters
    ----------
    mf : converged pyscf RHF, RKS, UHF or UKS object (PySCF's ``hessian.uhf``/``uks`` for the
        unrestricted ones)

    Returns
    -------
    ndarray, shape (3N, 3N)
        ∂²E/∂x_i∂x_j in hartree bohr⁻², coordinates ordered (x1, y1, z1, x2, …).

    Notes
    -----
    PySCF returns the Hessian as (N, N, 3, 3) [atom i, atom j, xyz of i, xyz of j]; it is
    reordered here to (N, 3, N, 3) and flattened (Q. Sun et al., J. Chem. Phys. 153, 024109
    (2020)).
    """
    hess = mf.Hessian()
    hess.verbose = 0
    h4 = np.asarray(hess.kernel())
    n = h4.shape[0]
    h = h4.transpose(0, 2, 1, 3).reshape(3 * n, 3 * n)
    return 0.5 * (h + h.T)
