"""Gaussian log files (``.log``/``.out``) of frequency jobs, ``Freq=Raman`` or plain ``Freq``.

What Gaussian prints, and what vibrapol takes from it:

- the geometry twice, in the *input* and in the *standard* orientation; the normal modes are
  printed in the standard orientation;
- per mode, in blocks of three: frequency (4 decimals), reduced mass, force constant, IR
  intensity, Raman activity (Å⁴/amu, 4 decimals), depolarization ratios for plane-polarized
  ("Depolar (P)") and unpolarized ("Depolar (U)") incident light (4 decimals), and Cartesian
  displacements (2 decimals, each mode normalised to unit length);
- the masses used ("Atom N has atomic number Z and mass M", 5 decimals);
- the archive block at the end, in the *input* orientation: the Cartesian Hessian (lower
  triangle, 8 decimals, hartree/bohr²), ``Polar`` (bohr³) and, for Raman jobs, ``PolarDeriv``
  (∂α/∂x, bohr², 18N values: xx, xy, yy, xz, yz, zz for each coordinate x1, y1, z1, x2, …).

The 2-decimal displacements give activities wrong by up to 30 % on divinylbenzene, so the modes
come from vibrapol's harmonic analysis of the archive Hessian; Hessian, derivatives and α are
rotated from the input to the standard orientation first (the rotation comes from the two
orientation tables), so the ModeSet is in the frame of the printed modes.  The printed masses
are rounded to 5 decimals; where one equals the most abundant isotope's mass within that
rounding the full value is used (Gaussian's own, e.g. 1.00782504 for ¹H in its fchk).
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources._common import floats
from vibrapol.sources.gaussian import (
    GaussianJob,
    PrintedModes,
    PrintPrecision,
    frame_rotation,
    program_version,
    read_job,
    rotate_dalpha_dx,
    rotate_hessian,
    square_from_lower_triangle,
    tensors_from_lower_triangle,
)
from vibrapol.sources.registry import Reader, register

#: Log precision: Hessian 8 decimals; frequencies, activities and ratios 4 decimals.  The
#: activity and ratio tolerances add, to half a printed unit, an allowance for the rounding of
#: the archive Hessian (10× the largest effect seen on the divinylbenzene files).
LOG_PRECISION = PrintPrecision(
    hessian_eps=5e-9,
    freq_atol_cm1=5e-5,
    freq_rtol=0.0,
    activity_atol=5e-5,
    activity_rtol=1e-5,
    rho_atol=1e-4,
)

#: A printed mass this close to the most abundant isotope's is that isotope (5 printed decimals).
MASS_PRINT_TOL_DA = 5e-6

_ORIENTATIONS_INPUT = ("Input orientation:", "Z-Matrix orientation:")
_ORIENTATION_STANDARD = ("Standard orientation:",)
_FREQ_HEADER = "Harmonic frequencies (cm**-1)"
_MASS_LINE = re.compile(r"^ Atom\s+\d+ has atomic number\s+(\d+) and mass\s+(\S+)")
_ROW_LABELS = {"Raman Activ": "activity", "Depolar (P)": "rho_linear", "Depolar (U)": "rho_natural"}


def sniff_gaussian_log(head: str, tail: str) -> bool:
    """True for a Gaussian log: its banner names the program."""
    return "Entering Gaussian System" in head or "This is part of the Gaussian(R)" in head


def read_program(lines: list[str]) -> tuple[str, str]:
    """Program and revision from the build line printed at the start of each job.

    Layout::

         Gaussian 16:  ES64L-G16RevC.01  3-Jul-2019
    """
    for line in lines:
        if line.startswith(" Gaussian ") and "Rev" in line:
            found = program_version(line)
            if found[0]:
                return found
    return "Gaussian", ""


def read_orientation(
    lines: list[str], markers: tuple[str, ...], end: int
) -> tuple[np.ndarray, np.ndarray] | None:
    """Atomic numbers and coordinates (Å) of the last orientation table before line ``end``.

    Layout (invented numbers)::

                              Standard orientation:
         ---------------------------------------------------------------------
         Center     Atomic      Atomic             Coordinates (Angstroms)
         Number     Number       Type             X           Y           Z
         ---------------------------------------------------------------------
              1          8           0        0.712345   -0.101010    0.050505
              2          1           0        1.234567    0.707070   -0.030303
         ---------------------------------------------------------------------

    Older versions omit the "Atomic Type" column; the last three columns are always X, Y, Z.
    """
    starts = [i for i in range(end) if any(m in lines[i] for m in markers)]
    if not starts:
        return None
    z, xyz = [], []
    for line in lines[starts[-1] + 5 : end]:
        if line.startswith(" ---"):
            break
        fields = floats(line, "orientation table")
        z.append(int(fields[1]))
        xyz.append(fields[-3:])
    if not z:
        return None
    return np.array(z), np.array(xyz)


def read_masses(lines: list[str], n_atoms: int) -> np.ndarray | None:
    """Masses (Da) printed before the thermochemistry, the last ``n_atoms`` such lines.

    Layout::

         Atom     1 has atomic number  8 and mass  15.99491
         Atom     2 has atomic number  1 and mass   2.01410
    """
    masses = [float(m.group(2)) for line in lines if (m := _MASS_LINE.match(line))]
    if len(masses) < n_atoms:
        return None
    return np.array(masses[-n_atoms:])


def snap_masses(atomic_numbers: np.ndarray, printed: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Replace 5-decimal masses by the most abundant isotope's exact mass where they agree.

    Returns the masses and a mask of those left as printed (other isotopes).
    """
    exact = default_masses(atomic_numbers)
    same = np.abs(exact - printed) <= MASS_PRINT_TOL_DA
    return np.where(same, exact, printed), ~same


