"""Implicit solvent: a polarizable continuum (IEF-PCM) around the molecule.

Which dielectric constant enters where
--------------------------------------
* **Ground state, geometry, Hessian: equilibrium solvation with the static ε.**  The SCF,
  the optimisation gradient and the analytic Hessian use PySCF's IEF-PCM with ε: the whole
  solvent (orientational and electronic polarization) is in equilibrium with the solute at
  every geometry.  PySCF's PCM Hessian includes the solvent response in its coupled-perturbed
  equations (``equilibrium_solvation=True`` there).
* **Polarizability: non-equilibrium solvation with the optical ε∞ = n².**  The Raman α is the
  response to the laser's optical field, far too fast for the solvent molecules to turn; only
  the solvent's electrons follow.  The slow part of the reaction field stays frozen at the
  ground state (it is part of the SCF's Fock operator) and the coupled-perturbed equations add
  the response of surface charges computed with ε∞ [1]_ [2]_.  Each displaced geometry of the
  Cartesian and normal-mode routes repeats both: an equilibrium ground state with ε at that
  geometry, then the non-equilibrium α.
* **The field route is refused with a solvent**: it differentiates gradients taken in static
  fields, where the whole solvent (ε) would respond, which is the static equilibrium α, not
  the optical one; ``auto`` leaves it out.

The check in the tests: α from :func:`response_function` equals the second field derivative
of the energy of a field-perturbed SCF whose slow charges are frozen at the zero-field ground
state and whose fast charges respond self-consistently with ε∞ (water, HF/STO-3G).

IEF-PCM rather than C-PCM: the integral-equation formalism treats a dielectric exactly, where
C-PCM scales conductor charges by (ε−1)/ε, and PySCF differentiates both to second order.

Solvent constants
-----------------
The static ε (298 K) and the refractive index n (sodium D line, 298 K) of every named solvent
are read from PySCF's copy of the Minnesota Solvent Descriptor Database (``n25`` and
``epsilon`` of ``pyscf.solvent.smd.solvent_db``; database by Winget, Dolney, Giesen, Cramer and
Truhlar, University of Minnesota), so no value here is typed from memory.

References
----------
.. [1] J. Tomasi, B. Mennucci and R. Cammi, Chem. Rev. 105, 2999 (2005) (continuum models;
   non-equilibrium response to optical fields).
.. [2] E. Cancès, B. Mennucci and J. Tomasi, J. Chem. Phys. 107, 3032 (1997) (IEF-PCM).
"""

from __future__ import annotations

from dataclasses import dataclass

#: The continuum model PySCF is given.
PCM_METHOD = "IEF-PCM"

#: Common solvents of Raman spectroscopy: our name → the database's name.
COMMON_SOLVENTS = {
    "water": "water",
    "methanol": "methanol",
    "ethanol": "ethanol",
    "acetonitrile": "acetonitrile",
    "acetone": "acetone",
    "dmso": "dimethylsulfoxide",
    "dimethylsulfoxide": "dimethylsulfoxide",
    "dmf": "N,N-dimethylformamide",
    "thf": "tetrahydrofuran",
    "tetrahydrofuran": "tetrahydrofuran",
    "chloroform": "chloroform",
    "dichloromethane": "dichloromethane",
    "ccl4": "carbon tetrachloride",
    "carbon-tetrachloride": "carbon tetrachloride",
    "cs2": "carbon disulfide",
    "carbon-disulfide": "carbon disulfide",
    "cyclohexane": "cyclohexane",
    "hexane": "n-hexane",
    "n-hexane": "n-hexane",
    "benzene": "benzene",
    "toluene": "toluene",
}

SOURCE = (
    "Minnesota Solvent Descriptor Database (epsilon at 298 K; n25, refractive index at 298 K), "
    "as shipped in pyscf.solvent.smd.solvent_db"
)


def _error(text: str) -> Exception:
    from vibrapol.engine.scf import EngineInputError

    return EngineInputError(text)


@dataclass(frozen=True)
class SolventModel:
    """A dielectric continuum: static and optical dielectric constants and where they came from.

    Attributes
    ----------
    name : str
        Solvent name (``""`` for constants given by the user).
    epsilon : float
        Static relative permittivity ε (ground state, geometry, Hessian).
    epsilon_optical : float
        Optical relative permittivity ε∞ = n² (the polarizability's fast response).
    source : str
        Where the constants came from.
    """

    name: str
    epsilon: float
    epsilon_optical: float
    source: str

    def label(self) -> str:
        """``water (IEF-PCM, ε 78.355, ε∞ 1.7750)`` for messages and provenance."""
        who = self.name or "dielectric"
        return f"{who} ({PCM_METHOD}, ε {self.epsilon:g}, ε∞ {self.epsilon_optical:.4f})"

    def key(self) -> list:
        """What a checkpoint key needs of the model."""
        return [PCM_METHOD, self.epsilon, self.epsilon_optical]


def known_solvents() -> list[str]:
    """Names accepted by :func:`solvent_model` (the common table; any database name too)."""
    return sorted(COMMON_SOLVENTS)


