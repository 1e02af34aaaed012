"""Mode sets from objects in memory: ASE's VibrationsData, cclib's ccData, file objects, bytes.

* :func:`modes_from_ase_vibrations` and :func:`modes_to_ase_vibrations` convert between a
  :class:`~vibrapol.modeset.ModeSet` and an ``ase.vibrations.VibrationsData`` (a Hessian in
  eV Å⁻² and the ``ase.Atoms`` with their masses), so that ASE's tools (thermochemistry,
  animations, ``with_new_masses``) can use vibrapol's modes and the other way round;
* cclib's parsed data go through :func:`vibrapol.sources.cclib_generic.modes_from_ccdata`, the
  function the generic cclib reader uses;
* :func:`read_modes_from` is what :func:`vibrapol.sources.read_modes` does with anything that is
  not a path: the text of a file object or of bytes is sniffed and read by the same readers as
  a file on disk (:func:`vibrapol.textio.given_text`).
"""

from __future__ import annotations

import warnings
from pathlib import Path
from typing import Any

import numpy as np

from vibrapol.errors import AccuracyWarning, InputFormatError, VibrapolError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.units import HARTREE_BOHR2_TO_EV_ANG2
from vibrapol.vibrations import harmonic_analysis, hessian_from_modes, is_linear

#: Largest difference (cm⁻¹) between vibrapol's projected frequencies and ASE's own
#: ``get_frequencies`` that passes without a warning (it is always stated in a note).
ASE_FREQUENCY_TOL_CM1 = 1.0


def _masses_note(atoms: Any) -> str:
    if atoms.has("masses"):
        return "as set on the ase.Atoms"
    return (
        "ASE's defaults on the ase.Atoms (standard atomic weights, ase.data.atomic_masses), "
        "the masses ASE used for its frequencies"
    )


def _ase_frequencies(vib: Any) -> np.ndarray:
    """ASE's own frequencies (cm⁻¹), imaginary ones negative, ascending."""
    f = np.asarray(vib.get_frequencies())
    return np.sort(np.where(np.abs(f.imag) > np.abs(f.real), -np.abs(f.imag), f.real))


def modes_from_ase_vibrations(
    vib: Any,
    *,
    dalpha_dx: np.ndarray | None = None,
    polarizability_ang3: np.ndarray | None = None,
    source: str = "",
) -> ModeSet:
    """A :class:`ModeSet` from an ``ase.vibrations.VibrationsData``.

    The Hessian (eV Å⁻²) is converted to hartree bohr⁻² and analysed with the masses of the
    ``ase.Atoms`` (:func:`vibrapol.vibrations.harmonic_analysis`): overall translations and
    rotations are projected out, leaving 3N − 6 (3N − 5) vibrations.  ASE's own
    ``get_frequencies`` does not project; the largest difference from its 3N − 6 highest
    frequencies is stated in a provenance note (and warned when above
    :data:`ASE_FREQUENCY_TOL_CM1`: the Hessian is then far from translation and rotation
    invariant, e.g. not at a stationary point or from too large a step).

    Parameters
    ----------
    vib : ase.vibrations.VibrationsData
        With the Hessian of every atom (no frozen atoms).
    dalpha_dx : ndarray (3N, 3, 3), optional
        Cartesian polarizability derivatives in Å² for the same atoms and frame (ASE has
        none); without them the ModeSet has no Raman data.
    polarizability_ang3 : ndarray (3, 3), optional
    source : str
        Where the Hessian came from, for the provenance.

    Returns
    -------
    ModeSet
        Masses: those of the ``ase.Atoms`` (ASE's default masses are standard atomic weights,
        not vibrapol's most abundant isotopes; ``provenance.masses`` says which).

    Raises
    ------
    VibrapolError
        For a partial Hessian (frozen atoms) or an object that is not a VibrationsData.
    """
    if not (hasattr(vib, "get_hessian_2d") and hasattr(vib, "get_atoms")):
        raise VibrapolError(f"expected an ase.vibrations.VibrationsData, got {type(vib).__name__}")
    atoms = vib.get_atoms()
    n = len(atoms)
    indices = np.asarray(vib.get_indices())
    if len(np.unique(indices % max(n, 1))) != n:
        raise VibrapolError(
            f"the VibrationsData covers {len(indices)} of {n} atoms (a partial Hessian with "
            "frozen atoms); vibrapol needs the Hessian of every atom"
        )
    hessian_au = np.asarray(vib.get_hessian_2d(), dtype=float) / HARTREE_BOHR2_TO_EV_ANG2
    masses = np.asarray(atoms.get_masses(), dtype=float)
    coords = np.asarray(atoms.get_positions(), dtype=float)
    harmonic = harmonic_analysis(hessian_au, masses, coords)
    ase_top = _ase_frequencies(vib)[-harmonic.freqs_cm1.shape[0] :]
    diff = float(np.max(np.abs(ase_top - harmonic.freqs_cm1), initial=0.0))
    note = (
        "modes from an ASE VibrationsData Hessian (eV/Å²) with overall translations and "
        f"rotations projected out; largest difference from ASE's get_frequencies: {diff:.3g} cm-1"
    )
    if diff > ASE_FREQUENCY_TOL_CM1:
        warnings.warn(
            f"{source or 'VibrationsData'}: {note} (the Hessian is not translation and "
            "rotation invariant: not at a stationary point, or a rough finite difference)",
            AccuracyWarning,
            stacklevel=2,
        )
    provenance = Provenance(
        source_file=source,
        source_kind="ase-vibrations",
        program="ASE",
        masses=_masses_note(atoms),
        notes=(note,),
    )
    return ModeSet(
        atomic_numbers=atoms.get_atomic_numbers(),
        coordinates_ang=coords,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=masses,
        dalpha_dx=dalpha_dx,
        polarizability_ang3=polarizability_ang3,
        provenance=provenance,
    )


