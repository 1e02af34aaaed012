"""Other isotopes on the same molecule: new normal modes from the same force field."""

from __future__ import annotations

import dataclasses
import warnings
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.errors import ChangedValuesWarning, ShapeError, VibrapolError
from vibrapol.modeset import ModeSet, _array
from vibrapol.vibrations import harmonic_analysis, hessian_from_modes

if TYPE_CHECKING:
    import pandas as pd


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
    note = f"masses changed (ModeSet.with_masses: {'; '.join(changed) or 'none'}): "
    note += "frequencies and modes from the Hessian rebuilt from the source's modes"
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


#: The form of an isotope specification, for error messages and help texts.
ISOTOPES_SYNTAX = (
    "comma-separated ELEMENT=MASS or ATOM=MASS items, mass in Da, atoms numbered from 1 in "
    "the source's order, e.g. 'H=2.01410178' or '2=2.01410178,O=17.9991596'"
)


def parse_isotopes(spec: str, modes: ModeSet) -> np.ndarray:
    """The masses of every atom of ``modes`` after an isotope specification.

    Parameters
    ----------
    spec : str
        Comma-separated items ``ELEMENT=MASS`` (every atom of that element, e.g. ``H=2.0141``)
        or ``ATOM=MASS`` (one atom, numbered from 1 in the source's order, e.g. ``3=2.0141``),
        masses in Da.  An atom item wins over an element item for the same atom, whatever
        their order.
    modes : ModeSet
        The parent molecule (its masses are the start).

    Returns
    -------
    ndarray, shape (N,)
        The new masses in Da.

    Raises
    ------
    OptionError
        When an item is malformed, names an element absent from the molecule or an atom
        number out of range, gives a mass that is not a positive number, or repeats a target.
    """
    from vibrapol.errors import OptionError

    masses = np.array(modes.masses_da, dtype=float)
    symbols = modes.symbols
    by_element: dict[str, float] = {}
    by_atom: dict[int, float] = {}
    items = [item.strip() for item in spec.split(",")]
    if not spec.strip() or not all(items):
        raise OptionError(f"--isotopes {spec!r}: give {ISOTOPES_SYNTAX}")
    for item in items:
        target, sep, value = (part.strip() for part in item.partition("="))
        try:
            mass = float(value)
        except ValueError:
            mass = float("nan")
        if not sep or not target or not (np.isfinite(mass) and mass > 0):
            raise OptionError(f"--isotopes item {item!r}: give {ISOTOPES_SYNTAX}")
        if target.isdigit():
            atom = int(target)
            if not 1 <= atom <= modes.n_atoms:
                raise OptionError(
                    f"--isotopes item {item!r}: atom {atom} out of range (the molecule has "
                    f"{modes.n_atoms} atoms, numbered from 1)"
                )
            if atom in by_atom:
                raise OptionError(f"--isotopes names atom {atom} twice")
            by_atom[atom] = mass
        else:
            element = target[:1].upper() + target[1:].lower()
            if element not in symbols:
                raise OptionError(
                    f"--isotopes item {item!r}: the molecule has no {element} atom "
                    f"(it has {', '.join(sorted(set(symbols)))})"
                )
            if element in by_element:
                raise OptionError(f"--isotopes names element {element} twice")
            by_element[element] = mass
    for i, symbol in enumerate(symbols):
        if symbol in by_element:
            masses[i] = by_element[symbol]
    for atom, mass in by_atom.items():
        masses[atom - 1] = mass
    return masses


def isotopologue(modes: ModeSet, spec: str) -> ModeSet:
    """``modes.with_masses(parse_isotopes(spec, modes))``: the isotopologue named by ``spec``.

    Refused (:class:`~vibrapol.errors.VibrapolError`) when the source has Raman numbers but
    no ∂α/∂x, or not every vibration (see :meth:`ModeSet.with_masses`); warns like it.
    """
    return modes_with_masses(modes, parse_isotopes(spec, modes))


