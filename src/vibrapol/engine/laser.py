"""The laser stage of a run: excitations of the reference, the resonance check, α(ω) there.

Runs when a laser wavelength is given (``--laser-nm``), before the reference Hessian, so that
a laser in resonance is refused before the expensive part.  Its result is checkpointed like
the other stages; the check and its warning are applied again on every run, reused or not.
"""

from __future__ import annotations

from dataclasses import dataclass
from time import perf_counter
from typing import Any, ClassVar

import numpy as np

from vibrapol.engine.checkpoint import task_key
from vibrapol.engine.dynamic import (
    HARTREE_EV,
    N_EXCITED_STATES,
    PRE_RESONANCE_MARGIN_EV,
    Excitations,
    dynamic_polarizability,
    excitation_energies,
    laser_omega_au,
    resonance_message,
)
from vibrapol.engine.evaluate import threads_limited
from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf
from vibrapol.units import BOHR3_TO_ANG3


@dataclass(frozen=True, eq=False)
class LaserReference:
    """What the laser stage found at the reference geometry.

    Attributes
    ----------
    laser_nm : float
    dynamic : bool
        Whether α(ω) is used (else the static α, and the laser only enters the check).
    excitations : Excitations
    alpha_ang3 : ndarray (3, 3) or None
        α(−ω; ω) at the reference geometry in Å³ (None when static).
    warning : str or None
        The pre-resonance warning, when the laser is within the margin.
    seconds : float
    """

    laser_nm: float
    dynamic: bool
    excitations: Excitations
    alpha_ang3: np.ndarray | None
    warning: str | None
    seconds: float

    def notes(self) -> list[str]:
        """Provenance notes: which α, at which wavelength, and the excitations found."""
        photon = laser_omega_au(self.laser_nm) * HARTREE_EV
        if self.dynamic:
            alpha = (
                f"polarizability: dynamic alpha(-omega; omega) at the laser line "
                f"{self.laser_nm:g} nm (photon energy {photon:.4f} eV) by linear response "
                f"({self.excitations.method} kernel), at the reference and every displaced "
                "geometry (the field route, static by nature, is not used)"
            )
        else:
            alpha = (
                f"polarizability: static (omega = 0); the laser line {self.laser_nm:g} nm "
                f"({photon:.4f} eV) was used only to check the distance to the excitations"
            )
        notes = [
            alpha,
            f"{self.excitations.describe()}; pre-resonance margin "
            f"{PRE_RESONANCE_MARGIN_EV:g} eV below the first",
        ]
        if self.warning is not None:
            notes.append(f"warning: {self.warning}")
        return notes


@dataclass(frozen=True, eq=False)
class LaserJob:
    """The laser stage as a job: excitations (and α(ω) when ``dynamic``) at one geometry.

    ``run`` raises :class:`~vibrapol.engine.scf.EngineInputError` when the laser is at or above
    the first excitation (resonance); the pre-resonance warning travels in the result
    (:attr:`LaserReference.warning`), so that the client says it on every run, reused or not.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    spec: MethodSpec
    laser_nm: float
    dynamic: bool
    threads: int | None = None

    kind: ClassVar[str] = "laser-reference"

    @property
    def label(self) -> str:
        """Readable name of the stage."""
        return "excitation energies" + (" and alpha at the laser line" if self.dynamic else "")

    def key(self) -> str:
        """Checkpoint key (the wavelength and whether α(ω) is wanted are part of it)."""
        return task_key(
            "laser-reference",
            self.atomic_numbers,
            self.coordinates_ang,
            self.spec,
            laser_nm=self.laser_nm,
            dynamic=self.dynamic,
            n_states=N_EXCITED_STATES,
        )

    def run(self) -> LaserReference:
        """Excitations, the resonance check, and α(ω) at the laser line when wanted."""
        t0 = perf_counter()
        with threads_limited(self.threads):
            mol = build_molecule(self.atomic_numbers, self.coordinates_ang, self.spec)
            mf = run_scf(mol, self.spec)
            excitations = excitation_energies(mf)
            message = resonance_message(self.laser_nm, excitations)  # refuses at resonance
            alpha = None
            if self.dynamic:
                omega = laser_omega_au(self.laser_nm)
                alpha = dynamic_polarizability(mf, omega) * BOHR3_TO_ANG3
        seconds = perf_counter() - t0
        return LaserReference(self.laser_nm, self.dynamic, excitations, alpha, message, seconds)

    @staticmethod
    def pack(result: LaserReference) -> dict[str, Any]:
        """The arrays stored in the checkpoint."""
        arrays: dict[str, Any] = {
            "energies_ev": result.excitations.energies_ev,
            "oscillator_strengths": result.excitations.oscillator_strengths,
            "method": result.excitations.method,
        }
        if result.alpha_ang3 is not None:
            arrays["alpha_ang3"] = result.alpha_ang3
        return arrays

    def unpack(self, stored: dict[str, np.ndarray]) -> LaserReference | None:
        """The result from a checkpoint row (None when a field is missing)."""
        try:
            excitations = Excitations(
                stored["energies_ev"], stored["oscillator_strengths"], str(stored["method"])
            )
            alpha = stored["alpha_ang3"] if self.dynamic else None
        except KeyError:
            return None
        message = resonance_message(self.laser_nm, excitations)
        seconds = float(stored.get("seconds", 0.0))
        return LaserReference(self.laser_nm, self.dynamic, excitations, alpha, message, seconds)
