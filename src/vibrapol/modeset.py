"""The :class:`ModeSet`: one molecule's vibrational modes and Raman tensors, immutable.

Every source (quantum-chemistry output, the embedded engine, vibrapol's own JSON) produces a
``ModeSet``; every later step reads one.  Units are fixed inside the package (design.md):
Å, Da, cm⁻¹, Å³ for α, Å² for ∂α/∂x and Å² Da⁻¹ᐟ² for ∂α/∂Q.
"""

from __future__ import annotations

import dataclasses
import re
import weakref
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from ase.data import atomic_masses_common, chemical_symbols

from vibrapol.errors import ShapeError

#: Where the default masses come from (recorded in provenance when they are used).
DEFAULT_MASSES_NOTE = "most abundant isotope of each element (ase.data.atomic_masses_common)"

#: Tolerance for |LLᵀ − I| when checking that normal modes are orthonormal.
ORTHONORMAL_TOL = 1e-3

#: Largest |wavenumber| accepted: far above any molecular fundamental (the highest, the H₂
#: stretch, is near 4160 cm⁻¹; common practice) and above any imaginary mode of a saddle point.
MAX_FREQUENCY_CM1 = 1.0e5

#: Largest magnitude accepted in any other array.  No quantity in vibrapol's units comes near
#: it; larger numbers are a damaged file, and their squares overflow in later steps.
MAX_ABS_VALUE = 1.0e30

#: Largest difference between a ``dalpha_dq`` given together with ``dalpha_dx`` and the one
#: derived from ``dalpha_dx``, relative to the largest |∂α/∂Q|: above it the two disagree.
DERIVED_DQ_RTOL = 1e-6


class _Derivation:
    """A ∂α/∂Q a ModeSet derived, with the very arrays (modes, masses) it was derived from."""

    __slots__ = ("dalpha_dq", "masses_da", "modes", "__weakref__")

    def __init__(self, dalpha_dq: np.ndarray, modes: np.ndarray, masses_da: Any) -> None:
        self.dalpha_dq, self.modes, self.masses_da = dalpha_dq, modes, masses_da


# Derivations alive (each ModeSet holds its own), by id of the ∂α/∂Q array.
# ``dataclasses.replace`` hands a derived ∂α/∂Q back to the constructor as if given; recognising
# it lets the new ModeSet derive it again from its own inputs instead of keeping a stale copy.
_DERIVED_DQ: weakref.WeakValueDictionary[int, _Derivation] = weakref.WeakValueDictionary()


def default_masses(atomic_numbers: np.ndarray) -> np.ndarray:
    """Mass of the most abundant isotope of each element, in Da."""
    try:
        z = np.asarray(atomic_numbers, dtype=int)
    except (OverflowError, TypeError, ValueError):
        raise ShapeError("atomic numbers must be whole numbers between 1 and 118") from None
    if np.any(z < 1) or np.any(z >= len(atomic_masses_common)):
        raise ShapeError(f"atomic numbers must be between 1 and 118, got {sorted(set(z.tolist()))}")
    masses = atomic_masses_common[z]
    if np.any(~np.isfinite(masses)):
        bad = sorted({chemical_symbols[i] for i in z[~np.isfinite(masses)]})
        raise ShapeError(
            f"no default isotope mass for {', '.join(bad)}; give the masses explicitly"
        )
    return np.array(masses, dtype=float)


def _are_default_masses(atomic_numbers: np.ndarray, masses_da: np.ndarray) -> bool:
    try:
        return bool(np.array_equal(default_masses(atomic_numbers), masses_da))
    except ShapeError:  # no default mass for some element
        return False


#: How the engine's provenance note on an implicit solvent begins.
SOLVENT_NOTE_PREFIX = "solvent: "


