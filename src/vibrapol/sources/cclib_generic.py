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
* ``vibramans`` (Raman activities, Å⁴/amu) → ``ModeSet.activity``;
* ``vibirs`` (IR intensities, km/mol; cclib converts GAMESS's D² amu⁻¹ Å⁻² itself) →
  ``ModeSet.ir_intensity_km_mol``.

cclib gives no depolarization ratios and no polarizability derivatives, so a ModeSet from this
reader knows each mode's activity but not a² and γ²: its Raman table has activities and an
empty ρ.  The readers of our own for particular programs (registered before this one) add
the ratios and derivatives where the program prints them.  When a file read here visibly
holds ratios or derivative blocks (:func:`lost_raman_blocks`), the loss is announced with an
:class:`~vibrapol.errors.AccuracyWarning` and a provenance note naming the program cclib saw.
The warnings the program printed about its results are passed on as in its own reader
(:data:`PROGRAM_WARNING_RULES`).

Known cclib 1.8.1 problems handled here: for DALTON, ``vibramans`` holds the ``Pol.Int.``
column (45a′² + 4γ′², the parallel intensity), not the activity; it is not used, with a
warning and a provenance note.
"""

from __future__ import annotations

import io
import logging
import re
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from vibrapol.errors import AccuracyWarning, InputFormatError
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.sources import _gamess_blocks, dalton, qchem
from vibrapol.sources._program_warnings import Rule, find_program_warnings, pass_on
from vibrapol.sources.registry import SNIFF_CHARS, Reader, readers
from vibrapol.textio import read_text
from vibrapol.vibrations import modes_from_displacements

#: cclib ``metadata["package"]`` values whose ``vibramans`` are not Raman activities.
UNRELIABLE_ACTIVITIES = {
    "DALTON": "cclib 1.8.1 reports DALTON's 'Pol.Int.' (45a'^2+4g'^2) as the activity",
}


#: vibrapol's own reader for a cclib parser class, where there is one.
OWN_READERS = {
    "ORCA": "orca",
    "QChem": "qchem",
    "GAMESS": "firefly",
    "GAMESSUK": "gamess-uk",
    "DALTON": "dalton",
    "Gaussian": "gaussian-log",
    "FChk": "gaussian-fchk",
}

#: The program warnings passed on, per cclib parser class (the rules of our own readers).
PROGRAM_WARNING_RULES: dict[str, tuple[Rule, ...]] = {
    "GAMESS": _gamess_blocks.WARNING_RULES,
    "DALTON": dalton.WARNING_RULES,
    "QChem": qchem.WARNING_RULES,
}

#: Lines that show depolarization ratios, and polarizability-derivative blocks, in any of the
#: programs' spellings ("DEPOLARIZATION", "Depolar (P)", "Dep. Ratio", "depolarization ratio";
#: "ALPHA POLARIZABILITY DERIVATIVE TENSOR", "Polarizability Derivatives", "Polarizability
#: tensor (alpha) gradient", Gaussian's archive "PolarDeriv", "dalpha").
_RATIO_LINE = re.compile(r"depol|dep\. ratio", re.IGNORECASE)
_DERIVATIVE_LINE = re.compile(
    r"dalpha|polarderiv|polari[sz]ability\s+(?:tensor\s+\(alpha\)\s+gradient|derivative)",
    re.IGNORECASE,
)


def lost_raman_blocks(lines: list[str]) -> dict[str, int]:
    """First line (0-based) of depolarization ratios and of derivative blocks, where present.

    Keys are "depolarization ratios" and "polarizability derivatives"; absent ones are left
    out.
    """
    found: dict[str, int] = {}
    for i, line in enumerate(lines):
        if "depolarization ratios" not in found and _RATIO_LINE.search(line):
            found["depolarization ratios"] = i
        if "polarizability derivatives" not in found and _DERIVATIVE_LINE.search(line):
            found["polarizability derivatives"] = i
        if len(found) == 2:
            break
    return found


def _announce_losses(lines: list[str], program: str, where: str) -> list[str]:
    """Warn (one line) when the file shows ratios or derivatives this reader cannot keep."""
    found = lost_raman_blocks(lines)
    if not found:
        return []
    what = " and ".join(f"{name} (line {i + 1})" for name, i in found.items())
    own = OWN_READERS.get(program)
    hint = (
        f"read it with --kind {own}, vibrapol's reader for {program} outputs, to keep them"
        if own in readers()
        else "vibrapol has no reader of its own for this program"
    )
    note = (
        f"the file shows {what}, which vibrapol's generic reader loses: it keeps only what "
        f"cclib reads from this {program} output (frequencies, modes, activities); {hint}"
    )
    warnings.warn(f"{where}: {note}", AccuracyWarning, stacklevel=3)
    return [note]


def _cclib_program(head: str) -> str | None:
    """Name of cclib's parser class for ``head`` (cclib's own trigger phrases), or None."""
    from cclib.io.ccio import guess_filetype

    parser = guess_filetype(head.splitlines())
    # cclib annotates the result as a Logfile instance; it is the parser class
    return None if parser is None else parser.__name__  # type: ignore[attr-defined]


def sniff_cclib(head: str, tail: str) -> bool:
    """True when cclib recognises the program that wrote the text."""
    return _cclib_program(head) is not None


def _parse(path: Path) -> tuple[Any, str, str]:
    """Parse ``path`` with cclib, turning cclib's own failures into our error.

    Returns cclib's data, the decoded text and the name of cclib's parser class.
    """
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
            own = OWN_READERS.get(program, "")
            hint = (
                f"read it with --kind {own}"
                if own in readers()
                else "check that the output is complete"
            )
            detail = (str(exc).splitlines() or [""])[0]
            raise InputFormatError(
                f"{where}: cclib {cclib.__version__} could not parse this {program} output "
                f"({type(exc).__name__}: {detail}); {hint}"
            ) from exc
    if data is None:
        raise InputFormatError(f"{where}: cclib could not read this {program} output")
    return data, text, program


def read_cclib(path: str | Path) -> ModeSet:
    """Read any output cclib parses (see the module docstring for what is taken)."""
    data, text, parser = _parse(Path(path))
    return modes_from_ccdata(data, source=str(path), lines=text.splitlines(), parser=parser)


#: Provenance note of a ModeSet made from a ccData object rather than from a file.
CCDATA_NOTE = (
    "made from a cclib ccData object: the output's text was not seen, so depolarization "
    "ratios, derivative blocks and warnings printed in it were not looked for"
)


def modes_from_ccdata(
    data: Any,
    *,
    source: str = "",
    lines: list[str] | None = None,
    parser: str | None = None,
) -> ModeSet:
    """A :class:`ModeSet` from cclib's parsed data (``cclib.io.ccread(...)``, a ``ccData``).

    What is taken is listed in the module docstring; this is the function :func:`read_cclib`
    uses, so a file and its ``ccData`` give the same numbers.

    Parameters
    ----------
    data : cclib.parser.data.ccData
        Parsed output of a frequency job.
    source : str
        The file it was parsed from, for the provenance and messages ('' when unknown).
    lines, parser : optional
        The output's text and cclib's parser class name: lost Raman blocks and the program's
        own warnings are looked for there.  Without them a provenance note
        (:data:`CCDATA_NOTE`) says the text was not seen.

    Raises
    ------
    InputFormatError
        When the data hold no frequencies, no displacements or no atoms.
    """
    where = source or "cclib ccData"
    if not hasattr(data, "__dict__"):  # a path or text: not parsed data
        raise InputFormatError(
            f"{where}: expected cclib's parsed data (cclib.io.ccread), got {type(data).__name__}; "
            "give a file to vibrapol.read_modes"
        )
    metadata = getattr(data, "metadata", {}) or {}
    program = str(metadata.get("package") or "")
    parser = parser or program
    if not hasattr(data, "vibfreqs") or len(data.vibfreqs) == 0:
        held = (
            " (it holds a static polarizability only)" if hasattr(data, "polarizabilities") else ""
        )
        raise InputFormatError(
            f"{where}: {program or 'this'} output has no vibrational data (no frequencies)"
            f"{held}; use the output of a frequency job"
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
    ir = None
    if hasattr(data, "vibirs") and np.shape(data.vibirs) == freqs.shape:
        ir = np.asarray(data.vibirs, dtype=float)
        notes.append("IR intensities (km/mol) as cclib converts them (vibirs)")
    if len(data.atomcoords) > 1:
        notes.append("coordinates: the last of the geometries cclib found")
    if lines is None:
        notes.append(CCDATA_NOTE)
    else:
        notes += _announce_losses(lines, parser, where)
        notes += pass_on(
            find_program_warnings(lines, PROGRAM_WARNING_RULES.get(parser, ())),
            where=where,
            program=program or parser,
        )
    version = metadata.get("legacy_package_version") or metadata.get("package_version") or ""
    version = str(version).replace("revision", " rev. ")  # Gaussian: "16revisionA.03"
    methods = metadata.get("methods") or []
    method = metadata.get("functional") or (methods[-1] if methods else "")
    provenance = Provenance(
        source_file=source,
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
        ir_intensity_km_mol=ir,
        provenance=provenance,
    )


def _cclib_version() -> str:
    import cclib

    return str(cclib.__version__)


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader(
    "cclib",
    "any output cclib reads (frequencies, modes, activities; no ratios)",
    sniff_cclib,
    read_cclib,
)