def modes_to_ase_vibrations(modes: ModeSet) -> Any:
    """An ``ase.vibrations.VibrationsData`` with the Hessian of ``modes``.

    The Cartesian Hessian is rebuilt from the frequencies and modes
    (:func:`vibrapol.vibrations.hessian_from_modes`, zero along overall translations and
    rotations) and converted to eV Å⁻²; the ``ase.Atoms`` carry the ModeSet's masses, so
    ``get_frequencies()`` gives the ModeSet's frequencies (and six, or five, zeros).  Raman
    tensors, IR intensities and the provenance have no place in a VibrationsData.

    Raises
    ------
    VibrapolError
        When the ModeSet does not hold every vibration (3N − 6, 3N − 5 for a linear molecule).
    """
    from ase import Atoms
    from ase.vibrations import VibrationsData

    masses = np.asarray(modes.masses_da, dtype=float)
    expected = 3 * modes.n_atoms - (5 if is_linear(modes.coordinates_ang, masses) else 6)
    if modes.n_atoms < 2 or modes.n_modes != expected:
        where = modes.provenance.source_file or "this mode set"
        raise VibrapolError(
            f"{where}: a VibrationsData needs all {max(expected, 0)} vibrations to rebuild the "
            f"Hessian, the source has {modes.n_modes}"
        )
    hessian = hessian_from_modes(modes.freqs_cm1, modes.modes, masses) * HARTREE_BOHR2_TO_EV_ANG2
    atoms = Atoms(numbers=modes.atomic_numbers, positions=modes.coordinates_ang, masses=masses)
    return VibrationsData.from_2d(atoms, hessian)


def _stream_name(source: Any) -> str:
    name = getattr(source, "name", None)
    if isinstance(name, str) and name:
        return name
    if isinstance(source, (bytes, bytearray, memoryview)):
        return "<bytes>"
    return "<file object>"


def read_modes_from(source: Any, kind: str | None = None) -> ModeSet:
    """:func:`vibrapol.sources.read_modes` for anything but a path (see there)."""
    from vibrapol.sources.cclib_generic import modes_from_ccdata
    from vibrapol.sources.registry import _read_with, readers, sniff_text
    from vibrapol.textio import given_text, reading_once, stream_text

    module = type(source).__module__ or ""
    if module.startswith("cclib"):
        return modes_from_ccdata(source)
    if hasattr(source, "get_hessian_2d") and hasattr(source, "get_atoms"):
        return modes_from_ase_vibrations(source)
    if hasattr(source, "get_atomic_numbers") and hasattr(source, "get_positions"):
        raise VibrapolError(
            "an ase.Atoms holds a structure but no vibrations: compute them with "
            "vibrapol.compute_modes(atoms), or pass an ase.vibrations.VibrationsData"
        )
    if not (isinstance(source, (bytes, bytearray, memoryview)) or hasattr(source, "read")):
        raise VibrapolError(
            f"read_modes takes a path, a file object, bytes, a cclib ccData or an ASE "
            f"VibrationsData, not {type(source).__name__}"
        )
    where = _stream_name(source)
    text = stream_text(source, where)
    name = kind or sniff_text(text)
    if name is None:
        from vibrapol.structure import looks_like_xyz

        if looks_like_xyz(text):
            raise InputFormatError(
                f"{where}: is a structure (XYZ) without normal modes; compute them first with "
                "vibrapol.compute_modes"
            )
        known = ", ".join(readers())
        raise InputFormatError(
            f"{where}: the kind of output could not be told from its content; pass "
            f"kind='...' to read_modes (known kinds: {known})"
        )
    with given_text(where, text), reading_once():
        return _read_with(name, Path(where))
