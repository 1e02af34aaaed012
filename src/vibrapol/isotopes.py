"""Other isotopes on the same molecule: new normal modes from the same force field."""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np

from vibrapol.errors import ChangedValuesWarning, ShapeError, VibrapolError
from vibrapol.modeset import ModeSet, _array
from vibrapol.vibrations import harmonic_analysis, hessian_from_modes


def modes_with_masses(modes: ModeSet, masses_da: np.ndarray | list[float]) -> ModeSet:
    """The implementation of :meth:`vibrapol.modeset.ModeSet.with_masses` (documented there)."""
    new = _array(masses_da, "masses_da", (modes.n_atoms,))
    if np.any(new <= 0):
        raise ShapeError("masses_da must all be positive")
    old = np.asarray(modes.masses_da, dtype=float)
    where = modes.provenance.source_file or "this mode set"
    if modes.dalpha_dx is None and (modes.has_activity or modes.dalpha_dq is not None):
        raise VibrapolError(
            f"{where}: new masses need the Cartesian derivatives ∂α/∂x; the Raman numbers "
            "of this source (∂α/∂Q, a², γ² or activities) belong to the old modes only"
        )
    hessian = hessian_from_modes(modes.freqs_cm1, modes.modes, old)
    harmonic = harmonic_analysis(hessian, new, modes.coordinates_ang)
    if harmonic.freqs_cm1.shape[0] != modes.n_modes:
        raise VibrapolError(
            f"{where}: new masses need all {harmonic.freqs_cm1.shape[0]} vibrations to "
            f"rebuild the Hessian, the source has {modes.n_modes}"
        )
    changed = [
        f"{modes.symbols[i]}{i + 1} {old[i]:.6g} → {new[i]:.6g}"
        for i in np.flatnonzero(~np.isclose(new, old, rtol=1e-9, atol=0.0))
    ]
    note = "masses changed (ModeSet.with_masses): frequencies and modes from the Hessian "
    note += "rebuilt from the source's modes"
    dropped = [
        name
        for name, value in (
            ("IR intensities", modes.ir_intensity_km_mol),
            ("the program's species labels", modes.program_irreps),
        )
        if value is not None
    ]
    if dropped:
        note += f"; {' and '.join(dropped)} dropped (they belong to the old modes)"
    warnings.warn(f"{where}: {note}", ChangedValuesWarning, stacklevel=3)
    provenance = dataclasses.replace(
        modes.provenance,
        masses="given: " + ("; ".join(changed) or "unchanged"),
        notes=(*modes.provenance.notes, note),
    )
    return dataclasses.replace(
        modes,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=new,
        provenance=provenance,
        ir_intensity_km_mol=None,
        program_irreps=None,
    )
