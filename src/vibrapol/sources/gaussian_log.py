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
from vibrapol.sources._common import check_printed, floats
from vibrapol.sources.gaussian import (
    GaussianJob,
    PrintedModes,
    PrintPrecision,
    frame_rotation,
    program_version,
    rotate_dalpha_dx,
    rotate_hessian,
    square_from_lower_triangle,
    tensors_from_lower_triangle,
)
from vibrapol.sources.gaussian_blocks import FREQ_HEADER, FrequencySection, read_sections
from vibrapol.sources.gaussian_build import read_job
from vibrapol.sources.gaussian_path import asks_projected, program_messages, route_blocks
from vibrapol.sources.registry import Reader

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
_MASS_LINE = re.compile(r"^ Atom\s+\d+ has atomic number\s+(\d+) and mass\s+(\S+)")


#: Lines only Gaussian itself prints at the start of a log (every version, every platform).
_PROGRAM_MARKS = ("Gaussian, Inc.", "Entering Link 1 = ")

#: Banners of Gaussian logs; the Windows builds of Gaussian 03 print only "Entering Link 1 =".
_BANNERS = (
    "Entering Gaussian System",
    "This is part of the Gaussian(R)",
    "This is the Gaussian(R)",
)


def is_program_log(head: str) -> bool:
    """True when Gaussian itself wrote the file (its copyright or link lines are there).

    Other programs that export frequency results in Gaussian's layout copy the frequency
    blocks, sometimes the "Entering Gaussian System" line, but not these nor a build string
    such as ``ES64L-G16RevC.01``.
    """
    return any(mark in head for mark in _PROGRAM_MARKS) or bool(program_version(head)[0])


def has_frequency_blocks(text: str) -> bool:
    """True when ``text`` holds a Gaussian-layout frequency block (any version, any writer).

    A ``Frequencies --`` (or ``---``) row and a displacement-table header (``Atom AN X Y Z``
    or ``Coord Atom Element:``) must both be there; the section header above them is not
    required (some exports leave it out).
    """
    has_row = re.search(r"^ +Frequencies ---? ", text, re.MULTILINE) is not None
    has_table = re.search(r"^ +(Atom +AN +X +Y +Z|Coord +Atom +Element:)", text, re.MULTILINE)
    return has_row and has_table is not None


def sniff_gaussian_log(head: str, tail: str) -> bool:
    r"""True for a Gaussian log, or a frequency export in Gaussian's layout.

    A log is known by its banner (``Entering Gaussian System``; Windows builds of Gaussian 03
    print only ``Entering Link 1 = C:\\...\\l1.exe`` and the copyright line); an export by
    its frequency blocks themselves (:func:`has_frequency_blocks`).
    """
    if any(banner in head for banner in _BANNERS):
        return True
    if "Entering Link 1 = " in head and "Gaussian" in head:
        return True
    return has_frequency_blocks(head) or has_frequency_blocks(tail)


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


@dataclass(frozen=True, eq=False)
class Archive:
    """The archive block of one job: header fields, route, results, Hessian and gradient."""

    header: list[str]
    results: dict[str, str]
    hessian: np.ndarray | None
    route: str = ""
    gradient: np.ndarray | None = None


