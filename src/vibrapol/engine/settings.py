"""The engine's settings: what every molecule of a run shares, with defaults, checked once.

:class:`EngineSettings` is the one place that lists the engine's keyword parameters, their
defaults and their checks; :func:`~vibrapol.engine.compute.compute_modes`,
:func:`~vibrapol.engine.compute.run_engine` and ``vibrapol compute`` build one and pass it on.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from vibrapol.engine.displacements import check_step
from vibrapol.engine.fieldplan import DEFAULT_FIELD_AU
from vibrapol.engine.optimize import DEFAULT_OPTIMIZER, normalize_optimizer
from vibrapol.engine.routes import normalize_route
from vibrapol.engine.scf import DEFAULT_BASIS, DEFAULT_METHOD, MethodSpec
from vibrapol.errors import OptionError, ShapeError

#: Default displacement (Å): activities change ≤ 3e-4 relative between 0.001 and 0.01 Å with
#: errors ∝ h², so 0.005 Å is far from both truncation and SCF noise.
DEFAULT_STEP_ANG = 0.005

#: Largest field strength of the field route, atomic units.
MAX_FIELD_AU = 0.05


@dataclass(frozen=True)
class EngineSettings:
    """What every molecule of a run shares, checked and normalised on creation.

    The fields are the engine parameters of :func:`~vibrapol.engine.compute.compute_modes`.

    Attributes
    ----------
    method, basis : str
        Electronic-structure method and basis set (stored lower case).
    charge, multiplicity : int
        Total charge and spin multiplicity (1: RHF/RKS; 2, 3 …: UHF/UKS).
    optimize : bool
        Minimise the energy first.
    step_ang : float
        Displacement of the Cartesian, normal-mode and displacement routes, in (0, 0.1] Å.
    route : str
        ``auto``, ``cartesian``, ``normal-mode``, ``field`` or ``displacement`` (``normal``
        is accepted for ``normal-mode``).
    field_au : float
        Field strength of the field route, in (0, 0.05] au.
    symmetry : bool
        Find the point group, impose it on the geometry and use it to cut the tasks.
    cartesian_d : bool
        Cartesian (6d) instead of spherical basis functions.
    optimizer : str
        ``internal`` (geomeTRIC, the default) or ``cartesian-bfgs`` (ASE BFGS), see
        :mod:`vibrapol.engine.optimize`.
    solvent : str, optional
        Implicit solvent by name (:mod:`vibrapol.engine.solvent`); None: vacuum.
    epsilon, epsilon_optical : float, optional
        Static and optical dielectric constants of a solvent not named (both or neither).
    laser_nm : float or None
        Laser wavelength in nm: the lowest excitation energies of the reference are computed
        and a laser near or above the first one is warned about or refused
        (:mod:`vibrapol.engine.dynamic`).
    dynamic : bool
        Use α(−ω; ω) at ``laser_nm`` instead of the static α (Cartesian and normal-mode routes
        only; closed shell).
    density_fit : bool
        Density-fitted integrals in every SCF, gradient, Hessian and CPHF of the run.
    auxbasis : str or None
        Auxiliary basis of the fit (None: PySCF's choice); only with ``density_fit``.
    spec : MethodSpec
        The method, basis, charge, multiplicity, basis-function type and density fitting
        together (derived).

    Raises
    ------
    ShapeError
        A step or field strength out of range.
    EngineInputError
        An unknown route or optimiser.
    OptionError
        ``dynamic`` without ``laser_nm`` or with the field route; ``laser_nm`` out of range
        or for an open shell.
    """

    method: str = DEFAULT_METHOD
    basis: str = DEFAULT_BASIS
    charge: int = 0
    multiplicity: int = 1
    optimize: bool = True
    step_ang: float = DEFAULT_STEP_ANG
    route: str = "cartesian"
    field_au: float = DEFAULT_FIELD_AU
    symmetry: bool = True
    cartesian_d: bool = False
    optimizer: str = DEFAULT_OPTIMIZER
    solvent: str | None = None
    epsilon: float | None = None
    epsilon_optical: float | None = None
    laser_nm: float | None = None
    dynamic: bool = False
    density_fit: bool = False
    auxbasis: str | None = None
    spec: MethodSpec = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        from vibrapol.engine.solvent import check_solvent_route, solvent_model

        spec = MethodSpec(
            self.method,
            self.basis,
            int(self.charge),
            int(self.multiplicity),
            bool(self.cartesian_d),
            solvent=solvent_model(self.solvent, self.epsilon, self.epsilon_optical),
            density_fit=bool(self.density_fit),
            auxbasis=self.auxbasis,
        )
        check_step(self.step_ang)
        if not 0.0 < float(self.field_au) <= MAX_FIELD_AU:
            raise ShapeError(f"field strength must be in (0, 0.05] au, got {self.field_au}")
        route = normalize_route(self.route)
        check_solvent_route(route, spec.solvent)
        laser_nm = check_dynamic(self.laser_nm, bool(self.dynamic), route, spec.multiplicity)
        if route == "analytic":
            from vibrapol.engine.analyticroute import analytic_unsupported

            why = analytic_unsupported(spec, bool(self.dynamic))
            if why is not None:
                raise OptionError(
                    f"the analytic route cannot run here: {why}; use --route field, cartesian "
                    "or auto"
                )
        if route == "displacement" and (self.dynamic or spec.solvent is not None):
            raise OptionError(
                "the displacement route computes the static polarizability in vacuum only; "
                "with --dynamic or --solvent use --route cartesian, normal or auto"
            )
        if laser_nm is not None and spec.solvent is not None:
            # PySCF's time-dependent response of a PCM uses a fixed optical dielectric constant
            # (1.78), not the solvent's: the excitations and α(ω) would be silently wrong.
            raise OptionError(
                "--laser-nm/--dynamic cannot be combined with a solvent yet (the excitation "
                "energies and dynamic polarizability in PCM are not implemented); use the static "
                "polarizability in solution, or --laser-nm without --solvent"
            )
        values = {
            "spec": spec,
            "method": spec.method,
            "basis": spec.basis,
            "charge": spec.charge,
            "multiplicity": spec.multiplicity,
            "cartesian_d": spec.cartesian_d,
            "density_fit": spec.density_fit,
            "auxbasis": spec.auxbasis,
            "optimize": bool(self.optimize),
            "step_ang": float(self.step_ang),
            "route": route,
            "field_au": float(self.field_au),
            "symmetry": bool(self.symmetry),
            "optimizer": normalize_optimizer(self.optimizer),
            "laser_nm": laser_nm,
            "dynamic": bool(self.dynamic),
        }
        for name, value in values.items():
            object.__setattr__(self, name, value)

    @property
    def omega_au(self) -> float | None:
        """Photon energy of the laser in hartree when α(ω) is wanted, else None (static α)."""
        if not self.dynamic or self.laser_nm is None:
            return None
        from vibrapol.engine.dynamic import laser_omega_au

        return laser_omega_au(self.laser_nm)


def check_dynamic(
    laser_nm: float | None, dynamic: bool, route: str, multiplicity: int
) -> float | None:
    """The laser wavelength (nm, or None), checked together with ``dynamic`` and the route."""
    if laser_nm is not None:
        from vibrapol.measured.axis import LASER_NM_RANGE  # the range every command accepts

        try:
            value = float(laser_nm)
        except (TypeError, ValueError) as exc:
            raise OptionError(f"laser wavelength {laser_nm!r} is not a number (nm)") from exc
        lo, hi = LASER_NM_RANGE
        if not lo <= value <= hi:
            raise OptionError(f"laser wavelength {value:g} nm is outside {lo:g}–{hi:g} nm")
        laser_nm = value
        if multiplicity != 1:
            raise OptionError(
                "--laser-nm (excitation energies, dynamic α) is for closed-shell molecules "
                "(multiplicity 1) only"
            )
    if not dynamic:
        return laser_nm
    if laser_nm is None:
        raise OptionError("--dynamic needs --laser-nm: the wavelength at which α is computed")
    if route == "field":
        raise OptionError(
            "the field route gives the static polarizability only (its fields do not oscillate); "
            "with --dynamic use --route cartesian, normal or auto"
        )
    return laser_nm
