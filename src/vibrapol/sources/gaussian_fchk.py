"""Gaussian formatted checkpoint files (``.fchk``) of frequency jobs.

What the file holds, all in the standard orientation and in atomic units (bohr, hartree):
``Current cartesian coordinates``, ``Real atomic weights`` (and, from Gaussian 16 on,
``Vib-AtMass``, the masses of the frequency analysis), ``Cartesian Force Constants`` (the
Hessian's lower triangle, 9 significant digits), ``Polarizability`` and, for Raman jobs,
``Polarizability Derivatives`` (3N rows of xx, xy, yy, xz, yz, zz, bohr²).  Gaussian 16 adds
the results of its own analysis: ``Vib-E2`` (per mode, in groups of n values: frequencies,
reduced masses, force constants, IR intensities, Raman activities, depolarization ratios for
plane-polarized and for unpolarized light, …) and ``Vib-Modes`` (Cartesian displacements,
each mode of unit length).  Older files (Gaussian 09) have only the Hessian and derivatives.

vibrapol always takes the modes from its harmonic analysis of the Hessian and the Raman data
from the derivatives; ``Vib-E2`` and ``Vib-Modes``, when present, are only compared with them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.sources.gaussian import (
    GaussianJob,
    PrintedModes,
    PrintPrecision,
    program_version,
    square_from_lower_triangle,
    tensors_from_lower_triangle,
)
from vibrapol.sources.gaussian_build import read_job
from vibrapol.sources.gaussian_path import asks_projected
from vibrapol.sources.registry import Reader
from vibrapol.units import BOHR_ANG

#: Rows of ``Vib-E2`` that vibrapol compares (0-based; each row holds one value per mode).
VIB_E2_ROWS = {
    "freqs_cm1": 0,
    "ir_intensity": 3,
    "activity": 4,
    "rho_linear": 5,
    "rho_natural": 6,
}

_COUNT = re.compile(r"^N=\s*(\d+)$")
_PER_LINE = {"I": 6, "R": 5, "C": 5, "L": 72}


@dataclass(frozen=True, eq=False)
class FchkField:
    """One field of a formatted checkpoint: a scalar or an array (numbers or text)."""

    kind: str
    values: np.ndarray | str


def sniff_gaussian_fchk(head: str, tail: str) -> bool:
    """True for a formatted checkpoint: its third line is the typed ``Number of atoms`` field."""
    lines = head.splitlines()[:3]
    return len(lines) == 3 and re.match(r"^Number of atoms\s+I\s+\d+\s*$", lines[2]) is not None


def read_fields(lines: list[str], where: str) -> dict[str, FchkField]:
    """Every field after the two title lines.

    Layout (invented numbers)::

        Number of atoms                            I                4
        Total Energy                               R     -1.501234567890123E+02
        Atomic numbers                             I   N=           4
                   8           8           1           1
        Real atomic weights                        R   N=           4
          1.59949146E+01  1.59949146E+01  1.00782504E+00  2.01410178E+00

    Integers come six to a line, reals five, text five pieces of 12 characters.

    Raises
    ------
    InputFormatError
        When an array has fewer values than its ``N=`` announces (truncated file).
    """
    fields: dict[str, FchkField] = {}
    i = 2
    while i < len(lines):
        line = lines[i]
        i += 1
        # name in columns 1-40, type letter in column 44, then a value or "N=  count"
        if len(line) < 45 or line[0] == " " or line[40:43] != "   " or line[43] not in _PER_LINE:
            continue
        name, kind, rest = line[:40].strip(), line[43], line[44:].strip()
        counted = _COUNT.match(rest)
        if counted is None:
            fields[name] = FchkField(kind, np.array([_scalar(rest, kind, name, where)]))
            continue
        count = int(counted.group(1))
        n_lines = -(-count // _PER_LINE[kind])
        chunk = lines[i : i + n_lines]
        i += n_lines
        if kind == "C":
            fields[name] = FchkField(kind, "".join(chunk).strip())
            continue
        values = np.array(
            [_scalar(tok, kind, name, where) for line in chunk for tok in line.split()]
        )
        if values.size != count:
            raise InputFormatError(
                f"{where}: field {name!r} has {values.size} values, expected {count} "
                "(truncated file?)"
            )
        fields[name] = FchkField(kind, values)
    return fields


def _scalar(token: str, kind: str, name: str, where: str) -> float:
    try:
        return (
            float(token)
            if kind == "R"
            else float(int(token))
            if kind == "I"
            else float(token == "T")
        )
    except ValueError as exc:
        raise InputFormatError(
            f"{where}: field {name!r} holds {token!r}, not a number (garbled file?)"
        ) from exc


def _array(
    fields: dict[str, FchkField], name: str, where: str, count: int | None = None
) -> np.ndarray:
    if name not in fields or isinstance(fields[name].values, str):
        raise InputFormatError(
            f"{where}: field {name!r} not found (not a frequency job, or a truncated file?)"
        )
    values = np.asarray(fields[name].values, dtype=float)
    if count is not None and values.size != count:
        raise InputFormatError(
            f"{where}: field {name!r} has {values.size} values, expected {count}"
        )
    return values


def read_title(lines: list[str]) -> tuple[str, str]:
    """Method and basis from the second line: job type (10), method (30), basis (30 columns).

    Layout::

        Freq      RB3LYP                                                      STO-3G
    """
    parts = lines[1].split() if len(lines) > 1 else []
    return (parts[1], parts[2]) if len(parts) >= 3 else ("", "")


def read_printed_modes(fields: dict[str, FchkField], n_atoms: int, where: str) -> PrintedModes:
    """Gaussian's own per-mode results, when the file has them.

    ``Vib-E2`` holds groups of n values (one per mode): frequencies, reduced masses, force
    constants, IR intensities, Raman activities, depolarization ratios (plane-polarized,
    unpolarized), then further groups.  ``Vib-Modes`` holds n × 3N displacements.  Layout::

        Number of Normal Modes                     I                6
        Vib-E2                                     R   N=          84
          4.12345678E+02  1.02345678E+03 ...
        Vib-Modes                                  R   N=          72
          1.23456789E-02 -2.34567890E-02 ...
    """
    if "Vib-E2" not in fields or "Number of Normal Modes" not in fields:
        return PrintedModes()
    n = int(_array(fields, "Number of Normal Modes", where)[0])
    e2 = _array(fields, "Vib-E2", where)
    if n == 0 or e2.size % n or e2.size // n <= max(VIB_E2_ROWS.values()):
        raise InputFormatError(f"{where}: Vib-E2 has {e2.size} values, not groups of {n} modes")
    rows = e2.reshape(-1, n)
    found = {key: rows[row] for key, row in VIB_E2_ROWS.items()}
    if "Vib-Modes" in fields:
        found["displacements"] = _array(fields, "Vib-Modes", where, n * 3 * n_atoms).reshape(
            n, 3 * n_atoms
        )
    return PrintedModes(**found)


def _job_type(lines: list[str]) -> str:
    """The job type of the title line (first 10 columns of the second line), e.g. ``Freq``."""
    return lines[1][:10].strip() if len(lines) > 1 else ""


def _hessian(fields: dict[str, FchkField], lines: list[str], n: int, where: str) -> np.ndarray:
    """The Cartesian Hessian, or an error that names why the file has none to offer.

    An fchk without ``Cartesian Force Constants`` comes from a job without frequencies; one
    with them but neither a vibrational section (``Vib-E2``) nor a ``Freq`` job type holds an
    optimizer's Hessian, an estimate updated step by step, not second derivatives at this
    geometry.
    """
    job = _job_type(lines)
    if "Cartesian Force Constants" not in fields:
        raise InputFormatError(
            f"{where}: no Hessian ('Cartesian Force Constants') in this checkpoint of a "
            f"{job or 'non-frequency'} job; give the fchk of a Freq job"
        )
    if job and "FREQ" not in job.upper() and "Vib-E2" not in fields:
        raise InputFormatError(
            f"{where}: the Hessian of this {job} job is not from a frequency calculation (no "
            "vibrational section; an optimisation stores an estimated Hessian); give the fchk "
            "of a Freq job"
        )
    return square_from_lower_triangle(
        _array(fields, "Cartesian Force Constants", where), 3 * n, where
    )


def parse_gaussian_fchk(text: str, where: str = "Gaussian fchk") -> GaussianJob:
    """Everything vibrapol needs from a formatted checkpoint (standard orientation)."""
    lines = text.splitlines()
    fields = read_fields(lines, where)
    z = _array(fields, "Atomic numbers", where).astype(int)
    n = z.size
    coords = _array(fields, "Current cartesian coordinates", where, 3 * n).reshape(n, 3) * BOHR_ANG
    hessian = _hessian(fields, lines, n, where)
    mass_field = next((f for f in ("Vib-AtMass", "Real atomic weights") if f in fields), None)
    masses = None if mass_field is None else _array(fields, mass_field, where, n)
    dalpha = polar = gradient = None
    if "Polarizability Derivatives" in fields:
        pd = _array(fields, "Polarizability Derivatives", where, 18 * n)
        dalpha = tensors_from_lower_triangle(pd.reshape(3 * n, 6))
    if "Polarizability" in fields:
        polar = tensors_from_lower_triangle(_array(fields, "Polarizability", where, 6))
    dipole = None
    if "Dipole Derivatives" in fields:
        dipole = _array(fields, "Dipole Derivatives", where, 9 * n).reshape(3 * n, 3)
    if "Cartesian Gradient" in fields:
        gradient = _array(fields, "Cartesian Gradient", where, 3 * n)
    energy = float(_array(fields, "Total Energy", where)[0]) if "Total Energy" in fields else None
    version_field = fields.get("Gaussian Version")
    version_text = version_field.values if version_field else ""
    program, version = program_version(version_text if isinstance(version_text, str) else "")
    method, basis = read_title(lines)
    route = fields["Route"].values if "Route" in fields else ""
    projected = asks_projected(str(route))
    prov = Provenance(
        source_file=where,
        source_kind="gaussian-fchk",
        program=program or "Gaussian",
        program_version=version,
        method=method,
        basis=basis,
        masses=f"fchk field {mass_field!r}" if mass_field else "",
        notes=()
        if projected
        else ("modes from vibrapol's harmonic analysis of 'Cartesian Force Constants'",),
    )
    if mass_field is None:
        prov = prov.with_note(
            "no masses in the fchk (older Gaussian): most abundant isotopes, Gaussian's default"
        )
    if not version:
        prov = prov.with_note("the fchk does not record the Gaussian version")
    # E16.8 reals: 9 significant digits, so each Hessian element is rounded to 5e-9 relative.
    precision = PrintPrecision(
        hessian_eps=5e-9 * float(np.max(np.abs(hessian))),
        freq_atol_cm1=0.0,
        freq_rtol=5e-9,
        activity_atol=1e-6,
        activity_rtol=1e-6,
        rho_atol=1e-6,
    )
    return GaussianJob(
        atomic_numbers=z,
        coordinates_ang=coords,
        masses_da=masses,
        hessian_au=hessian,
        dalpha_dx_au=dalpha,
        polarizability_au=polar,
        energy_hartree=energy,
        printed=read_printed_modes(fields, n, where),
        precision=precision,
        provenance=prov,
        gradient_au=gradient,
        projected=projected,
        dipole_deriv_au=dipole,
    )


def read_gaussian_fchk(path: str | Path) -> ModeSet:
    """Read a Gaussian formatted checkpoint of a frequency job into a ModeSet."""
    return read_job(parse_gaussian_fchk, path)


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "gaussian-fchk",
    "Gaussian formatted checkpoint (.fchk) of a Freq job: Hessian and derivatives",
    sniff_gaussian_fchk,
    read_gaussian_fchk,
)