def _mass_precision(masses: np.ndarray, as_printed: np.ndarray) -> tuple[str, PrintPrecision]:
    """Provenance text for the masses, and the tolerances widened for 5-decimal masses."""
    note = "printed in the log (5 decimals)"
    if not np.all(as_printed):
        note += "; where equal to the most abundant isotope within rounding, its exact mass"
    if not np.any(as_printed):
        return note, LOG_PRECISION
    # ν ∝ m^(-1/2) at most and S ∝ 1/m at most: relative rounding of the lightest such mass
    rel = MASS_PRINT_TOL_DA / float(masses[as_printed].min())
    widened = dataclasses.replace(
        LOG_PRECISION,
        freq_rtol=LOG_PRECISION.freq_rtol + 0.5 * rel,
        activity_rtol=LOG_PRECISION.activity_rtol + rel,
    )
    return note, widened


def _numbers(text: str, where: str) -> list[float]:
    """Numbers of a printed row; a field Gaussian filled with '*' (overflow) becomes NaN."""
    return [np.nan if set(tok) == {"*"} else floats(tok, where)[0] for tok in text.split()]


def read_frequency_blocks(lines: list[str], n_atoms: int, where: str) -> PrintedModes:
    """Per-mode rows and displacements of the last frequency section, three modes per block.

    Layout (invented numbers)::

                              1                      2                      3
                              A                      A                      A
         Frequencies --    412.3456              1023.4567              3456.7890
         Red. masses --      1.2345                 2.3456                 1.0456
         Frc consts  --      0.1234                 1.4567                 7.3456
         IR Inten    --      3.4567                 0.1234                12.3456
         Raman Activ --      1.2345                 7.6543                45.6789
         Depolar (P) --      0.7500                 0.2345                 0.1234
         Depolar (U) --      0.8571                 0.3799                 0.2197
          Atom  AN      X      Y      Z        X      Y      Z        X      Y      Z
             1   8     0.01  -0.02   0.03     0.10   0.20  -0.05     0.00   0.01   0.02
             2   1    -0.50   0.40   0.30     0.12  -0.60   0.25     0.70  -0.70   0.01

    Raises
    ------
    InputFormatError
        No frequency section, or a block cut short (truncated file).
    """
    starts = [i for i, line in enumerate(lines) if _FREQ_HEADER in line]
    if not starts:
        raise InputFormatError(f"{where}: no vibrational frequencies found (is it a Freq job?)")
    freqs: list[float] = []
    rows: dict[str, list[float]] = {key: [] for key in _ROW_LABELS.values()}
    columns: list[np.ndarray] = []
    i = starts[-1]
    while i < len(lines) and "Thermochemistry" not in lines[i]:
        if not lines[i].startswith(" Frequencies -- "):
            i += 1
            continue
        block = _numbers(lines[i].split("--", 1)[1], where)
        freqs += block
        i += 1
        while i < len(lines) and not lines[i].startswith("  Atom  AN"):
            label, _, values = lines[i].partition("--")
            if label.strip() in _ROW_LABELS:
                rows[_ROW_LABELS[label.strip()]] += _numbers(values, where)
            i += 1
        table = [_numbers(line, where) for line in lines[i + 1 : i + 1 + n_atoms]]
        if len(table) < n_atoms or any(len(r) != 2 + 3 * len(block) for r in table):
            raise InputFormatError(
                f"{where}: normal-mode table cut short after mode {len(freqs)} (truncated file?)"
            )
        disp = np.array(table)[:, 2:].reshape(n_atoms, len(block), 3)
        columns += [disp[:, k, :].ravel() for k in range(len(block))]
        i += 1 + n_atoms
    if not freqs:
        raise InputFormatError(f"{where}: frequency section has no modes (truncated file?)")
    found = {key: np.array(v) if len(v) == len(freqs) else None for key, v in rows.items()}
    return PrintedModes(freqs_cm1=np.array(freqs), displacements=np.array(columns), **found)