@dataclasses.dataclass(frozen=True, eq=False)
class IsotopeShifts:
    """Each mode of a parent molecule beside the corresponding mode of an isotopologue.

    Attributes
    ----------
    parent, heavy : ModeSet
        The two mode sets (``heavy`` is the isotopologue, lighter or heavier).
    partner : ndarray of int, shape (n_modes,)
        Index of the isotopologue mode that corresponds to each parent mode.
    overlap : ndarray, shape (n_modes,)
        |⟨d, d'⟩| of the unit Cartesian displacements of the two modes (1: same motion).
    """

    parent: ModeSet
    heavy: ModeSet
    partner: np.ndarray
    overlap: np.ndarray

    def to_dataframe(self) -> pd.DataFrame:
        """The shift table as a pandas DataFrame.

        The columns are those of ``vibrapol shifts --format csv``; ``df.attrs`` holds its
        header.  Needs pandas (imported here).
        """
        from vibrapol.output.isotopes import shifts_dataframe

        return shifts_dataframe(self)

    @property
    def parent_cm1(self) -> np.ndarray:
        """Harmonic wavenumbers of the parent, cm⁻¹."""
        return np.asarray(self.parent.freqs_cm1, dtype=float)

    @property
    def isotopologue_cm1(self) -> np.ndarray:
        """Harmonic wavenumber of the corresponding isotopologue mode, cm⁻¹."""
        return np.asarray(self.heavy.freqs_cm1, dtype=float)[self.partner]

    @property
    def shift_cm1(self) -> np.ndarray:
        """Isotope shift ν̃′ − ν̃ in cm⁻¹ (negative when the isotopologue is heavier)."""
        return self.isotopologue_cm1 - self.parent_cm1

    @property
    def ratio(self) -> np.ndarray:
        """ν̃′ / ν̃ of each pair (NaN for a zero wavenumber)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.parent_cm1 != 0, self.isotopologue_cm1 / self.parent_cm1, np.nan)


def frequencies_only(modes: ModeSet) -> ModeSet:
    """``modes`` without its Raman numbers (a², γ², activities, ∂α/∂Q, ∂α/∂x).

    For isotope shifts alone: the wavenumbers of other isotopes need only the complete set of
    modes, while their Raman numbers need ∂α/∂x, which many sources do not give.
    """
    return dataclasses.replace(
        modes, dalpha_dx=None, dalpha_dq=None, a2=None, gamma2=None, activity=None
    )


def isotope_shifts(parent: ModeSet, heavy: ModeSet) -> IsotopeShifts:
    """Pair each parent mode with the isotopologue mode that moves the atoms most alike.

    Modes are paired one to one by the largest total overlap |⟨d, d′⟩| of their unit Cartesian
    displacement vectors (:meth:`ModeSet.displacements`), solved exactly with
    :func:`scipy.optimize.linear_sum_assignment`; ordering by wavenumber alone would pair the
    wrong modes wherever substitution changes their order (in CH₂D₂ the CD stretches fall
    below the CH₂ scissors' neighbours, for example).  The overlap of each pair is kept: a
    low value means the substitution mixed the parent's modes.

    Raises
    ------
    VibrapolError
        When the two sets do not describe the same atoms at the same geometry.
    """
    from scipy.optimize import linear_sum_assignment

    same = (
        parent.n_atoms == heavy.n_atoms
        and np.array_equal(parent.atomic_numbers, heavy.atomic_numbers)
        and np.allclose(parent.coordinates_ang, heavy.coordinates_ang, atol=1e-6)
        and parent.n_modes == heavy.n_modes
    )
    if not same:
        raise VibrapolError(
            "isotope shifts need the same atoms, geometry and number of modes in both sets"
        )
    d = parent.displacements().reshape(parent.n_modes, -1)
    d_heavy = heavy.displacements().reshape(heavy.n_modes, -1)
    overlap = np.abs(d @ d_heavy.T)
    rows, cols = linear_sum_assignment(-overlap)
    partner = np.empty(parent.n_modes, dtype=int)
    partner[rows] = cols
    return IsotopeShifts(parent, heavy, partner, overlap[rows, cols][np.argsort(rows)])