@dataclass(frozen=True)
class Provenance:
    """Where a :class:`ModeSet` came from.

    Attributes
    ----------
    source_file : str
        File the data was read from ('' when computed in memory).
    source_kind : str
        Name of the reader (or ``"engine"``).
    program, program_version : str
        Quantum-chemistry program and version when known.
    method, basis : str
        Electronic-structure method and basis set when known.
    masses : str
        Where the atomic masses came from.
    notes : tuple of str
        Anything else a reader of the results should know (conversions made, quirks handled).
    raman_scale : {"absolute", "relative"}
        ``"absolute"`` (default): a², γ² and activities are in Å⁴ Da⁻¹.  ``"relative"``: the
        source printed only relative intensities, so a², γ² and activities share one unknown
        factor (the most active mode is set to 100); ratios are right, absolute cross sections
        are not available.  Tables and spectra must say so in their headers.
    """

    source_file: str = ""
    source_kind: str = ""
    program: str = ""
    program_version: str = ""
    method: str = ""
    basis: str = ""
    masses: str = ""
    notes: tuple[str, ...] = ()
    raman_scale: str = "absolute"

    def __post_init__(self) -> None:
        if self.raman_scale not in ("absolute", "relative"):
            raise ShapeError(
                f"raman_scale must be 'absolute' or 'relative', got {self.raman_scale!r}"
            )

    def with_note(self, note: str) -> Provenance:
        """Return a copy with one more note."""
        return dataclasses.replace(self, notes=(*self.notes, note))

    def level_of_theory(self) -> str:
        """``method/basis``, followed by the engine's solvent, open shell, fit and ECPs.

        E.g. ``HF/6-31g* in water (IEF-PCM, ε 78.355, ε∞ 1.7750)`` or ``UHF/sto-3g,
        multiplicity 2 (<S^2> 0.7652), density fitting (def2-svp-jkfit)``: what tables and
        figures print as the method (:func:`engine_model_tags`).
        """
        text = "/".join(x for x in (self.method, self.basis) if x)
        for note in self.notes:
            if note.startswith(SOLVENT_NOTE_PREFIX):
                text += f" in {note[len(SOLVENT_NOTE_PREFIX) :].split(';')[0]}"
                break
        return ", ".join([text, *engine_model_tags(self.notes)])


#: Engine provenance notes that change the model or its numbers, and the short words that say so
#: after the level of theory (notes written by vibrapol.engine.openshell.spin_note,
#: vibrapol.engine.scf.integral_notes, vibrapol.engine.ecp.ecp_note and vibrapol.engine.laser).
_MODEL_NOTES = (
    (
        re.compile(r"^open shell, multiplicity (\d+) .*?<S\^2> = ([0-9.]+)"),
        lambda m: f"multiplicity {m.group(1)} (<S^2> {m.group(2)})",
    ),
    (
        re.compile(r"^density fitting \(PySCF density_fit\).*?; auxiliary basis ([^;]+);"),
        lambda m: f"density fitting ({m.group(1).rsplit(': ', 1)[-1]})",
    ),
    (
        re.compile(r"^effective core potential \S+ on (.+?); the other atoms"),
        lambda m: "ECP on " + re.sub(r" \(\d+ core electrons\)", "", m.group(1)),
    ),
    (  # vibrapol.engine.laser: the polarizability at the laser line
        re.compile(r"^polarizability: dynamic alpha\(-omega; omega\) at the laser line ([0-9.]+) "),
        lambda m: f"alpha at {float(m.group(1)):g} nm",
    ),
)


def engine_model_tags(notes: tuple[str, ...]) -> list[str]:
    """Short words for the open shell (⟨S²⟩), density fitting, ECPs and dynamic α in the notes.

    E.g. ``["multiplicity 2 (<S^2> 0.7652)", "density fitting (def2-universal-jkfit)",
    "ECP on I", "alpha at 532 nm"]``: what :meth:`Provenance.level_of_theory` adds, so that
    every table header and spectrum's conditions (files and figures) show them.
    """
    tags = []
    for pattern, words in _MODEL_NOTES:
        for note in notes:
            found = pattern.match(note)
            if found:
                tags.append(words(found))
                break
    return tags


def _array(value: Any, name: str, shape: tuple[int | None, ...], dtype: type = float) -> np.ndarray:
    try:
        arr: np.ndarray = np.array(value, dtype=dtype, copy=True)
    except OverflowError:
        raise ShapeError(f"{name} holds a number too large for an array") from None
    if arr.ndim != len(shape) or any(
        s is not None and s != a for s, a in zip(shape, arr.shape, strict=False)
    ):
        want = "(" + ", ".join("any" if s is None else str(s) for s in shape) + ")"
        raise ShapeError(f"{name} should be an array of shape {want}, got shape {arr.shape}")
    if dtype is float and not np.all(np.isfinite(arr)):
        raise ShapeError(f"{name} contains NaN or infinite values")
    limit = MAX_FREQUENCY_CM1 if name == "freqs_cm1" else MAX_ABS_VALUE
    if dtype is float and arr.size and np.max(np.abs(arr)) > limit:
        raise ShapeError(
            f"{name} holds {np.max(np.abs(arr)):.3g}, beyond the largest accepted magnitude "
            f"({limit:g}); the file is damaged or in other units"
        )
    arr.setflags(write=False)
    return arr


