"""Q-Chem output files: frequencies, normal modes, Raman activities and depolarization ratios.

What Q-Chem prints, and what is read (checked on a Q-Chem 5.4.1 output of a numerical Raman
job, ``jobtype = freq`` with ``doraman = true``):

* ``Standard Nuclear Orientation (Angstroms)``: the geometry in Å (10 decimals) in the frame of
  the normal modes; the last one before the vibrational analysis is used.
* ``VIBRATIONAL ANALYSIS``: the vibrations only (3N−6, or 3N−5), three per block.  Per mode:
  ``Frequency:`` (cm⁻¹, 2 decimals, imaginary printed negative), ``Raman Intens:`` which is
  the Raman *activity* in Å⁴/amu (the banner above the blocks says "RAMAN SCATTERING
  ACTIVITIES (A**4/AMU)"), ``Depolar:`` the depolarization ratio for plane-polarized incident
  light (printed 0.000 for inactive modes, where it is undefined and ignored), and the
  Cartesian displacements (3 decimals) normalised to unit length (Σ d² = 1; checked: the
  printed reduced masses follow from them as Σ m d²).  Modes are converted with
  :func:`vibrapol.vibrations.modes_from_displacements`; a² and γ² are recovered with
  :func:`vibrapol.sources._common.invariants_from_printed`.
* ``Atom  k Element X Has Mass  m``: the masses used (Da, 5 decimals) in the thermochemistry
  section; when absent the ModeSet default masses are used (Q-Chem's default is also the most
  abundant isotope).
* ``Polarizability Matrix (a.u.)``: printed with a negative sign (it is −α); vibrapol stores
  +α in Å³, negating only when the printed trace is negative.
* The method and basis from the ``$rem`` section of the echoed input; the energy is the first
  ``Total energy in the final basis set`` of the job (the reference geometry; the later ones
  belong to displaced geometries).
* ``IR Intens:`` in km/mol (the banner above the blocks says "INFRARED INTENSITIES (KM/MOL)")
  → ``ModeSet.ir_intensity_km_mol``.
* The program's remarks about its results (:data:`WARNING_RULES`: imaginary frequencies, SCF
  failures) are passed on as :class:`~vibrapol.errors.AccuracyWarning` and provenance notes.
* Not read into the ModeSet: force constants, reduced masses, transition dipoles.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import (
    atomic_numbers_from_symbols,
    floats,
    invariants_from_printed,
    truncated_error,
)
from vibrapol.sources._layout import layout_error
from vibrapol.sources._program_warnings import Rule, find_program_warnings, pass_on
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.units import BOHR3_TO_ANG3
from vibrapol.vibrations import modes_from_displacements

#: Q-Chem's remarks about its results: the imaginary-frequency count is from the real Q-Chem
#: 5.4.1 output (printed for every job, so a count of 0 is skipped); the SCF failure texts are
#: those cclib 1.8.1's Q-Chem parser stops on.  "Energy on first SCF cycle will be
#: non-variational" (a routine note on the initial guess) and "Irrep of orbital ... could not
#: be determined" (orbital labels) say nothing about the vibrations and are not passed on.
WARNING_RULES = (
    Rule("Imaginary Frequencies", 0, "Q-Chem 5.4.1 output", unless=r"has\s+0\s+Imaginary"),
    Rule("SCF failed to converge", 0, "cclib Q-Chem parser"),
    Rule("Convergence failure", 0, "cclib Q-Chem parser"),
)

_ORIENTATION = "Standard Nuclear Orientation (Angstroms)"
_VIB_TITLE = "VIBRATIONAL ANALYSIS"
_VIB_BLOCK = "the vibrational analysis"
_VERSION = re.compile(r"^\s*Q-Chem\s+(\d[\w.]*)")
_MASS = re.compile(r"^\s*Atom\s+(\d+)\s+Element\s+(\S+)\s+Has Mass\s+(\S+)")
_ENERGY = re.compile(r"Total energy in the final basis set =\s*(-?\d+\.\d+)")
_POL_ROW = re.compile(r"^\s*\d\s*(-?\d+\.\d+)\s*(-?\d+\.\d+)\s*(-?\d+\.\d+)\s*$")


@dataclass(frozen=True, eq=False)
class QChemVibrations:
    """What the VIBRATIONAL ANALYSIS blocks hold, in Q-Chem's mode order.

    Attributes
    ----------
    freqs_cm1 : ndarray (n,)
    displacements : ndarray (n, 3N)
        Printed Cartesian displacements, unit length.
    ir_km_mol : ndarray (n,) or None
    activity : ndarray (n,) or None
        ``Raman Intens:`` row, Å⁴/amu.
    rho_linear : ndarray (n,) or None
        ``Depolar:`` row (plane-polarized incident light).
    """

    freqs_cm1: np.ndarray
    displacements: np.ndarray
    ir_km_mol: np.ndarray | None
    activity: np.ndarray | None
    rho_linear: np.ndarray | None


def _error(
    where: str, line: int, what: str, lines: list[str] | None = None, block: str = ""
) -> InputFormatError:
    """One-line error for a problem at ``line`` (0-based).

    At the file's last line (or without ``lines``) the file is truncated; before it, ``block``
    is there but printed in a layout not known here.
    """
    if lines is not None and line < len(lines) - 1:
        return layout_error(where, block, line, what)
    return truncated_error(where, f"line {line + 1}: {what}", subject="the Q-Chem output")


def orientation_block(lines: list[str], title: int, where: str) -> tuple[list[str], np.ndarray]:
    """Element symbols and positions in Å.  ``title`` is the index of the title line.

    Layout (own numbers)::

         ----------------------------------------------------------------
                     Standard Nuclear Orientation (Angstroms)
            I     Atom           X                Y                Z
         ----------------------------------------------------------------
            1      O       0.0000000000     0.0000000000     0.1183000000
            2      H       0.0000000000     0.7612000000    -0.4732000000
         ----------------------------------------------------------------
    """
    symbols, coords = [], []
    for i in range(title + 3, len(lines)):
        if lines[i].strip().startswith("---"):
            break
        tokens = lines[i].split()
        if len(tokens) != 5:
            raise _error(
                where,
                i,
                f"expected 'index symbol x y z', got {lines[i].strip()!r}",
                lines,
                "the Standard Nuclear Orientation table",
            )
        symbols.append(tokens[1])
        coords.append(floats(" ".join(tokens[2:]), f"{where}: line {i + 1}"))
    else:
        raise _error(where, len(lines) - 1, "the coordinate table does not end")
    if not symbols:
        raise _error(where, title + 3, "empty coordinate table")
    return symbols, np.array(coords)


def vibration_blocks(lines: list[str], title: int, n_atoms: int, where: str) -> QChemVibrations:
    """All modes of the VIBRATIONAL ANALYSIS section (three per block).

    Layout of one block (own numbers; the last block may hold one or two modes)::

         Mode:                 1                      2                      3
         Frequency:      -120.40                1650.25                3802.77
         Force Cnst:      0.0102                 1.8350                 8.5511
         Red. Mass:       1.1940                 1.1437                 1.0039
         IR Active:          YES                    YES                    YES
         IR Intens:       88.120                 62.390                  4.118
         Raman Active:       NO                     YES                    YES
         Raman Intens:     0.000                  5.123                 88.005
         Depolar:          0.000                  0.692                  0.182
                       X      Y      Z        X      Y      Z        X      Y      Z
         O         0.000  0.000  0.271   -0.000 -0.070  0.000    0.000  0.049  0.000
         H        -0.000  0.428 -0.537    0.000  0.561 -0.417    0.000 -0.390 -0.584
         H         0.000 -0.428 -0.537   -0.000  0.561  0.417   -0.000 -0.390  0.584
         TransDip   0.000  0.000  0.094   -0.000 -0.079  0.000    0.000  0.020  0.000
    """
    rows: dict[str, list[float]] = {
        "Frequency": [],
        "IR Intens": [],
        "Raman Intens": [],
        "Depolar": [],
    }
    disp: list[np.ndarray] = []
    i = title + 1
    while i < len(lines):
        stripped = lines[i].strip()
        if not stripped.startswith("Mode:"):
            if disp and stripped:
                break  # the first line after the last block
            i += 1
            continue
        n_here = len(stripped.split()) - 1
        i += 1
        while i < len(lines) and ":" in lines[i] and not set(lines[i].split()) <= {"X", "Y", "Z"}:
            label, _, values = lines[i].partition(":")
            if label.strip() in rows:
                numbers = floats(values, f"{where}: line {i + 1}")
                if len(numbers) != n_here:
                    raise _error(
                        where,
                        i,
                        f"{label.strip()} row has {len(numbers)} values for {n_here} modes",
                        lines,
                        _VIB_BLOCK,
                    )
                rows[label.strip()].extend(numbers)
            i += 1
        if i >= len(lines) or set(lines[i].split()) != {"X", "Y", "Z"}:
            raise _error(
                where, i, "expected the 'X Y Z' header of the displacements", lines, _VIB_BLOCK
            )
        block = np.zeros((n_here, 3 * n_atoms))
        for a in range(n_atoms):
            i += 1
            tokens = lines[i].split() if i < len(lines) else []
            if len(tokens) != 1 + 3 * n_here:
                what = f"expected {3 * n_here} displacements of atom {a + 1}"
                raise _error(where, i, what, lines, _VIB_BLOCK)
            atom_disp = np.array(floats(" ".join(tokens[1:]), f"{where}: line {i + 1}")).reshape(
                n_here, 3
            )
            block[:, 3 * a : 3 * a + 3] = atom_disp
        disp.extend(block)
        i += 1
        if i < len(lines) and lines[i].lstrip().startswith("TransDip"):
            i += 1
    else:
        # Q-Chem always prints more after the last mode block (thermochemistry, job time)
        raise _error(where, i - 1, "the file ends inside the vibrational analysis")
    n = len(rows["Frequency"])
    if n == 0 or len(disp) != n:
        raise _error(where, i - 1, "no complete vibrational mode block")

    def optional(key: str) -> np.ndarray | None:
        values = rows[key]
        if not values:
            return None
        if len(values) != n:
            raise _error(where, i - 1, f"{key} printed for {len(values)} of {n} modes")
        return np.array(values)

    return QChemVibrations(
        freqs_cm1=np.array(rows["Frequency"]),
        displacements=np.array(disp),
        ir_km_mol=optional("IR Intens"),
        activity=optional("Raman Intens"),
        rho_linear=optional("Depolar"),
    )


def masses_block(lines: list[str], start: int, n_atoms: int) -> np.ndarray | None:
    """Masses in Da from the thermochemistry lines, or None when they are not printed.

    Layout (own numbers)::

           Atom    1 Element O  Has Mass   15.99491
           Atom    2 Element H  Has Mass    1.00783
    """
    found: dict[int, float] = {}
    for line in lines[start:]:
        match = _MASS.match(line)
        if match:
            found.setdefault(int(match.group(1)), float(match.group(3)))
    if sorted(found) != list(range(1, n_atoms + 1)):
        return None
    return np.array([found[k] for k in range(1, n_atoms + 1)])


def polarizability_block(lines: list[str], title: int, where: str) -> np.ndarray:
    """The printed matrix in a.u. (as printed: Q-Chem 5.4 prints −α).

    Layout (own numbers; the row number and a negative value can touch)::

         Polarizability Matrix (a.u.)
                    1           2           3
            1 -8.5123000   0.0000000  -0.0000000
            2   0.0000000  -6.9240100   0.0000000
            3  -0.0000000   0.0000000  -7.7105000
    """
    rows = []
    for k in range(2, 5):
        match = _POL_ROW.match(lines[title + k]) if title + k < len(lines) else None
        if not match:
            raise _error(
                where,
                title + k,
                "expected a row of the polarizability matrix",
                lines,
                "the polarizability matrix",
            )
        rows.append([float(x) for x in match.groups()])
    return np.array(rows)


def _rem(lines: list[str], stop: int) -> dict[str, str]:
    """Keywords of the last ``$rem`` section before ``stop`` (keys lower-cased)."""
    starts = [i for i in range(stop) if lines[i].strip().lower() == "$rem"]
    rem: dict[str, str] = {}
    if not starts:
        return rem
    for line in lines[starts[-1] + 1 : stop]:
        text = line.split("!")[0].strip()
        if text.lower() == "$end":
            break
        tokens = text.replace("=", " ").split()
        if len(tokens) >= 2:
            rem[tokens[0].lower()] = tokens[1]
    return rem


def parse_qchem(text: str, where: str = "Q-Chem output") -> ModeSet:
    """Build a :class:`ModeSet` from the text of a Q-Chem output (see the module docstring).

    Raises
    ------
    InputFormatError
        When the output has no vibrational analysis, or a block is truncated or garbled.
    """
    lines = text.splitlines()
    vib_titles = [i for i, line in enumerate(lines) if line.strip("* \t") == _VIB_TITLE]
    if not vib_titles:
        raise InputFormatError(
            f"{where}: Q-Chem output has no vibrational data (no VIBRATIONAL ANALYSIS section); "
            "use the output of a frequency job"
        )
    vtitle = vib_titles[-1]
    orient = [i for i in range(vtitle) if lines[i].strip() == _ORIENTATION]
    if not orient:
        raise InputFormatError(
            f"{where}: no '{_ORIENTATION}' table before the vibrational analysis"
        )
    symbols, coords = orientation_block(lines, orient[-1], where)
    z = atomic_numbers_from_symbols(symbols, where)
    vib = vibration_blocks(lines, vtitle, len(symbols), where)
    notes = [f"{len(vib.freqs_cm1)} vibrations printed by Q-Chem (rigid-body modes not printed)"]
    notes += pass_on(find_program_warnings(lines, WARNING_RULES), where=where, program="Q-Chem")
    ir, ir_note = _ir_intensities(lines, vtitle, vib)
    if ir_note:
        notes.append(ir_note)
    masses = masses_block(lines, vtitle, len(symbols))
    masses_note = "as printed by Q-Chem (thermochemistry, 5 decimals)" if masses is not None else ""
    modes = modes_from_displacements(
        vib.displacements, default_masses(z) if masses is None else masses
    )

    a2 = gamma2 = None
    if vib.activity is not None and vib.rho_linear is not None:
        a2, gamma2 = invariants_from_printed(vib.activity, vib.rho_linear)
        notes.append("a2, gamma2 from the printed activity ('Raman Intens') and 'Depolar' ratio")
    else:
        notes.append("no Raman rows in the vibrational analysis: frequencies and modes only")

    job_start = max([i for i in range(vtitle) if lines[i].strip() == "User input:"], default=0)
    alpha = None
    pol = [
        i for i in range(job_start, vtitle) if lines[i].strip() == "Polarizability Matrix (a.u.)"
    ]
    if pol:
        printed = polarizability_block(lines, pol[0], where)
        sign = -1.0 if np.trace(printed) < 0 else 1.0
        alpha = sign * printed * BOHR3_TO_ANG3
        if sign < 0:
            notes.append("polarizability printed as -alpha; sign reversed")
    energy = next(
        (float(m.group(1)) for m in map(_ENERGY.search, lines[job_start:vtitle]) if m), None
    )
    rem = _rem(lines, vtitle)
    versions = [m.group(1) for m in map(_VERSION.match, lines[:200]) if m]
    provenance = Provenance(
        source_file=where,
        source_kind="qchem",
        program="Q-Chem",
        program_version=max(versions, key=len) if versions else "",
        method=rem.get("method", rem.get("exchange", "")).upper(),
        basis=rem.get("basis", "").upper(),
        masses=masses_note,
        notes=tuple(notes),
    )
    return ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=vib.freqs_cm1,
        modes=modes,
        masses_da=masses,
        a2=a2,
        gamma2=gamma2,
        polarizability_ang3=alpha,
        ir_intensity_km_mol=ir,
        energy_hartree=energy,
        provenance=provenance,
    )


def _ir_intensities(
    lines: list[str], vtitle: int, vib: QChemVibrations
) -> tuple[np.ndarray | None, str]:
    """The ``IR Intens:`` row in km/mol, and a note on where the unit comes from.

    The banner of the VIBRATIONAL ANALYSIS section names the unit ("INFRARED INTENSITIES
    (KM/MOL)"); a banner naming another unit leaves the row unread.
    """
    if vib.ir_km_mol is None:
        return None, ""
    banner = [line for line in lines[vtitle : vtitle + 10] if "INFRARED INTENSITIES" in line]
    if not banner:
        return vib.ir_km_mol, "IR intensities in km/mol (Q-Chem's unit; no unit banner printed)"
    if "KM/MOL" not in banner[0].upper():
        return None, f"IR intensities not read: unit banner {banner[0].strip(' *')!r}"
    return vib.ir_km_mol, "IR intensities in km/mol as printed ('IR Intens')"


def read_qchem(path: str | Path) -> ModeSet:
    """Read a Q-Chem output file (see the module docstring for what is read)."""
    return parse_qchem(read_text(path), where=str(path))


def sniff_qchem(head: str, tail: str) -> bool:
    """True for text with Q-Chem's banner."""
    return "Welcome to Q-Chem" in head or "A Quantum Leap Into The Future Of Chemistry" in head


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "qchem",
    "Q-Chem output (frequencies, modes, Raman activity and ratio)",
    sniff_qchem,
    read_qchem,
)