@dataclass(frozen=True, eq=False)
class Archive:
    """The archive block of one job: header fields, ``key=value`` results, Hessian values."""

    header: list[str]
    results: dict[str, str]
    hessian: np.ndarray | None


def read_archive(lines: list[str], where: str) -> Archive | None:
    r"""The last archive block of a Freq job (else the last one): ``\`` fields, ``\\`` sections.

    Layout (invented numbers, lines of 70 characters after one blank)::

         1\1\GINC-HOST\Freq\RB3LYP\STO-3G\H2O2\USER\01-Jan-2024\0\\#p rb3lyp
         /sto-3g freq=raman\\Title\\0,1\O,0.,0.,0.\ ... \\Version=ES64L-G16Re
         vC.01\HF=-150.123456\Polar=4.1,0.2,3.9,0.1,0.,2.8\PolarDeriv=1.234567
         8,0.,-0.5, ... \NImag=0\\0.51234567,0.,0.4, ... \\0.00001, ... \\@

    The results section starts with ``Version=``; the section after it is the Hessian.
    """
    starts = [i for i, line in enumerate(lines) if line.startswith(" 1\\1\\")]
    if not starts:
        return None
    # the job type is the fourth field of the first line (later jobs of a compound input may
    # have archives of their own without a Hessian)
    freq_jobs = [i for i in starts if "\\Freq\\" in lines[i]]
    text = ""
    for line in lines[(freq_jobs or starts)[-1] :]:
        text += line[1:]
        if "@" in line:
            break
    else:
        raise InputFormatError(f"{where}: archive block is cut short (truncated file?)")
    sections = text.split("\\\\")
    k = next((j for j, s in enumerate(sections) if s.startswith("Version=")), None)
    if k is None:
        raise InputFormatError(f"{where}: archive block has no results section (garbled file?)")
    results = dict(field.split("=", 1) for field in sections[k].split("\\") if "=" in field)
    hessian = None
    if k + 1 < len(sections) and sections[k + 1] and sections[k + 1] != "@":
        hessian = np.array(_archive_numbers(sections[k + 1], "archive Hessian", where))
    return Archive(header=sections[0].split("\\"), results=results, hessian=hessian)