def _optional(value: Any, name: str, shape: tuple[int | None, ...]) -> np.ndarray | None:
    return None if value is None else _array(value, name, shape)


@dataclass(frozen=True, eq=False)
class ModeSet:
    """Vibrational modes of one molecule with what is known of their Raman tensors.

    Parameters
    ----------
    atomic_numbers : array of int, shape (N,)
    coordinates_ang : array, shape (N, 3)
        Cartesian coordinates in Å, in the frame of the normal modes and tensors.
    freqs_cm1 : array, shape (n_modes,)
        Harmonic wavenumbers in cm⁻¹; an imaginary frequency is stored as a negative number.
    modes : array, shape (n_modes, 3N)
        Mass-weighted orthonormal normal-mode vectors L (rows), coordinates atom-major.
    masses_da : array, shape (N,), optional
        Atomic masses in Da; default: :func:`default_masses`.
    dalpha_dx : array, shape (3N, 3, 3), optional
        Cartesian polarizability derivatives ∂α/∂x in Å².
    dalpha_dq : array, shape (n_modes, 3, 3), optional
        Normal-coordinate derivatives ∂α/∂Q in Å² Da⁻¹ᐟ², for sources that give no
        ``dalpha_dx``.  With ``dalpha_dx`` it is always derived from ``dalpha_dx``, ``modes``
        and ``masses_da`` (:func:`vibrapol.vibrations.project_dalpha`); one given as well must
        agree with that to :data:`DERIVED_DQ_RTOL` (it is then replaced by the derived one).
    a2, gamma2 : array, shape (n_modes,), optional
        Invariants a² and γ² of ∂α/∂Q in Å⁴ Da⁻¹, for sources that print only the activity and
        the depolarization ratio (no tensors).
    polarizability_ang3 : array, shape (3, 3), optional
        Static polarizability α in Å³.
    energy_hartree : float, optional
        Electronic energy, for weighting conformers.
    provenance : Provenance
    activity : array, shape (n_modes,), optional
        Raman activity S = 45a² + 7γ² in Å⁴ Da⁻¹, only for sources that give the activity but
        no depolarization ratio and no tensors (a² and γ² are then unknown, so is ρ).  Not
        allowed together with tensors or a², γ², which determine the activity themselves.
    ir_intensity_km_mol : array, shape (n_modes,), optional
        Infrared intensity of each mode in km mol⁻¹ as the source printed or computed it
        (papers show IR and Raman side by side); ``None`` when unknown.
    program_irreps : tuple of str, optional
        Symmetry species of each mode as the source program printed it (e.g. ``"Au"``), in the
        program's own point group and axis convention, which may differ from vibrapol's (see
        :func:`vibrapol.symmetry.compare_program_species`); ``None`` when not printed.

    Notes
    -----
    A ``ModeSet`` is never mutated: arrays are private read-only copies and every "change" is a
    new object.  ``dataclasses.replace`` derives again what follows from the fields replaced
    (``dalpha_dq`` from ``dalpha_dx``, ``modes`` and ``masses_da``); it corrects an input.  To
    put other isotopes on the same molecule (new frequencies and modes from the same force
    field) use :meth:`with_masses`; to keep some modes, :meth:`subset`.  When the masses were
    defaulted (``provenance.masses`` is :data:`DEFAULT_MASSES_NOTE`), replacing them by other
    masses is refused: the note would no longer be true.
    """

    atomic_numbers: np.ndarray
    coordinates_ang: np.ndarray
    freqs_cm1: np.ndarray
    modes: np.ndarray
    masses_da: np.ndarray | None = None
    dalpha_dx: np.ndarray | None = None
    dalpha_dq: np.ndarray | None = None
    a2: np.ndarray | None = None
    gamma2: np.ndarray | None = None
    polarizability_ang3: np.ndarray | None = None
    energy_hartree: float | None = None
    provenance: Provenance = field(default_factory=Provenance)
    activity: np.ndarray | None = None
    ir_intensity_km_mol: np.ndarray | None = None
    program_irreps: tuple[str, ...] | None = None

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        given_modes, given_masses = self.modes, self.masses_da
        z = _array(self.atomic_numbers, "atomic_numbers", (None,), dtype=int)
        n_atoms = z.shape[0]
        if n_atoms == 0:
            raise ShapeError("a ModeSet needs at least one atom")
        if np.any(z < 1) or np.any(z > 118):
            raise ShapeError(
                f"atomic numbers must be between 1 and 118, got {sorted(set(z.tolist()))}"
            )
        set_(self, "atomic_numbers", z)
        set_(self, "coordinates_ang", _array(self.coordinates_ang, "coordinates_ang", (n_atoms, 3)))
        freqs = _array(self.freqs_cm1, "freqs_cm1", (None,))
        n_modes = freqs.shape[0]
        set_(self, "freqs_cm1", freqs)
        set_(self, "modes", _array(self.modes, "modes", (n_modes, 3 * n_atoms)))
        provenance = self.provenance
        if self.masses_da is None:
            set_(self, "masses_da", _array(default_masses(z), "masses_da", (n_atoms,)))
            if not provenance.masses:
                provenance = dataclasses.replace(provenance, masses=DEFAULT_MASSES_NOTE)
        else:
            masses = _array(self.masses_da, "masses_da", (n_atoms,))
            if np.any(masses <= 0):
                raise ShapeError("masses_da must all be positive")
            if provenance.masses == DEFAULT_MASSES_NOTE and not _are_default_masses(z, masses):
                raise ShapeError(
                    "masses_da differ from the default isotope masses that provenance.masses "
                    "names; change masses with ModeSet.with_masses, or say where they come from "
                    "in provenance.masses"
                )
            set_(self, "masses_da", masses)
        set_(self, "provenance", provenance)
        if self.energy_hartree is not None:
            try:
                energy = float(self.energy_hartree)
            except (TypeError, ValueError):
                raise ShapeError(
                    f"energy_hartree must be a number, got {self.energy_hartree!r}"
                ) from None
            if not np.isfinite(energy) or abs(energy) > MAX_ABS_VALUE:
                raise ShapeError(f"energy_hartree must be a finite number, got {energy}")
            set_(self, "energy_hartree", energy)
        set_(self, "dalpha_dx", _optional(self.dalpha_dx, "dalpha_dx", (3 * n_atoms, 3, 3)))
        set_(self, "dalpha_dq", self._checked_dalpha_dq(n_modes, given_modes, given_masses))
        set_(self, "a2", _optional(self.a2, "a2", (n_modes,)))
        set_(self, "gamma2", _optional(self.gamma2, "gamma2", (n_modes,)))
        if (self.a2 is None) != (self.gamma2 is None):
            raise ShapeError("give both a2 and gamma2, or neither")
        set_(self, "activity", _optional(self.activity, "activity", (n_modes,)))
        if self.activity is not None and (self.a2 is not None or self.dalpha_dq is not None):
            raise ShapeError(
                "give activity only when a2, gamma2 and the tensors are unknown (they determine it)"
            )
        set_(
            self,
            "ir_intensity_km_mol",
            _optional(self.ir_intensity_km_mol, "ir_intensity_km_mol", (n_modes,)),
        )
        if self.program_irreps is not None:
            labels = tuple(self.program_irreps)
            if len(labels) != n_modes or not all(isinstance(x, str) for x in labels):
                raise ShapeError(
                    f"program_irreps should hold one species label (a string) per mode, "
                    f"{n_modes} in all"
                )
            set_(self, "program_irreps", labels)
        set_(
            self,
            "polarizability_ang3",
            _optional(self.polarizability_ang3, "polarizability_ang3", (3, 3)),
        )
        if n_modes:
            overlap = self.modes @ self.modes.T
            err = np.max(np.abs(overlap - np.eye(n_modes)))
            if err > ORTHONORMAL_TOL:
                raise ShapeError(
                    f"modes must be mass-weighted orthonormal vectors (max |LLᵀ − I| = {err:.2g}); "
                    "convert printed Cartesian displacements with "
                    "vibrations.modes_from_displacements"
                )

    def __repr__(self) -> str:
        from vibrapol.display import modeset_lines

        return "\n".join(modeset_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import modeset_html

        return modeset_html(self)

    def _checked_dalpha_dq(
        self, n_modes: int, given_modes: Any, given_masses: Any
    ) -> np.ndarray | None:
        """∂α/∂Q: derived from ``dalpha_dx`` when that is given, else as given."""
        given = self.dalpha_dq
        earlier = None if given is None else _DERIVED_DQ.get(id(given))
        if earlier is not None and earlier.dalpha_dq is not given:
            earlier = None
        if self.dalpha_dx is None:
            if earlier is not None and not (
                earlier.modes is given_modes and earlier.masses_da is given_masses
            ):
                raise ShapeError(
                    "dalpha_dq was derived from a dalpha_dx, modes and masses_da that are no "
                    "longer given: pass dalpha_dq=None to drop the tensors"
                )
            return _optional(given, "dalpha_dq", (n_modes, 3, 3))
        from vibrapol.vibrations import project_dalpha

        dq = project_dalpha(self.dalpha_dx, self.modes, self._masses())
        if given is not None and earlier is None:
            given = _array(given, "dalpha_dq", (n_modes, 3, 3))
            diff = float(np.max(np.abs(given - dq), initial=0.0))
            if diff > DERIVED_DQ_RTOL * max(float(np.max(np.abs(dq), initial=0.0)), 1e-12):
                raise ShapeError(
                    f"dalpha_dq does not follow from dalpha_dx, modes and masses_da (largest "
                    f"difference {diff:.3g} Å² Da⁻¹ᐟ²): give only dalpha_dx "
                    "(dalpha_dq=None derives it) or only dalpha_dq"
                )
        dq.setflags(write=False)
        record = _Derivation(dq, self.modes, self.masses_da)
        object.__setattr__(self, "_derivation", record)  # keeps the record alive with self
        _DERIVED_DQ[id(dq)] = record
        return dq

    def __setstate__(self, state: dict[str, Any]) -> None:
        # Copies and unpickled ModeSets (engine workers) know their derived ∂α/∂Q as well.
        self.__dict__.update(state)
        record = state.get("_derivation")
        if record is not None:
            _DERIVED_DQ[id(record.dalpha_dq)] = record

    # -- derived quantities -------------------------------------------------------------
    @property
    def n_atoms(self) -> int:
        """Number of atoms."""
        return int(self.atomic_numbers.shape[0])

    @property
    def n_modes(self) -> int:
        """Number of vibrational modes."""
        return int(self.freqs_cm1.shape[0])

    @property
    def symbols(self) -> list[str]:
        """Chemical symbols of the atoms."""
        return [chemical_symbols[z] for z in self.atomic_numbers]

    @property
    def has_raman(self) -> bool:
        """True when Raman invariants can be computed (tensors or a², γ²)."""
        return self.dalpha_dq is not None or self.a2 is not None

    @property
    def has_activity(self) -> bool:
        """True when the Raman activity of every mode is known (perhaps without a², γ²)."""
        return self.has_raman or self.activity is not None

    def raman_invariants(self) -> tuple[np.ndarray, np.ndarray]:
        """Per-mode invariants (a², γ²) in Å⁴ Da⁻¹, from the tensors when present.

        Raises
        ------
        VibrapolError
            When the source carries no Raman data at all.
        """
        from vibrapol.invariants import tensor_invariants

        if self.dalpha_dq is not None:
            return tensor_invariants(self.dalpha_dq)
        if self.a2 is not None and self.gamma2 is not None:
            return self.a2.copy(), self.gamma2.copy()
        from vibrapol.errors import VibrapolError

        where = self.provenance.source_file or "this mode set"
        if self.activity is not None:
            raise VibrapolError(
                f"{where} gives Raman activities but no depolarization ratios or tensors: "
                "a² and γ² are unknown"
            )
        raise VibrapolError(
            f"{where} has no Raman data (no polarizability derivatives or activities)"
        )

    def _masses(self) -> np.ndarray:
        """``masses_da``, which ``__post_init__`` always fills (the defaults when not given)."""
        if self.masses_da is None:
            raise RuntimeError("ModeSet.masses_da is filled when the ModeSet is built")
        return self.masses_da

    def displacements(self) -> np.ndarray:
        """Cartesian displacement of each mode, L/√m, normalised to unit length, shape (n, N, 3)."""
        d = self.modes / np.repeat(np.sqrt(self._masses()), 3)[None, :]
        d /= np.linalg.norm(d, axis=1, keepdims=True)
        return d.reshape(self.n_modes, self.n_atoms, 3)

    def subset(self, indices: np.ndarray | list[int]) -> ModeSet:
        """A new ModeSet with only the given modes (in the given order).

        Parameters
        ----------
        indices : array of int
            Indices of the modes to keep, in the order wanted.

        Returns
        -------
        ModeSet
            The same molecule with those modes only; ``dalpha_dq`` is derived again when
            ``dalpha_dx`` is known.
        """
        idx = np.asarray(indices, dtype=int)
        pick: dict[str, Any] = {}
        if self.dalpha_dx is None and self.dalpha_dq is not None:
            pick["dalpha_dq"] = self.dalpha_dq[idx]
        for name in ("a2", "gamma2", "activity", "ir_intensity_km_mol"):
            value = getattr(self, name)
            pick[name] = None if value is None else value[idx]
        if self.program_irreps is not None:
            pick["program_irreps"] = tuple(self.program_irreps[int(i)] for i in idx)
        return dataclasses.replace(
            self, freqs_cm1=self.freqs_cm1[idx], modes=self.modes[idx], **pick
        )

    @classmethod
    def from_ase_vibrations(cls, vib: Any, **options: Any) -> ModeSet:
        """A ModeSet from an ``ase.vibrations.VibrationsData`` (its Hessian and masses).

        See :func:`vibrapol.sources.objects.modes_from_ase_vibrations` (options:
        ``dalpha_dx``, ``polarizability_ang3``, ``source``).
        """
        from vibrapol.sources.objects import modes_from_ase_vibrations

        return modes_from_ase_vibrations(vib, **options)

    def to_ase_vibrations(self) -> Any:
        """The Hessian and masses of the modes as an ``ase.vibrations.VibrationsData``.

        See :func:`vibrapol.sources.objects.modes_to_ase_vibrations`; needs every vibration.
        """
        from vibrapol.sources.objects import modes_to_ase_vibrations

        return modes_to_ase_vibrations(self)

    @classmethod
    def from_ccdata(cls, data: Any, source: str = "") -> ModeSet:
        """A ModeSet from cclib's parsed data (``cclib.io.ccread(...)``).

        See :func:`vibrapol.sources.cclib_generic.modes_from_ccdata`: the same function as the
        generic cclib reader, so a file and its ``ccData`` give the same numbers.
        """
        from vibrapol.sources.cclib_generic import modes_from_ccdata

        return modes_from_ccdata(data, source=source)

    def with_masses(self, masses_da: np.ndarray | list[float]) -> ModeSet:
        """The same molecule with other atomic masses (isotopes): new frequencies and modes.

        The Cartesian Hessian is rebuilt from the frequencies and modes
        (:func:`vibrapol.vibrations.hessian_from_modes`) and analysed again with the new masses
        (:func:`vibrapol.vibrations.harmonic_analysis`); ∂α/∂x, α, the geometry and the energy
        do not depend on the masses and are kept, ∂α/∂Q is derived again.

        Parameters
        ----------
        masses_da : array, shape (N,)
            New mass of every atom in Da, in the order of :attr:`atomic_numbers`.

        Returns
        -------
        ModeSet
            New frequencies (ascending), modes and ∂α/∂Q; ``provenance.masses`` names the
            masses changed and a provenance note says how the modes were obtained.  IR
            intensities and the program's species labels are dropped (they belong to the old
            modes; the note says so).

        Warns
        -----
        ChangedValuesWarning
            Always: the frequencies and modes are no longer the source's (the text is also the
            provenance note).

        Raises
        ------
        ShapeError
            When the masses are not N positive numbers.
        VibrapolError
            When the set of modes is not complete (3N − 6, 3N − 5 for a linear molecule), or
            the source gives ∂α/∂Q, a², γ² or activities without ∂α/∂x (those of the new
            modes cannot be derived from them).

        Notes
        -----
        The rebuilt Hessian is as precise as the modes and frequencies given: modes printed
        with few digits give new frequencies good to about a wavenumber.  As ASE's
        ``VibrationsData.with_new_masses``, the molecule is assumed to be at a stationary
        point.

        Examples
        --------
        D₂O from H₂O: ``modes.with_masses([15.99491462, 2.01410178, 2.01410178])``.
        """
        from vibrapol.isotopes import modes_with_masses

        return modes_with_masses(self, masses_da)
