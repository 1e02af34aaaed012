"""The laser stage of a run: excitations of the reference, the resonance check, α(ω) there.

Runs when a laser wavelength is given (``--laser-nm``), before the reference Hessian, so that
a laser in resonance is refused before the expensive part.  Its result is checkpointed like
the other stages; the check and its warning are applied again on every run, reused or not.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from time import perf_counter

import numpy as np

from vibrapol.engine.checkpoint import CheckpointStore, task_key
from vibrapol.engine.dynamic import (
    HARTREE_EV,
    N_EXCITED_STATES,
    PRE_RESONANCE_MARGIN_EV,
    Excitations,
    PreResonanceWarning,
    dynamic_polarizability,
    excitation_energies,
    laser_omega_au,
    resonance_message,
)
from vibrapol.engine.scf import build_molecule, run_scf
from vibrapol.engine.settings import EngineSettings
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


def laser_reference(
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    settings: EngineSettings,
    store: CheckpointStore | None,
) -> LaserReference:
    """Excitations (and α(ω) when ``settings.dynamic``) at the reference geometry.

    Raises
    ------
    EngineInputError
        The laser is at or above the first excitation (resonance).

    Warns
    -----
    PreResonanceWarning
        The laser is within :data:`~vibrapol.engine.dynamic.PRE_RESONANCE_MARGIN_EV` of it.
    """
    assert settings.laser_nm is not None
    spec, dynamic = settings.spec, settings.dynamic
    key = task_key(
        "laser-reference",
        atomic_numbers,
        coordinates_ang,
        spec,
        laser_nm=settings.laser_nm,
        dynamic=dynamic,
        n_states=N_EXCITED_STATES,
    )
    stored = store.get(key) if store is not None else None
    if stored is not None:
        excitations = Excitations(
            stored["energies_ev"], stored["oscillator_strengths"], str(stored["method"])
        )
        alpha = stored["alpha_ang3"] if dynamic else None
        seconds = float(stored["seconds"])
    else:
        t0 = perf_counter()
        mol = build_molecule(atomic_numbers, coordinates_ang, spec)
        mf = run_scf(mol, spec)
        excitations = excitation_energies(mf)
        resonance_message(settings.laser_nm, excitations)  # refuse before computing α(ω)
        alpha = None
        if dynamic:
            alpha = dynamic_polarizability(mf, laser_omega_au(settings.laser_nm)) * BOHR3_TO_ANG3
        seconds = perf_counter() - t0
        if store is not None:
            arrays = {
                "energies_ev": excitations.energies_ev,
                "oscillator_strengths": excitations.oscillator_strengths,
                "method": excitations.method,
                "seconds": seconds,
            }
            if alpha is not None:
                arrays["alpha_ang3"] = alpha
            store.put(key, "laser-reference", "excitations and alpha at the laser", arrays, seconds)
    message = resonance_message(settings.laser_nm, excitations)
    if message is not None:
        warnings.warn(message, PreResonanceWarning, stacklevel=2)
    return LaserReference(settings.laser_nm, dynamic, excitations, alpha, message, seconds)
