"""Effective core potentials that belong to a basis set (def2, LANL2DZ, the -PP sets).

A basis set built for an effective core potential (ECP) describes the valence electrons only;
without its ECP the atom has the wrong number of electrons and a meaningless energy.  PySCF's
library stores such ECPs under the basis set's own name, so the engine gives PySCF the ECP of
the same name for every element that has one (def2: Rb onwards, 28 core electrons for 4d/5p
elements, F. Weigend and R. Ahlrichs, Phys. Chem. Chem. Phys. 7, 3297 (2005)), and records
which elements got one and how many core electrons it replaces.

PySCF differentiates ECP integrals to second order (gradients and Hessians, Q. Sun et al.,
J. Chem. Phys. 153, 024109 (2020)); the ECP does not enter the dipole integrals, so the
coupled-perturbed α and the field route's dipole-derivative terms need nothing extra (checked
in the tests: HI with def2-SVP, field and Cartesian routes agree).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from vibrapol.engine.quiet import quiet_streams


@lru_cache(maxsize=256)
def _ecp_core(basis: str, symbol: str) -> int:
    from pyscf.gto import basis as library

    with quiet_streams():  # PySCF prints what it cannot find; this thread only
        try:
            ecp = library.load_ecp(basis, symbol)
        except RuntimeError:  # PySCF: no ECP data of that name, an all-electron basis
            return 0
    return int(ecp[0]) if ecp else 0


def ecp_core_electrons(basis: str, atomic_numbers: np.ndarray) -> dict[str, int]:
    """Element symbol → core electrons replaced by the ECP named like ``basis`` (only > 0)."""
    from pyscf.data.elements import ELEMENTS

    found = {}
    for z in sorted({int(v) for v in np.asarray(atomic_numbers).ravel()}):
        n = _ecp_core(basis, ELEMENTS[z])
        if n > 0:
            found[ELEMENTS[z]] = n
    return found


def ecp_note(basis: str, atomic_numbers: np.ndarray) -> str | None:
    """The provenance line naming the ECPs used (None for an all-electron calculation)."""
    found = ecp_core_electrons(basis, atomic_numbers)
    if not found:
        return None
    parts = ", ".join(f"{s} ({n} core electrons)" for s, n in found.items())
    return f"effective core potential {basis} on {parts}; the other atoms all-electron"
