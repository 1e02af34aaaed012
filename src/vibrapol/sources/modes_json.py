"""vibrapol's own mode file, ``*.modes.json`` (schema in docs/modes-json.md).

The file is human-readable JSON with the unit of every array in its field name.  Floats are
written with Python's shortest round-trip representation, so writing and reading a
:class:`ModeSet` is lossless.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path
from typing import Any

import numpy as np

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.fileio import write_atomic
from vibrapol.modeset import ModeSet, Provenance
from vibrapol.sources.registry import Reader
from vibrapol.textio import read_text
from vibrapol.units import CODATA_VERSION

FORMAT_NAME = "vibrapol.modes"
SCHEMA_VERSION = 1

#: ModeSet attribute → JSON field name (units in the names).
_ARRAY_FIELDS = {
    "freqs_cm1": "freqs_cm1",
    "modes": "modes_mass_weighted",
    "dalpha_dx": "dalpha_dx_ang2",
    "dalpha_dq": "dalpha_dq_ang2_per_sqrt_da",
    "a2": "a2_ang4_per_da",
    "gamma2": "gamma2_ang4_per_da",
    "polarizability_ang3": "polarizability_ang3",
    "activity": "activity_ang4_per_da",
    "ir_intensity_km_mol": "ir_intensity_km_mol",
}


def _list(value: np.ndarray | None) -> Any:
    return None if value is None else np.asarray(value).tolist()


def modeset_to_dict(modes: ModeSet) -> dict[str, Any]:
    """The JSON-ready dictionary of a ModeSet (schema version 1)."""
    masses = modes.masses_da
    assert masses is not None  # a ModeSet fills in default masses
    out: dict[str, Any] = {
        "format": FORMAT_NAME,
        "schema_version": SCHEMA_VERSION,
        "constants": CODATA_VERSION,
        "provenance": {
            k: (list(v) if isinstance(v, tuple) else v)
            for k, v in dataclasses.asdict(modes.provenance).items()
        },
        "atoms": {
            "atomic_numbers": modes.atomic_numbers.tolist(),
            "masses_da": masses.tolist(),
            "coordinates_ang": modes.coordinates_ang.tolist(),
        },
        "energy_hartree": modes.energy_hartree,
    }
    for attr, key in _ARRAY_FIELDS.items():
        out[key] = _list(getattr(modes, attr))
    out["program_irreps"] = None if modes.program_irreps is None else list(modes.program_irreps)
    return out


def modeset_from_dict(data: dict[str, Any], where: str = "JSON") -> ModeSet:
    """Build a ModeSet from :func:`modeset_to_dict` output, checking format and version."""
    if not isinstance(data, dict) or data.get("format") != FORMAT_NAME:
        raise InputFormatError(
            f'{where}: not a vibrapol modes file (missing "format": "{FORMAT_NAME}")'
        )
    version = data.get("schema_version")
    if version != SCHEMA_VERSION:
        raise InputFormatError(
            f"{where}: schema version {version!r} is not supported "
            f"(this vibrapol reads {SCHEMA_VERSION})"
        )
    labels = data.get("program_irreps")
    if labels is not None and (
        not isinstance(labels, list) or not all(isinstance(x, str) for x in labels)
    ):
        raise InputFormatError(f"{where}: program_irreps must be a list of strings or null")
    try:
        atoms = data["atoms"]
        prov = dict(data.get("provenance") or {})
        known = [f.name for f in dataclasses.fields(Provenance)]
        unknown = [k for k in prov if k not in known]
        if unknown:
            raise InputFormatError(
                f"{where}: provenance has an unknown key {unknown[0]!r} "
                f"(known: {', '.join(known)}); remove it or fix its spelling"
            )
        prov["notes"] = tuple(prov.get("notes", ()))
        kwargs: dict[str, Any] = {attr: data.get(key) for attr, key in _ARRAY_FIELDS.items()}
        return ModeSet(
            atomic_numbers=atoms["atomic_numbers"],
            masses_da=atoms.get("masses_da"),
            coordinates_ang=atoms["coordinates_ang"],
            energy_hartree=data.get("energy_hartree"),
            provenance=Provenance(**prov),
            program_irreps=None if labels is None else tuple(labels),
            **kwargs,
        )
    except VibrapolError as exc:
        raise InputFormatError(f"{where}: {exc}") from exc
    except (KeyError, TypeError, ValueError) as exc:
        raise InputFormatError(f"{where}: malformed vibrapol modes file ({exc!r})") from exc


def write_modes_json(modes: ModeSet, path: str | Path, force: bool = False) -> Path:
    """Write ``modes`` to ``path`` atomically (refuses to overwrite unless ``force``)."""
    text = json.dumps(modeset_to_dict(modes), indent=1, allow_nan=False) + "\n"
    return write_atomic(path, text, force=force)


def read_modes_json(path: str | Path) -> ModeSet:
    """Read a ``*.modes.json`` file."""
    text = read_text(path)
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputFormatError(f"{path}: invalid JSON at line {exc.lineno} ({exc.msg})") from exc
    except RecursionError:
        raise InputFormatError(
            f"{path}: JSON nested too deeply; not a vibrapol modes file"
        ) from None
    modes = modeset_from_dict(data, where=str(path))
    # Messages about this data must name the file the user gave; the file the data first came
    # from (a program output converted earlier) is kept as a note.
    prov = modes.provenance
    if prov.source_file and prov.source_file != str(path):
        prov = prov.with_note(f"converted from {prov.source_file}")
    return dataclasses.replace(modes, provenance=dataclasses.replace(prov, source_file=str(path)))


def _sniff(head: str, tail: str) -> bool:
    return head.lstrip().startswith("{") and f'"{FORMAT_NAME}"' in head[:2000]


#: This module's reader; its place in the sniffing order is set in :mod:`vibrapol.sources`.
READER = Reader("modes-json", "vibrapol's own *.modes.json", _sniff, read_modes_json)
