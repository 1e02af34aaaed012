"""ORCA output files (versions 5 and 6): frequencies, normal modes, Raman activities, ratios.

What ORCA prints, and what is read (checked on ORCA 5.0.0 and 6.0.1 outputs of numerical
frequency jobs with ``%elprop polar 1``):

* ``CARTESIAN COORDINATES (ANGSTROEM)``: element symbols and positions in Å (6 decimals).  The
  last such block before the frequencies is the geometry of the frequency job.
* ``CARTESIAN COORDINATES (A.U.)``: the atomic masses ORCA used, in Da (3 decimals,
  isotope-averaged standard atomic weights, e.g. C 12.011).  Used as the masses.
* ``VIBRATIONAL FREQUENCIES``: all 3N wavenumbers in cm⁻¹ (2 decimals); the overall
  translations and rotations are printed as 0.00 and come first.
* ``NORMAL MODES``: a 3N × 3N matrix, one column per mode, six columns per block.  In ORCA's
  own words the columns are "the cartesian displacements weighted by the diagonal matrix
  M(i,i)=1/sqrt(m[i]) ... normalized but *not* orthogonal": column k is L_k/√m scaled to unit
  length, so √m times it is parallel to the mass-weighted eigenvector L_k
  (:func:`vibrapol.vibrations.modes_from_displacements`).  The rigid-body columns are zero.
* ``RAMAN SPECTRUM``: per vibration the Raman activity (Å⁴/amu) and one depolarization ratio,
  for plane-polarized incident light.  For modes whose activity is printed as zero the ratio is
  meaningless and ignored.  a² and γ² are recovered with
  :func:`vibrapol.sources._common.invariants_from_printed`.
* ``The first frequency considered to be a vibration is K`` / ``The total number of vibrations
  considered is M``: which of the 3N modes are vibrations (K = 6, or 5 for a linear molecule).
* The static polarizability (``THE POLARIZABILITY TENSOR`` in 5.x, ``STATIC POLARIZABILITY
  TENSOR (Dipole/Dipole)`` in 6.x), raw Cartesian tensor in a.u. (bohr³), and ``FINAL SINGLE
  POINT ENERGY`` (hartree).
* ``IR SPECTRUM``: the column headed ``Int`` with ``km/mol`` beneath it, the IR intensity
  (``ModeSet.ir_intensity_km_mol``); a block without that column is not read (noted).
* With ``usesym`` (ORCA 6): the ``Point group:`` line and the species printed after each
  wavenumber and under each row of NORMAL MODES column numbers (``2-Au`` → ``Au``), kept in
  ``ModeSet.program_irreps``; the two sets of labels must agree.
* ORCA's own warnings about its results (incomplete Hessian, unconverged SCF or geometry, error
  termination, capitalised ``WARNING`` lines after the input) become
  :class:`~vibrapol.errors.AccuracyWarning` and notes; the set-up warnings before the input
  become notes.
* Not read: thermochemistry, and any polarizability derivatives (ORCA does not print them).

The block parsers live in :mod:`vibrapol.sources.orca_blocks`.  A block that stops with the
file is reported as truncated; one laid out in a way they do not know, as an unrecognised
layout with its line number.

The method is described from the ``SCF SETTINGS`` block (e.g. "DFT (B88 exchange, LYP
correlation, 20% HF exchange)"), since ORCA prints no functional name there; the simple-input
keyword lines (``! ...``) are kept in the provenance notes.
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np

from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import (
    atomic_numbers_from_symbols,
    invariants_from_printed,
    truncated_error,
)
from vibrapol.sources.orca_blocks import (
    Frequencies,
    coordinates_block,
    find_titles,
    frequencies_block,
    ir_spectrum_block,
    masses_block,
    normal_modes_block,
    polarizability_block,
    raman_block,
)
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.units import BOHR3_TO_ANG3
from vibrapol.vibrations import modes_from_displacements

_FIRST_VIB = re.compile(r"The first frequency considered to be a vibration is\s+(\d+)")
_N_VIB = re.compile(r"The total number of vibrations considered is\s+(\d+)")
_ENERGY = re.compile(r"^FINAL SINGLE POINT ENERGY\s+(-?\d+\.\d+)")
_VERSION = re.compile(r"Program Version\s+(\S+)")
_BASIS = re.compile(r"Your calculation utilizes the basis:\s*(\S+)")
_KEYWORDS = re.compile(r"^\|\s*\d+>\s*!(.*)$")
_SETTING = r"^\s*{label}\s+{key}\s+\.\.\.\.\s+(\S+)"

__all__ = [
    "find_titles",
    "ir_spectrum_block",
    "normal_modes_block",
    "parse_orca",
    "raman_block",
    "read_orca",
    "sniff_orca",
]

_ANY_CASE = re.IGNORECASE
#: ORCA's statements that a result of the run is unreliable, anywhere in the output, and what
#: they mean for the modes (the texts as ORCA prints them, from memory; matched ignoring case).
_RESULT_WARNINGS = (
    (
        re.compile(r"Hessian Matrix ISN'T COMPLETE", _ANY_CASE),
        "ORCA says its Hessian is incomplete (some displaced calculations failed): frequencies, "
        "modes and Raman data are unreliable",
    ),
    (
        re.compile(
            r"SCF NOT CONVERGED|wavefunction IS NOT CONVERGED|SCF has not converged", _ANY_CASE
        ),
        "ORCA reports an SCF that did not converge",
    ),
    (
        re.compile(r"optimi[sz]ation did not converge|OPTIMIZATION HAS NOT CONVERGED", _ANY_CASE),
        "ORCA reports that the geometry optimization did not converge: the modes are not those "
        "of a stationary point",
    ),
    (
        re.compile(r"ORCA finished by error termination", _ANY_CASE),
        "ORCA reports an error termination",
    ),
)


def _vibration_indices(lines: list[str], start: int, displacements: np.ndarray) -> np.ndarray:
    """Indices of the vibrations among ORCA's 3N modes.

    From ORCA's own statement of the first vibration and their number; when that is missing,
    the modes whose printed vector is not all zero.
    """
    text = "\n".join(lines[start:])
    first, count = _FIRST_VIB.search(text), _N_VIB.search(text)
    if first and count:
        k = int(first.group(1))
        return np.arange(k, k + int(count.group(1)))
    return np.flatnonzero(np.any(displacements != 0.0, axis=0))


def _method(lines: list[str], stop: int) -> str:
    """Electronic-structure method described from the SCF SETTINGS block ('' when absent).

    Layout (ORCA 5.0.0; for Hartree–Fock the first line reads ``Ab initio Hamiltonian  Method
    .... Hartree-Fock(GTOs)``, from memory)::

         Density Functional     Method          .... DFT(GTOs)
         Exchange Functional    Exchange        .... B88
         Correlation Functional Correlation     .... LYP
           Fraction HF Exchange ScalHFX         ....  0.200000
    """
    text = "\n".join(lines[:stop])

    def setting(label: str, key: str) -> str:
        found = re.findall(_SETTING.format(label=label, key=key), text, flags=re.MULTILINE)
        return found[-1] if found else ""

    kind = setting(r"(?:Density Functional|Ab initio Hamiltonian)", "Method")
    if kind.startswith("Hartree-Fock"):
        return "HF"
    if not kind.startswith("DFT"):
        return ""
    parts = [
        f"{x} {name}"
        for x, name in (
            (setting("Exchange Functional", "Exchange"), "exchange"),
            (setting("Correlation Functional", "Correlation"), "correlation"),
        )
        if x
    ]
    hfx = setting("Fraction HF Exchange", "ScalHFX")
    if hfx and float(hfx) > 0:
        parts.append(f"{100 * float(hfx):g}% HF exchange")
    return "DFT (" + ", ".join(parts) + ")" if parts else "DFT"


def _last_before(indices: list[int], stop: int) -> int | None:
    before = [i for i in indices if i < stop]
    return before[-1] if before else None


def _geometry(
    lines: list[str], ftitle: int, where: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, str]:
    """Atomic numbers, coordinates (Å) and masses (Da, or None) of the frequency job."""
    coord_title = _last_before(find_titles(lines, "CARTESIAN COORDINATES (ANGSTROEM)"), ftitle)
    if coord_title is None:
        raise InputFormatError(
            f"{where}: no CARTESIAN COORDINATES (ANGSTROEM) block before the frequencies"
        )
    symbols, coords = coordinates_block(lines, coord_title, where)
    z = atomic_numbers_from_symbols(symbols, where)
    mass_title = _last_before(find_titles(lines, "CARTESIAN COORDINATES (A.U.)"), ftitle)
    if mass_title is None:
        return z, coords, None, ""
    masses = masses_block(lines, mass_title, len(symbols), where)
    return z, coords, masses, "as printed by ORCA (CARTESIAN COORDINATES (A.U.), 3 decimals)"


def _check_not_cut_at_a_title(lines: list[str], where: str) -> None:
    """A file whose last line is the bare title of a block ORCA prints was cut there."""
    last = next((line.strip() for line in reversed(lines) if line.strip()), "")
    for title in ("VIBRATIONAL FREQUENCIES", "NORMAL MODES", "RAMAN SPECTRUM"):
        if last == title:
            raise truncated_error(where, f"the file ends at the title of the {title} block")


def _raman_invariants(
    lines: list[str], ftitle: int, vib: np.ndarray, freqs_all: np.ndarray, where: str
) -> tuple[np.ndarray | None, np.ndarray | None, list[str]]:
    """(a², γ², notes) from the RAMAN SPECTRUM block after the frequencies (None if absent)."""
    raman_titles = [i for i in find_titles(lines, "RAMAN SPECTRUM") if i > ftitle]
    if not raman_titles:
        return None, None, ["no RAMAN SPECTRUM block: frequencies and modes only"]
    rows = raman_block(lines, raman_titles[0], where)
    missing = [int(k) for k in vib if int(k) not in rows]
    if missing:
        raise InputFormatError(
            f"{where}: RAMAN SPECTRUM block has no row for mode {missing[0]}; the file looks "
            "truncated or edited"
        )
    table = np.array([rows[int(k)] for k in vib])
    if np.any(np.abs(table[:, 0] - freqs_all[vib]) > 0.015):
        raise InputFormatError(
            f"{where}: RAMAN SPECTRUM frequencies differ from VIBRATIONAL FREQUENCIES"
        )
    a2, gamma2 = invariants_from_printed(table[:, 1], table[:, 2])
    return (
        a2,
        gamma2,
        [
            "a2, gamma2 from the printed activity and plane-polarized depolarization ratio",
            "ratios printed for modes of zero activity ignored",
        ],
    )


def _ir_intensities(
    lines: list[str], ftitle: int, vib: np.ndarray, where: str
) -> tuple[np.ndarray | None, str]:
    """IR intensities (km/mol) of the vibrations from the IR SPECTRUM block, and a note."""
    titles = [i for i in find_titles(lines, "IR SPECTRUM") if i > ftitle]
    if not titles:
        return None, "no IR SPECTRUM block: no IR intensities"
    rows = ir_spectrum_block(lines, titles[0], where)
    if rows is None:
        return None, (
            "IR SPECTRUM block without an 'Int' column in km/mol (another ORCA layout): IR "
            "intensities not read"
        )
    missing = [int(k) for k in vib if int(k) not in rows]
    if missing:
        raise InputFormatError(
            f"{where}: IR SPECTRUM block has no row for mode {missing[0]}; the file looks "
            "truncated or edited"
        )
    return np.array([rows[int(k)] for k in vib]), "IR intensities (km/mol) as printed"


def _program_irreps(
    freqs: Frequencies, nm_irreps: dict[int, str], vib: np.ndarray, where: str
) -> tuple[tuple[str, ...] | None, list[str], list[str]]:
    """Species ORCA printed for the vibrations (None without symmetry), notes, and warnings.

    The labels of the frequency list are used; those under the NORMAL MODES columns are the same
    labels printed twice.  When the two disagree, or some vibration has none, no labels are kept
    (the numbers are unaffected) and a warning says why.
    """
    listed = {k: v for k, v in enumerate(freqs.irreps) if v}
    if not listed and not nm_irreps:
        return None, [], []
    differ = [k for k in sorted(set(listed) & set(nm_irreps)) if listed[k] != nm_irreps[k]]
    labels = {**nm_irreps, **listed}
    unlabelled = [int(k) for k in vib if int(k) not in labels]
    problem = ""
    if differ:
        k = differ[0]
        problem = (
            f"ORCA mode {k} is labelled {listed[k]} in VIBRATIONAL FREQUENCIES but "
            f"{nm_irreps[k]} in NORMAL MODES"
        )
    elif unlabelled:
        problem = f"ORCA printed species for some vibrations but not for mode {unlabelled[0]}"
    if problem:
        note = f"{problem}: the printed species are not used"
        return None, [note], [f"{where}: {note}"]
    group = freqs.point_group or "its point group"
    return (
        tuple(labels[int(k)] for k in vib),
        [
            f"ORCA ran with symmetry ({group}); its species label of every vibration is kept as "
            "printed (program_irreps)"
        ],
        [],
    )


def _orca_warnings(lines: list[str], where: str) -> tuple[list[str], list[str]]:
    """(warnings to pass on, provenance notes) from what ORCA says about its own run.

    ORCA's statements of failed or unconverged steps (:data:`_RESULT_WARNINGS`) and any line
    holding the word ``WARNING`` (in capitals) after the echo of the input become warnings;
    the ``WARNINGS`` block ORCA prints before the input (about set-up: parallel start,
    symmetry switched off) becomes notes only.  Repeated lines count once.
    """
    input_echo = next((i for i, line in enumerate(lines) if line.strip() == "INPUT FILE"), 0)
    setup: list[str] = []
    found: dict[str, list[int]] = {}  # message → line numbers
    for i, line in enumerate(lines):
        text = line.strip()
        meanings = [meaning for pattern, meaning in _RESULT_WARNINGS if pattern.search(text)]
        for meaning in meanings:
            found.setdefault(f"{meaning}: {text.strip('*= ')!r}", []).append(i + 1)
        if meanings or not re.search(r"\bWARNING\b", text):
            continue
        follow = lines[i + 1].strip() if i + 1 < len(lines) else ""
        said = text.strip("* ") + (f" {follow}" if follow.startswith("===>") else "")
        if i < input_echo:
            setup.append(said)
        else:
            found.setdefault(f"ORCA printed: {said}", []).append(i + 1)
    passed = [
        f"{m} (line {at[0]}" + (f", and {len(at) - 1} more times)" if len(at) > 1 else ")")
        for m, at in found.items()
    ]
    notes = [f"ORCA set-up: {s}" for s in dict.fromkeys(setup)]
    notes += [f"ORCA warning passed on: {m}" for m in passed]
    return [f"{where}: {m}" for m in passed], notes


def _polarizability_ang3(lines: list[str], ftitle: int, where: str) -> np.ndarray | None:
    """The last static polarizability printed before the frequencies, in Å³ (or None)."""
    titles = (
        i
        for i in range(ftitle)
        if lines[i].strip().startswith(("THE POLARIZABILITY TENSOR", "STATIC POLARIZABILITY"))
    )
    title = max(titles, default=None)
    return None if title is None else polarizability_block(lines, title, where) * BOHR3_TO_ANG3


def parse_orca(text: str, where: str = "ORCA output") -> ModeSet:
    """Build a :class:`ModeSet` from the text of an ORCA output (see the module docstring).

    Raises
    ------
    InputFormatError
        When the output has no frequency block, or a block is truncated or garbled.
    """
    lines = text.splitlines()
    _check_not_cut_at_a_title(lines, where)
    freq_titles = find_titles(lines, "VIBRATIONAL FREQUENCIES")
    if not freq_titles:
        raise InputFormatError(
            f"{where}: ORCA output has no vibrational data (no VIBRATIONAL FREQUENCIES block); "
            "use the output of a frequency job"
        )
    ftitle = freq_titles[-1]
    z, coords, masses, masses_note = _geometry(lines, ftitle, where)
    n_coords = 3 * len(z)
    freq_block = frequencies_block(lines, ftitle, where)
    freqs_all = freq_block.freqs_cm1
    if freqs_all.size != n_coords:
        raise InputFormatError(
            f"{where}: {freqs_all.size} frequencies printed for {len(z)} atoms, expected "
            f"3N = {n_coords}; the file looks truncated or edited"
        )
    nm_titles = [i for i in find_titles(lines, "NORMAL MODES") if i > ftitle]
    if not nm_titles:
        raise truncated_error(
            where,
            f"ORCA VIBRATIONAL FREQUENCIES block at line {ftitle + 1} has no NORMAL MODES after it",
        )
    printed, nm_irreps = normal_modes_block(lines, nm_titles[0], n_coords, where)
    vib = _vibration_indices(lines, nm_titles[0], printed)
    if vib.size == 0 or vib[-1] >= n_coords or np.any(np.all(printed[:, vib] == 0.0, axis=0)):
        raise InputFormatError(
            f"{where}: cannot tell which ORCA modes are vibrations (a vibration's printed vector "
            "is zero); the file looks edited"
        )
    modes = modes_from_displacements(
        printed[:, vib].T, default_masses(z) if masses is None else masses
    )
    a2, gamma2, raman_notes = _raman_invariants(lines, ftitle, vib, freqs_all, where)
    ir, ir_note = _ir_intensities(lines, ftitle, vib, where)
    irreps, irrep_notes, irrep_messages = _program_irreps(freq_block, nm_irreps, vib, where)
    messages, warning_notes = _orca_warnings(lines, where)
    messages = irrep_messages + messages
    notes = [
        f"ORCA printed all {n_coords} modes; the {n_coords - vib.size} rigid-body ones are dropped",
        *raman_notes,
        ir_note,
        *irrep_notes,
        *warning_notes,
    ]
    keywords = [m.group(1).strip() for m in map(_KEYWORDS.match, lines) if m]
    if keywords:
        notes.append("ORCA input keywords: " + " ".join(keywords))
    energies = [float(m.group(1)) for m in map(_ENERGY.match, lines[:ftitle]) if m]
    provenance = Provenance(
        source_file=where,
        source_kind="orca",
        program="ORCA",
        program_version=next((m.group(1) for m in map(_VERSION.search, lines[:200]) if m), ""),
        method=_method(lines, ftitle),
        basis=next((m.group(1) for m in map(_BASIS.search, lines) if m), ""),
        masses=masses_note,
        notes=tuple(notes),
    )
    modes_set = ModeSet(
        atomic_numbers=z,
        coordinates_ang=coords,
        freqs_cm1=freqs_all[vib],
        modes=modes,
        masses_da=masses,
        a2=a2,
        gamma2=gamma2,
        polarizability_ang3=_polarizability_ang3(lines, ftitle, where),
        energy_hartree=energies[-1] if energies else None,
        provenance=provenance,
        ir_intensity_km_mol=ir,
        program_irreps=irreps,
    )
    for message in messages:
        warnings.warn(message, AccuracyWarning, stacklevel=2)
    return modes_set


def read_orca(path: str | Path) -> ModeSet:
    """Read an ORCA output file (see the module docstring for what is read)."""
    return parse_orca(read_text(path), where=str(path))


def sniff_orca(head: str, tail: str) -> bool:
    """True for text with ORCA's banner (``* O   R   C   A *``)."""
    return "O   R   C   A" in head


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "orca",
    "ORCA 5/6 output (frequencies, modes, Raman activity and ratio)",
    sniff_orca,
    read_orca,
)