def _archive_numbers(text: str, what: str, where: str) -> list[float]:
    try:
        return [float(tok) for tok in text.split(",")]
    except ValueError as exc:
        raise InputFormatError(f"{where}: {what} holds a non-number ({exc})") from exc


def _tensor_field(archive: Archive, key: str, count: int, where: str) -> np.ndarray | None:
    if key not in archive.results:
        return None
    values = np.array(_archive_numbers(archive.results[key], f"archive {key}", where))
    if values.size != count:
        raise InputFormatError(f"{where}: archive {key} has {values.size} values, expected {count}")
    return tensors_from_lower_triangle(values.reshape(-1, 6))


def parse_gaussian_log(text: str, where: str = "Gaussian log") -> GaussianJob:
    """Everything vibrapol needs from a Gaussian log, in the standard orientation."""
    lines = text.splitlines()
    end = next((i for i in range(len(lines) - 1, -1, -1) if _FREQ_HEADER in lines[i]), len(lines))
    standard = read_orientation(lines, _ORIENTATION_STANDARD, end)
    given = read_orientation(lines, _ORIENTATIONS_INPUT, end)
    if standard is None and given is None:
        raise InputFormatError(f"{where}: no geometry (orientation table) before the frequencies")
    z, coords = standard if standard is not None else given
    n = len(z)
    printed = read_frequency_blocks(lines, n, where)
    program, version = read_program(lines)
    prov = Provenance(
        source_file=where, source_kind="gaussian-log", program=program, program_version=version
    )
    masses = read_masses(lines, n)
    precision = LOG_PRECISION
    if masses is None:
        prov = prov.with_note("no masses printed: most abundant isotopes")
    else:
        masses, as_printed = snap_masses(z, masses)
        mass_note, precision = _mass_precision(masses, as_printed)
        prov = dataclasses.replace(prov, masses=mass_note)
    archive = read_archive(lines, where)
    if archive is None and not any("Normal termination" in line for line in lines[-50:]):
        raise InputFormatError(
            f"{where}: the job did not finish (no archive block, no normal termination); "
            "give the complete log"
        )
    hessian = dalpha = polar = energy = None
    if archive is not None:
        rot = np.eye(3) if given is None else frame_rotation(given[1], coords, where)
        if len(archive.header) > 5:
            prov = dataclasses.replace(prov, method=archive.header[4], basis=archive.header[5])
        if archive.hessian is not None:
            hessian = rotate_hessian(square_from_lower_triangle(archive.hessian, 3 * n, where), rot)
            prov = prov.with_note("modes from vibrapol's harmonic analysis of the archive Hessian")
        pd = _tensor_field(archive, "PolarDeriv", 18 * n, where)
        dalpha = None if pd is None else rotate_dalpha_dx(pd, rot)
        pol = _tensor_field(archive, "Polar", 6, where)
        polar = None if pol is None else rot @ pol[0] @ rot.T
        if "HF" in archive.results:
            energy = _archive_numbers(archive.results["HF"], "archive HF", where)[0]
        if not np.allclose(rot, np.eye(3)):
            prov = prov.with_note(
                "archive Hessian, Polar, PolarDeriv rotated from input to standard orientation"
            )
    return GaussianJob(
        atomic_numbers=z,
        coordinates_ang=coords,
        masses_da=masses,
        hessian_au=hessian,
        dalpha_dx_au=dalpha,
        polarizability_au=polar,
        energy_hartree=energy,
        printed=printed,
        precision=precision,
        provenance=prov,
    )


def read_gaussian_log(path: str | Path) -> ModeSet:
    """Read a Gaussian log of a frequency job into a :class:`~vibrapol.modeset.ModeSet`."""
    return read_job(parse_gaussian_log, path)


register(
    Reader(
        "gaussian-log",
        "Gaussian log of a Freq or Freq=Raman job (archive Hessian and derivatives)",
        sniff_gaussian_log,
        read_gaussian_log,
    )
)
