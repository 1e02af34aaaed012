"""The engine's settings: what every molecule of a run shares, with defaults, checked once.

:class:`EngineSettings` is the one place that lists the engine's keyword parameters, their
defaults and their checks; :func:`~vibrapol.engine.compute.compute_modes`,
:func:`~vibrapol.engine.compute.run_engine` and ``vibrapol compute`` build one and pass it on.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from vibrapol.engine.displacements import check_step
from vibrapol.engine.fieldplan import DEFAULT_FIELD_AU
from vibrapol.engine.routes import normalize_route
from vibrapol.engine.scf import DEFAULT_BASIS, DEFAULT_METHOD, MethodSpec
from vibrapol.errors import ShapeError

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
        Total charge and spin multiplicity (only 1 is supported).
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
    spec : MethodSpec
        The method, basis, charge, multiplicity and basis-function type together (derived).

    Raises
    ------
    ShapeError
        A step or field strength out of range.
    EngineInputError
        An unknown route.
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
    spec: MethodSpec = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        spec = MethodSpec(
            self.method,
            self.basis,
            int(self.charge),
            int(self.multiplicity),
            bool(self.cartesian_d),
        )
        check_step(self.step_ang)
        if not 0.0 < float(self.field_au) <= MAX_FIELD_AU:
            raise ShapeError(f"field strength must be in (0, 0.05] au, got {self.field_au}")
        route = normalize_route(self.route)
        values = {
            "spec": spec,
            "method": spec.method,
            "basis": spec.basis,
            "charge": spec.charge,
            "multiplicity": spec.multiplicity,
            "cartesian_d": spec.cartesian_d,
            "optimize": bool(self.optimize),
            "step_ang": float(self.step_ang),
            "route": route,
            "field_au": float(self.field_au),
            "symmetry": bool(self.symmetry),
        }
        for name, value in values.items():
            object.__setattr__(self, name, value)