def read_archive(lines: list[str], where: str) -> Archive | None:
    r"""The last archive block of a Freq job (else the last one): ``\`` fields, ``\\`` sections.

    Layout (invented numbers, lines of 70 characters after one blank)::

         1\1\GINC-HOST\Freq\RB3LYP\STO-3G\H2O2\USER\01-Jan-2024\0\\#p rb3lyp
         /sto-3g freq=raman\\Title\\0,1\O,0.,0.,0.\ ... \\Version=ES64L-G16Re
         vC.01\HF=-150.123456\Polar=4.1,0.2,3.9,0.1,0.,2.8\PolarDeriv=1.234567
         8,0.,-0.5, ... \NImag=0\\0.51234567,0.,0.4, ... \\0.00001, ... \\@

    The results section starts with ``Version=``; the section after it is the Hessian, the
    next one the Cartesian gradient (3N values); the route is the second section.
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
    hessian = gradient = None
    if k + 1 < len(sections) and sections[k + 1] and sections[k + 1] != "@":
        hessian = np.array(_archive_numbers(sections[k + 1], "archive Hessian", where))
        if k + 2 < len(sections) and sections[k + 2] and sections[k + 2] != "@":
            gradient = np.array(_archive_numbers(sections[k + 2], "archive gradient", where))
    return Archive(
        header=sections[0].split("\\"),
        results=results,
        hessian=hessian,
        route=sections[1] if len(sections) > 1 else "",
        gradient=gradient,
    )


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


def _dipole_derivatives(archive: Archive, n: int, rot: np.ndarray, where: str) -> np.ndarray | None:
    """Archive ``DipoleDeriv`` (9N values: μx, μy, μz per coordinate, e) in the standard frame."""
    if "DipoleDeriv" not in archive.results:
        return None
    values = np.array(_archive_numbers(archive.results["DipoleDeriv"], "DipoleDeriv", where))
    if values.size != 9 * n:
        raise InputFormatError(
            f"{where}: archive DipoleDeriv has {values.size} values, expected {9 * n}"
        )
    d = values.reshape(n, 3, 3)  # atom, coordinate, dipole component
    return np.einsum("cx,ixa,pa->icp", rot, d, rot).reshape(3 * n, 3)


def _merge_sections(
    main: FrequencySection, twin: FrequencySection | None, where: str
) -> tuple[PrintedModes, list[str]]:
    """One set of printed values: the high-precision section's where printed, else the usual.

    The usual section's values are compared with the high-precision ones (they are the same
    numbers rounded); a disagreement is reported with :class:`PrintedValueMismatch`.
    """
    notes = []
    if main.single_ratio or (twin is not None and twin.single_ratio):
        notes.append("one depolarization row (Gaussian 98 layout): read as plane-polarized light")
    if twin is None:
        if main.high_precision:
            notes.append("printed values from the high-precision block (Freq=HPModes)")
        return main.printed, notes
    hp, usual = (main, twin) if main.high_precision else (twin, main)
    usual_freqs, hp_freqs = usual.printed.freqs_cm1, hp.printed.freqs_cm1
    assert usual_freqs is not None and hp_freqs is not None  # read_section always sets them
    check_printed(
        "frequency (cm⁻¹) of the usual block",
        usual_freqs,
        hp_freqs,
        where=where,
        atol=1e-4,
        origin="",
        reference="the high-precision block",
    )
    fields = {}
    for field in dataclasses.fields(PrintedModes):
        value = getattr(hp.printed, field.name)
        fields[field.name] = value if value is not None else getattr(usual.printed, field.name)
    notes.append(
        "printed values from the high-precision block (Freq=HPModes: displacements with 5 "
        "decimals) where it has them, else from the usual block"
    )
    return PrintedModes(**fields), notes


def _require_finished(lines: list[str], text_head: str, messages: list[str], where: str) -> None:
    """Refuse a Gaussian log that stopped before writing its archive, unless it says why."""
    if not is_program_log(text_head):
        return
    if any("Normal termination" in line for line in lines[-50:]) or messages:
        return
    raise InputFormatError(
        f"{where}: the job did not finish (no archive block, no normal termination); "
        "give the complete log"
    )


def parse_gaussian_log(text: str, where: str = "Gaussian log") -> GaussianJob:
    """Everything vibrapol needs from a Gaussian log (or an export in its layout).

    Geometry in the standard orientation; printed values of the last frequency section (with
    its high-precision twin when printed); Hessian, derivatives, α, energy and gradient from
    the archive, rotated from the input orientation; the route's ``Freq=Projected``; and
    Gaussian's own failure lines (warned about and noted).
    """
    lines = text.splitlines()
    end = next((i for i in range(len(lines) - 1, -1, -1) if FREQ_HEADER in lines[i]), len(lines))
    standard = read_orientation(lines, _ORIENTATION_STANDARD, end)
    given = read_orientation(lines, _ORIENTATIONS_INPUT, end)
    messages = [f"Gaussian printed {message}" for message in program_messages(lines)]
    # the decisive line when the job died: "Error termination ..." if printed
    worst = next((m for m in messages if "Error termination" in m), messages[0] if messages else "")
    orientation = standard if standard is not None else given
    if orientation is None:
        if end == len(lines) and messages:
            raise InputFormatError(f"{where}: no vibrational frequencies; {worst}")
        raise InputFormatError(f"{where}: no geometry (orientation table) before the frequencies")
    z, coords = orientation
    n = len(z)
    try:
        main, twin = read_sections(lines, n, where)
    except InputFormatError as exc:
        if messages and end == len(lines):
            raise InputFormatError(f"{where}: no vibrational frequencies; {worst}") from None
        raise exc from None
    printed, block_notes = _merge_sections(main, twin, where)
    head = text[:200_000]
    exported = not is_program_log(head)
    program, version = ("", "") if exported else read_program(lines)
    prov = Provenance(
        source_file=where, source_kind="gaussian-log", program=program, program_version=version
    )
    if exported:
        prov = prov.with_note(
            "no Gaussian banner or copyright line: read as a frequency export in Gaussian's "
            "layout written by another program"
        )
    for note in [*block_notes, *messages]:
        prov = prov.with_note(note)
    masses = read_masses(lines, n)
    precision = LOG_PRECISION
    if masses is None:
        prov = prov.with_note("no masses printed: most abundant isotopes")
    else:
        masses, as_printed = snap_masses(z, masses)
        mass_note, precision = _mass_precision(masses, as_printed)
        prov = dataclasses.replace(prov, masses=mass_note)
    archive = read_archive(lines, where)
    if archive is None:
        _require_finished(lines, head, messages, where)
    routes = [route for i, route in route_blocks(lines) if i < end]
    projected = asks_projected(routes[-1] if routes else "") or (
        archive is not None and asks_projected(archive.route)
    )
    hessian = dalpha = polar = energy = gradient = dipole = None
    if archive is not None:
        rot = np.eye(3) if given is None else frame_rotation(given[1], coords, where)
        if len(archive.header) > 5:
            prov = dataclasses.replace(prov, method=archive.header[4], basis=archive.header[5])
        if archive.hessian is not None:
            hessian = rotate_hessian(square_from_lower_triangle(archive.hessian, 3 * n, where), rot)
            if not projected:
                prov = prov.with_note(
                    "modes from vibrapol's harmonic analysis of the archive Hessian"
                )
        if archive.gradient is not None and archive.gradient.size == 3 * n:
            gradient = (archive.gradient.reshape(n, 3) @ rot.T).ravel()
        pd = _tensor_field(archive, "PolarDeriv", 18 * n, where)
        dalpha = None if pd is None else rotate_dalpha_dx(pd, rot)
        dipole = _dipole_derivatives(archive, n, rot, where)
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
        gradient_au=gradient,
        projected=projected,
        messages=tuple(messages),
        dipole_deriv_au=dipole,
        overflow=tuple(dict.fromkeys([*main.overflow, *(twin.overflow if twin else ())])),
    )


def read_gaussian_log(path: str | Path) -> ModeSet:
    """Read a Gaussian log of a frequency job into a :class:`~vibrapol.modeset.ModeSet`."""
    return read_job(parse_gaussian_log, path)


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "gaussian-log",
    "Gaussian log of a Freq or Freq=Raman job (archive Hessian and derivatives)",
    sniff_gaussian_log,
    read_gaussian_log,
)
