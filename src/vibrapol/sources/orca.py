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
* Not read: the IR block into the ModeSet (:func:`ir_spectrum_block` returns it separately),
  thermochemistry, and any polarizability derivatives (ORCA does not print them).

The method is described from the ``SCF SETTINGS`` block (e.g. "DFT (B88 exchange, LYP
correlation, 20% HF exchange)"), since ORCA prints no functional name there; the simple-input
keyword lines (``! ...``) are kept in the provenance notes.
"""

from __future__ import annotations

import re
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
from vibrapol.sources.registry import Reader, read_text, register
from vibrapol.units import BOHR3_TO_ANG3
from vibrapol.vibrations import modes_from_displacements

_FREQ_LINE = re.compile(r"^\s*(\d+):\s+(-?\d+\.\d+)\s+cm\*\*-1")
_TABLE_ROW = re.compile(r"^\s*(\d+):\s+(.*)$")
_FIRST_VIB = re.compile(r"The first frequency considered to be a vibration is\s+(\d+)")
_N_VIB = re.compile(r"The total number of vibrations considered is\s+(\d+)")
_ENERGY = re.compile(r"^FINAL SINGLE POINT ENERGY\s+(-?\d+\.\d+)")
_VERSION = re.compile(r"Program Version\s+(\S+)")
_BASIS = re.compile(r"Your calculation utilizes the basis:\s*(\S+)")
_KEYWORDS = re.compile(r"^\|\s*\d+>\s*!(.*)$")
_SETTING = r"^\s*{label}\s+{key}\s+\.\.\.\.\s+(\S+)"


def find_titles(lines: list[str], title: str, stop: int | None = None) -> list[int]:
    """Indices of the lines (before ``stop``) that are exactly ``title``, underlined by dashes."""
    end = len(lines) if stop is None else stop
    return [
        i
        for i in range(min(end, len(lines) - 1))
        if lines[i].strip() == title and lines[i + 1].lstrip().startswith("---")
    ]


def _truncated(where: str, block: str, line: int) -> InputFormatError:
    return truncated_error(where, f"ORCA {block} block ends early at line {line + 1}")


def coordinates_block(lines: list[str], title: int, where: str) -> tuple[list[str], np.ndarray]:
    """Element symbols and positions in Å.  ``title`` is the index of the title line.

    Layout (own numbers)::

        ---------------------------------
        CARTESIAN COORDINATES (ANGSTROEM)
        ---------------------------------
          O      0.000000    0.000000    0.118300
          H      0.000000    0.761200   -0.473200
          H      0.000000   -0.761200   -0.473200
        (blank line)
    """
    symbols, coords = [], []
    for i in range(title + 2, len(lines)):
        tokens = lines[i].split()
        if not tokens:
            break
        if len(tokens) != 4:
            raise InputFormatError(
                f"{where}: line {i + 1}: expected 'symbol x y z', got {lines[i].strip()!r}"
            )
        symbols.append(tokens[0])
        coords.append(floats(" ".join(tokens[1:]), f"{where}: line {i + 1}"))
    if not symbols:
        raise _truncated(where, "CARTESIAN COORDINATES (ANGSTROEM)", title + 2)
    return symbols, np.array(coords)


def masses_block(lines: list[str], title: int, n_atoms: int, where: str) -> np.ndarray:
    """Atomic masses in Da from the a.u. coordinate table.

    Layout (own numbers)::

        ----------------------------
        CARTESIAN COORDINATES (A.U.)
        ----------------------------
          NO LB      ZA    FRAG     MASS         X           Y           Z
           0 O     8.0000    0    15.999    0.000000    0.000000    0.223553
           1 H     1.0000    0     1.008    0.000000    1.438452   -0.894212
    """
    masses = []
    for i in range(title + 3, title + 3 + n_atoms):
        tokens = lines[i].split() if i < len(lines) else []
        if len(tokens) < 8:
            raise _truncated(where, "CARTESIAN COORDINATES (A.U.)", i)
        masses.append(floats(tokens[4], f"{where}: line {i + 1}")[0])
    return np.array(masses)


def frequencies_block(lines: list[str], title: int, where: str) -> np.ndarray:
    """All 3N wavenumbers in cm⁻¹ (imaginary ones negative), in ORCA's mode order.

    Layout (own numbers; an imaginary mode is printed negative and flagged, from memory)::

        -----------------------
        VIBRATIONAL FREQUENCIES
        -----------------------

        Scaling factor for frequencies =  1.000000000 (already applied!)

           0:         0.00 cm**-1
           ...
           6:      -120.40 cm**-1 ***imaginary mode***
           7:      1650.25 cm**-1
    """
    freqs: list[float] = []
    for i in range(title + 2, len(lines)):
        match = _FREQ_LINE.match(lines[i])
        if match:
            if int(match.group(1)) != len(freqs):
                raise InputFormatError(
                    f"{where}: line {i + 1}: frequencies out of order in ORCA output"
                )
            freqs.append(float(match.group(2)))
        elif freqs:
            break
    if not freqs:
        raise _truncated(where, "VIBRATIONAL FREQUENCIES", title + 2)
    return np.array(freqs)


def normal_modes_block(lines: list[str], title: int, n_coords: int, where: str) -> np.ndarray:
    """The 3N × 3N matrix of printed mode vectors, one column per mode.

    Layout (own numbers; six columns per block, blocks follow each other directly)::

        ------------
        NORMAL MODES
        ------------

        These modes are the Cartesian displacements weighted by the diagonal matrix
        M(i,i)=1/sqrt(m[i]) where m[i] is the mass of the displaced atom
        Thus, these vectors are normalized but *not* orthogonal

                          0          1          2          3          4          5
              0       0.000000   0.000000   0.000000   0.000000   0.000000   0.000000
              ...
              8       0.000000   0.000000   0.000000   0.000000   0.000000   0.000000
                          6          7          8
              0      -0.068320  -0.050512   0.000000
              ...
    """
    matrix = np.full((n_coords, n_coords), np.nan)
    i = title + 2
    while i < len(lines) and not _is_header(lines[i]):
        if lines[i].lstrip().startswith("---") or "SPECTRUM" in lines[i]:
            raise _truncated(where, "NORMAL MODES", i)
        i += 1
    while i < len(lines) and _is_header(lines[i]):
        cols = [int(t) for t in lines[i].split()]
        if max(cols) >= n_coords:
            raise InputFormatError(f"{where}: line {i + 1}: mode index beyond 3N = {n_coords}")
        for row in range(n_coords):
            i += 1
            tokens = lines[i].split() if i < len(lines) else []
            if len(tokens) != len(cols) + 1 or tokens[0] != str(row):
                raise _truncated(where, "NORMAL MODES", i)
            matrix[row, cols] = floats(" ".join(tokens[1:]), f"{where}: line {i + 1}")
        i += 1
    if np.isnan(matrix).any():
        raise _truncated(where, "NORMAL MODES", i)
    return matrix


def _is_header(line: str) -> bool:
    tokens = line.split()
    return bool(tokens) and all(t.isdigit() for t in tokens)


def _mode_table(
    lines: list[str], title: int, n_values: int, block: str, where: str
) -> dict[int, list[float]]:
    """Rows ``k: v1 v2 ...`` after the dashed rule under a column header, up to a blank line."""
    i = title + 2
    while i < len(lines) and not lines[i].startswith("---"):
        i += 1
    rows: dict[int, list[float]] = {}
    for j in range(i + 1, len(lines)):
        match = _TABLE_ROW.match(lines[j])
        if not match:
            break
        values = match.group(2).replace("(", " ").replace(")", " ").split()[:n_values]
        if len(values) < n_values:
            raise truncated_error(
                where, f"ORCA {block} row at line {j + 1} has {len(values)} of {n_values} numbers"
            )
        rows[int(match.group(1))] = floats(" ".join(values), f"{where}: line {j + 1}")
    if not rows:
        raise _truncated(where, block, i + 1)
    return rows


def raman_block(lines: list[str], title: int, where: str) -> dict[int, tuple[float, float, float]]:
    """Mode index → (wavenumber cm⁻¹, activity Å⁴/amu, depolarization ratio, plane-polarized).

    Layout (own numbers)::

        --------------
        RAMAN SPECTRUM
        --------------

         Mode    freq (cm**-1)   Activity   Depolarization
        -------------------------------------------------------------------
           6:      1650.25      5.123456      0.692110
           7:      3802.77     88.004512      0.182233
           8:      3911.40      0.000000      0.412345
    """
    rows = _mode_table(lines, title, 3, "RAMAN SPECTRUM", where)
    return {k: (v[0], v[1], v[2]) for k, v in rows.items()}


def ir_spectrum_block(lines: list[str], title: int, where: str) -> dict[int, float]:
    """Mode index → IR intensity in km/mol (not stored in a ModeSet; used for checks).

    Layout (own numbers)::

        -----------
        IR SPECTRUM
        -----------

         Mode   freq       eps      Int      T**2         TX        TY        TZ
               cm**-1   L/(mol*cm) km/mol    a.u.
        ----------------------------------------------------------------------------
          6:   1650.25   0.012345   62.39  0.003740  ( 0.000000 -0.061155  0.000000)
    """
    rows = _mode_table(lines, title, 3, "IR SPECTRUM", where)
    return {k: v[2] for k, v in rows.items()}


def polarizability_block(lines: list[str], title: int, where: str) -> np.ndarray:
    """Static polarizability, raw Cartesian tensor in a.u. (bohr³).

    Layout (own numbers; ORCA 6 prints more digits and a few description lines first)::

        -------------------------
        THE POLARIZABILITY TENSOR
        -------------------------

        The raw cartesian tensor (atomic units):
            8.51230      0.00000      0.00000
            0.00000      6.92401      0.00000
            0.00000      0.00000      7.71050
    """
    for i in range(title, min(title + 30, len(lines))):
        if lines[i].strip().startswith("The raw cartesian tensor"):
            rows = [
                floats(lines[i + k], f"{where}: line {i + k + 1}")
                for k in (1, 2, 3)
                if i + k < len(lines)
            ]
            if len(rows) != 3 or any(len(r) != 3 for r in rows):
                raise _truncated(where, "POLARIZABILITY TENSOR", i + 1)
            return np.array(rows)
    raise _truncated(where, "POLARIZABILITY TENSOR", title + 2)


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
    freqs_all = frequencies_block(lines, ftitle, where)
    if freqs_all.size != n_coords:
        raise InputFormatError(
            f"{where}: {freqs_all.size} frequencies printed for {len(z)} atoms, expected "
            f"3N = {n_coords}; the file looks truncated or edited"
        )
    nm_titles = [i for i in find_titles(lines, "NORMAL MODES") if i > ftitle]
    if not nm_titles:
        raise _truncated(where, "VIBRATIONAL FREQUENCIES (no NORMAL MODES after it)", ftitle)
    printed = normal_modes_block(lines, nm_titles[0], n_coords, where)
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
    notes = [
        f"ORCA printed all {n_coords} modes; the {n_coords - vib.size} rigid-body ones are dropped",
        *raman_notes,
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
    return ModeSet(
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
    )


def read_orca(path: str | Path) -> ModeSet:
    """Read an ORCA output file (see the module docstring for what is read)."""
    return parse_orca(read_text(path), where=str(path))


def sniff_orca(head: str, tail: str) -> bool:
    """True for text with ORCA's banner (``* O   R   C   A *``)."""
    return "O   R   C   A" in head


register(
    Reader(
        "orca",
        "ORCA 5/6 output (frequencies, modes, Raman activity and ratio)",
        sniff_orca,
        read_orca,
    )
)