def solvent_model(
    name: str | None = None,
    epsilon: float | None = None,
    epsilon_optical: float | None = None,
) -> SolventModel | None:
    """The continuum of ``--solvent NAME`` or ``--epsilon E --epsilon-optical E∞`` (or None).

    Raises
    ------
    EngineInputError
        An unknown solvent, a name together with constants, ``--epsilon`` without
        ``--epsilon-optical`` (or the reverse), or constants out of range.
    """
    if name is not None and not name.strip():
        raise _error("--solvent is empty: give a solvent name such as water, or leave it out")
    if name is not None:
        if epsilon is not None or epsilon_optical is not None:
            raise _error("give --solvent NAME or --epsilon/--epsilon-optical, not both")
        from pyscf.solvent.smd import solvent_db

        wanted = name.strip()
        key = COMMON_SOLVENTS.get(wanted.lower())
        if key is None:
            by_lower = {k.lower(): k for k in solvent_db}
            key = by_lower.get(wanted.lower())
        if key is None:
            raise _error(
                f"unknown solvent {name!r}: use one of {', '.join(known_solvents())}, a name "
                "of the Minnesota solvent database, or --epsilon E --epsilon-optical N2"
            )
        n25, eps = solvent_db[key][1], solvent_db[key][5]
        return SolventModel(wanted.lower(), float(eps), float(n25) ** 2, SOURCE)
    if epsilon is None and epsilon_optical is None:
        return None
    if epsilon is None or epsilon_optical is None:
        raise _error(
            "--epsilon and --epsilon-optical go together: the ground state uses the static ε, "
            "the polarizability the optical ε∞ = n² (refractive index squared)"
        )
    eps, opt = float(epsilon), float(epsilon_optical)
    if not 1.0 < eps < 1e4:
        raise _error(f"--epsilon must be above 1 (vacuum) and below 1e4, got {epsilon}")
    if not 1.0 <= opt < 1e2:
        # Not bounded by ε: for non-polar liquids n² at the sodium D line can exceed the static
        # ε slightly (carbon disulfide in the database: n² 2.638, ε 2.611).
        raise _error(f"--epsilon-optical must lie between 1 and 100, got {epsilon_optical}")
    return SolventModel("", eps, opt, "given by the user")


def attach_pcm(mf, model: SolventModel):  # noqa: ANN001, ANN201
    """``mf`` wrapped in PySCF's IEF-PCM with the static ε (the optical ε∞ kept beside it).

    The continuum object is :class:`vibrapol.engine.pcm_cached.CachedPCM`: PySCF's model
    with the surface equations factorised once per geometry and the integrals kept.
    """
    from vibrapol.engine.pcm_cached import CachedPCM

    smf = mf.PCM(CachedPCM(mf.mol))
    smf.with_solvent.method = PCM_METHOD
    smf.with_solvent.eps = model.epsilon
    smf.with_solvent.verbose = 0
    smf.with_solvent._vibrapol_eps_optical = model.epsilon_optical  # read by response_function
    return smf


def optical_solvent(mf):  # noqa: ANN001, ANN201
    """A copy of ``mf``'s PCM with ε∞ in place of ε, on the same surface."""
    slow = mf.with_solvent
    if hasattr(slow, "optical_copy"):  # CachedPCM: shares the surface and its integrals
        return slow.optical_copy(slow._vibrapol_eps_optical)
    fast = slow.copy()
    fast.reset()
    fast.eps = slow._vibrapol_eps_optical
    fast.build()
    return fast


def response_function(mf):  # noqa: ANN001, ANN201
    """The response function of the polarizability's coupled-perturbed equations.

    For a molecule in vacuum, ``mf.gen_response(hermi=1)``.  Restricted and unrestricted
    (UHF/UKS: densities of shape (2, …)) alike.  With a continuum (see the module
    notes): the gas-phase response plus the response of the fast surface charges computed
    with ε∞; PySCF's own ``gen_response`` of a PCM object leaves the solvent out (its default
    ``equilibrium_solvation=False``) or, switched on, would use the static ε.
    """
    if getattr(mf, "with_solvent", None) is None:
        return mf.gen_response(hermi=1)
    if not hasattr(mf.with_solvent, "_vibrapol_eps_optical"):
        raise _error("a solvated SCF without an optical dielectric constant (internal error)")
    gas = mf.undo_solvent().gen_response(hermi=1)
    fast = optical_solvent(mf)
    if mf.istype("UHF"):  # the surface charges answer the total density, the same for α and β

        def vind_u(dm1):  # noqa: ANN001, ANN202
            return gas(dm1) + fast._B_dot_x(dm1[0] + dm1[1])

        return vind_u

    def vind(dm1):  # noqa: ANN001, ANN202
        return gas(dm1) + fast._B_dot_x(dm1)

    return vind


def solvent_note(model: SolventModel) -> str:
    """The provenance line of a solvated run."""
    from vibrapol.modeset import SOLVENT_NOTE_PREFIX

    return (
        f"{SOLVENT_NOTE_PREFIX}{model.label()}; constants: {model.source}. Ground state, "
        "optimisation and analytic Hessian in equilibrium with the static ε; polarizability "
        "(and its derivatives) non-equilibrium: slow reaction field frozen at the ground "
        "state, fast surface charges with the optical ε∞ in the coupled-perturbed equations; "
        "no local-field (cavity-field) correction of intensities"
    )


def check_solvent_route(route: str, model: SolventModel | None) -> None:
    """Refuse the field route with a solvent (see the module notes); other routes pass."""
    if model is not None and route == "field":
        raise _error(
            "the field route cannot run with a solvent: its static fields would polarize the "
            "whole solvent (ε), not only its electrons (ε∞) as the laser does; use --route "
            "cartesian, normal or auto"
        )


def allowed_routes(routes: tuple[str, ...], model: SolventModel | None) -> tuple[str, ...]:
    """The routes ``auto`` may choose from: all of them, or without ``field`` with a solvent."""
    return routes if model is None else tuple(r for r in routes if r != "field")
