"""Any output that cclib reads: frequencies, normal modes and Raman activities.

This reader is the fallback, tried last when sniffing: it recognises a file by cclib's own
program detection (:func:`cclib.io.ccio.guess_filetype` on the first lines) and takes from
cclib's parsed data

* ``atomnos`` → atomic numbers;
* ``atomcoords`` (Å, one set per geometry found) → the last set;
* ``atommasses`` (Da, when the parser finds them in the file) → masses, else the ModeSet
  default (recorded in the provenance);
* ``vibfreqs`` (cm⁻¹, imaginary ones negative) → frequencies;
* ``vibdisps`` (Cartesian displacements (n, N, 3), each program's own per-mode
  normalisation) → mass-weighted orthonormal modes with
  :func:`~vibrapol.vibrations.modes_from_displacements`;
* ``vibramans`` (Raman activities, Å⁴/amu) → ``ModeSet.activity``.

cclib gives no depolarization ratios and no polarizability derivatives, so a ModeSet from this
reader knows each mode's activity but not a² and γ²: its Raman table has activities and an
empty ρ.  The readers of our own for particular programs (registered before this one) add
the ratios and derivatives where the program prints them.

Known cclib 1.8.1 problems handled here: for DALTON, ``vibramans`` holds the ``Pol.Int.``
column (45a′² + 4γ′², the parallel intensity), not the activity; it is not used, with a
warning and a provenance note.
"""

from __future__ import annotations

import io
import logging
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources.registry import SNIFF_CHARS, Reader, read_text, readers, register
from vibrapol.vibrations import modes_from_displacements

#: cclib ``metadata["package"]`` values whose ``vibramans`` are not Raman activities.
UNRELIABLE_ACTIVITIES = {
    "DALTON": "cclib 1.8.1 reports DALTON's 'Pol.Int.' (45a'^2+4g'^2) as the activity",
}


def _cclib_program(head: str) -> str | None:
    """Name of cclib's parser class for ``head`` (cclib's own trigger phrases), or None."""
    from cclib.io.ccio import guess_filetype

    parser = guess_filetype(head.splitlines())
    return None if parser is None else parser.__name__


def sniff_cclib(head: str, tail: str) -> bool:
    """True when cclib recognises the program that wrote the text."""
    return _cclib_program(head) is not None


def _parse(path: Path) -> Any:
    """Parse ``path`` with cclib, turning cclib's own failures into our error."""
    import cclib

    where = str(path)
    text = read_text(path)  # also: our errors for bad files, and UTF-16 decoded
    program = _cclib_program(text[:SNIFF_CHARS])
    if program is None:
        raise InputFormatError(
            f"{where}: cclib does not recognise the program that wrote this file"
        )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            data = cclib.io.ccread(io.StringIO(text, newline=None), loglevel=logging.CRITICAL)
        except Exception as exc:  # cclib raises anything from IndexError to StopIteration
            own = program.lower()
            hint = (
                f"read it with --kind {own}"
                if own in readers() and own != "cclib"
                else "check that the output is complete"
            )
            detail = (str(exc).splitlines() or [""])[0]
            raise InputFormatError(
                f"{where}: cclib {cclib.__version__} could not parse this {program} output "
                f"({type(exc).__name__}: {detail}); {hint}"
            ) from exc
    if data is None:
        raise InputFormatError(f"{where}: cclib could not read this {program} output")
    return data


def read_cclib(path: str | Path) -> ModeSet:
    """Read any output cclib parses (see the module docstring for what is taken)."""
    where = str(path)
    data = _parse(Path(path))
    metadata = getattr(data, "metadata", {}) or {}
    program = str(metadata.get("package") or "")
    if not hasattr(data, "vibfreqs") or len(data.vibfreqs) == 0:
        raise InputFormatError(
            f"{where}: {program or 'this'} output has no vibrational data (no frequencies); "
            "use the output of a frequency job"
        )
    if not hasattr(data, "vibdisps"):
        raise InputFormatError(f"{where}: cclib found frequencies but no normal-mode displacements")
    if not hasattr(data, "atomnos") or not hasattr(data, "atomcoords"):
        raise InputFormatError(f"{where}: cclib found no atoms or coordinates")
    z = np.asarray(data.atomnos, dtype=int)
    freqs = np.asarray(data.vibfreqs, dtype=float)
    disp = np.asarray(data.vibdisps, dtype=float).reshape(len(freqs), -1)
    notes = [f"read with cclib {_cclib_version()}; modes from its Cartesian displacements"]
    masses = None
    masses_note = ""
    if hasattr(data, "atommasses"):
        masses = np.asarray(data.atommasses, dtype=float)
        masses_note = "as parsed by cclib (atommasses)"
    modes = modes_from_displacements(disp, default_masses(z) if masses is None else masses)
    activity = None
    if hasattr(data, "vibramans"):
        if program in UNRELIABLE_ACTIVITIES:
            reason = UNRELIABLE_ACTIVITIES[program]
            warnings.warn(
                f"{where}: Raman activities not used: {reason}", AccuracyWarning, stacklevel=2
            )
            notes.append(f"Raman activities not used: {reason}")
        else:
            activity = np.asarray(data.vibramans, dtype=float)
            notes.append(
                "Raman activities from cclib; no depolarization ratios (a2, gamma2 unknown)"
            )
    else:
        notes.append("no Raman activities in this output")
    if len(data.atomcoords) > 1:
        notes.append("coordinates: the last of the geometries cclib found")
    version = metadata.get("legacy_package_version") or metadata.get("package_version") or ""
    version = str(version).replace("revision", " rev. ")  # Gaussian: "16revisionA.03"
    methods = metadata.get("methods") or []
    method = metadata.get("functional") or (methods[-1] if methods else "")
    provenance = Provenance(
        source_file=where,
        source_kind="cclib",
        program=program,
        program_version=version,
        method=str(method),
        basis=str(metadata.get("basis_set") or ""),
        masses=masses_note,
        notes=tuple(notes),
    )
    return ModeSet(
        atomic_numbers=z,
        coordinates_ang=np.asarray(data.atomcoords[-1], dtype=float),
        freqs_cm1=freqs,
        modes=modes,
        masses_da=masses,
        activity=activity,
        provenance=provenance,
    )


def _cclib_version() -> str:
    import cclib

    return str(cclib.__version__)


register(
    Reader(
        "cclib",
        "any output cclib reads (frequencies, modes, activities; no ratios)",
        sniff_cclib,
        read_cclib,
    )
)
