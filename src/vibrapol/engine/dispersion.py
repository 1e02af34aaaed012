"""Empirical dispersion corrections given as a suffix of the method: ``b3lyp-d3bj``, ``hf-d4``.

PySCF (with the ``pyscf-dispersion`` package, which wraps the simple-dftd3 and dftd4
libraries) adds the correction to the SCF energy, to the analytic gradient and to the Hessian.
The correction depends on the geometry only (D4's charges come from the geometry too), so it
does not change the density, the polarizability or its derivatives directly; it changes the
optimised geometry, the Hessian and so the modes.

PySCF's dispersion Hessian is not analytic: it is central differences of the library's
analytic dispersion gradient with a step of 1e-5 bohr (``pyscf.hessian.dispersion``); the
tests check the engine's Hessian against central differences of the full analytic gradient.

Suffixes (the method name PySCF and the libraries use):

========== ======================================================================
``-d3``     read as ``-d3zero``: D3 with zero damping, the original D3 [1]_ (recorded)
``-d3zero`` D3, zero damping [1]_
``-d3bj``   D3, Becke–Johnson (rational) damping [2]_
``-d3bjm``, ``-d3zerom`` the modified damping variants
``-d3op``   D3, optimised power damping
``-d4``     D4, with its three-body term [3]_
========== ======================================================================

D3 is two-body only (no Axilrod–Teller–Muto term), PySCF's default.

References
----------
.. [1] S. Grimme, J. Antony, S. Ehrlich and H. Krieg, J. Chem. Phys. 132, 154104 (2010).
.. [2] S. Grimme, S. Ehrlich and L. Goerigk, J. Comput. Chem. 32, 1456 (2011).
.. [3] E. Caldeweyher et al., J. Chem. Phys. 150, 154122 (2019).
"""

from __future__ import annotations

import re
import warnings
from functools import lru_cache

from vibrapol.errors import VibrapolWarning

#: Accepted suffixes and the dispersion version PySCF is given for each.
SUFFIXES = {
    "d3": "d3zero",
    "d3zero": "d3zero",
    "d3bj": "d3bj",
    "d3bjm": "d3bjm",
    "d3zerom": "d3zerom",
    "d3op": "d3op",
    "d4": "d4",
}

_SUFFIX = re.compile(r"^(?P<base>.+?)-(?P<disp>d\d\w*)$")


def split_dispersion(method: str) -> tuple[str, str | None]:
    """``(base method, dispersion suffix as written)``; the suffix is None when there is none.

    >>> split_dispersion("b3lyp-d3bj")
    ('b3lyp', 'd3bj')
    >>> split_dispersion("pbe0")
    ('pbe0', None)
    """
    m = _SUFFIX.match(method.strip().lower())
    if m is None:
        return method.strip().lower(), None
    return m.group("base"), m.group("disp")


def normalize_method(method: str) -> str:
    """The method name with its dispersion suffix in canonical form (``-d3`` → ``-d3zero``).

    Raises
    ------
    EngineInputError
        An unknown suffix (``-d5``, ``-d3xyz``).

    Warns
    -----
    VibrapolWarning
        For ``-d3``: it is read as D3 with zero damping, said in one line.
    """
    from vibrapol.engine.scf import EngineInputError

    base, suffix = split_dispersion(method)
    if suffix is None:
        return method.strip().lower()
    if suffix not in SUFFIXES:
        raise EngineInputError(
            f"unknown dispersion correction '-{suffix}' in --method {method!r}: use one of "
            + ", ".join(f"-{s}" for s in SUFFIXES)
        )
    if suffix == "d3":
        warnings.warn(
            f"--method {method!r}: '-d3' is read as D3 with zero damping (the original D3, "
            f"'{base}-d3zero'); use '{base}-d3bj' for Becke–Johnson damping",
            VibrapolWarning,
            stacklevel=3,
        )
    return f"{base}-{SUFFIXES[suffix]}"


def dispersion_version(method: str) -> str | None:
    """The dispersion version of a normalised method name (``"d3bj"``), or None."""
    return split_dispersion(method)[1]


@lru_cache(maxsize=64)
def check_dispersion(method: str) -> None:
    """Raise :class:`EngineInputError` unless the libraries have parameters for ``method``.

    Evaluated once on H2 with the library itself, so that a functional without parameters
    (``lda-d3bj``) or a missing ``pyscf-dispersion`` installation is reported before any SCF.
    """
    from vibrapol.engine.scf import EngineInputError

    base, version = split_dispersion(method)
    if version is None:
        return
    try:
        from pyscf import gto
        from pyscf.dispersion import dftd3, dftd4
    except ImportError as exc:
        raise EngineInputError(
            f"--method {method!r} needs the pyscf-dispersion package (pip install pyscf-dispersion)"
        ) from exc
    xc = "hf" if base in ("hf", "rhf", "scf") else base
    mol = gto.M(atom="H 0 0 0; H 0 0 0.74", basis="sto-3g", verbose=0)
    try:
        if version.startswith("d3"):
            dftd3.DFTD3Dispersion(mol, xc=xc, version=version, atm=False).get_dispersion()
        else:
            dftd4.DFTD4Dispersion(mol, xc=xc, atm=True).get_dispersion()
    except Exception as exc:  # noqa: BLE001 - the libraries raise RuntimeError with their text
        raise EngineInputError(
            f"no {version.upper()} parameters for {base!r} in the dispersion library "
            f"({exc}); use a functional it knows (e.g. b3lyp, pbe0, pbe) or drop the suffix"
        ) from exc


def dispersion_note(method: str) -> str | None:
    """One provenance line for a (normalised) method with a dispersion suffix, else None."""
    base, version = split_dispersion(method)
    if version is None:
        return None
    library = "dftd4" if version == "d4" else "simple-dftd3"
    body = "with the three-body term" if version == "d4" else "two-body (no three-body term)"
    text = (
        f"dispersion correction {version.upper()} ({library} via pyscf-dispersion, {body}) "
        f"added to the {base.upper()} energy, gradient and Hessian; its Hessian is PySCF's "
        "central difference of the analytic dispersion gradient (step 1e-5 bohr)"
    )
    if version == "d3zero":
        text += "; zero damping, the original D3 ('-d3' is read as this; -d3bj for BJ damping)"
    return text
