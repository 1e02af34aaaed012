"""Registry of input readers and content sniffing."""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet

# decode_text and read_text live in vibrapol.textio; they stay importable from here.
from vibrapol.textio import decode_text, read_text, reading_once

__all__ = [
    "SNIFF_CHARS",
    "Reader",
    "decode_text",
    "read_modes",
    "read_text",
    "readers",
    "register",
    "sniff",
    "sniff_text",
]

#: Number of characters read from the start and the end of a file for sniffing.
SNIFF_CHARS = 200_000


@dataclass(frozen=True)
class Reader:
    """A registered input kind.

    Attributes
    ----------
    name : str
        Short name used on the command line (``--kind NAME``).
    description : str
        One line for help texts and the docs.
    sniff : callable(head: str, tail: str) -> bool
        True when the text (start and end of the file) looks like this kind.
    read : callable(path: Path) -> ModeSet
    """

    name: str
    description: str
    sniff: Callable[[str, str], bool]
    read: Callable[[Path], ModeSet]


_READERS: dict[str, Reader] = {}


def register(reader: Reader) -> Reader:
    """Add a reader; later registrations of the same name replace earlier ones."""
    _READERS[reader.name] = reader
    return reader


def readers() -> dict[str, Reader]:
    """The registered readers, in sniffing order."""
    return dict(_READERS)


def _head_tail(text: str) -> tuple[str, str]:
    return text[:SNIFF_CHARS], text[-SNIFF_CHARS:]


def sniff_text(text: str) -> str | None:
    """Name of the first registered reader that recognises ``text``, or None.

    A structure file in XYZ format is recognised first and gets None, whatever its comment
    line says (a comment may name the program output the structure came from).
    """
    from vibrapol.structure import looks_like_xyz

    if looks_like_xyz(text):
        return None
    head, tail = _head_tail(text)
    for reader in _READERS.values():
        if reader.sniff(head, tail):
            return reader.name
    return None


def sniff(path: str | Path) -> str:
    """Name of the reader for ``path``, from its content.

    Raises
    ------
    InputFormatError
        If the file is missing, empty, binary or of a kind no reader recognises.
    """
    text = read_text(path)
    name = sniff_text(text)
    if name is None:
        from vibrapol.structure import looks_like_xyz

        if looks_like_xyz(text):
            raise InputFormatError(
                f"{path}: is a structure (XYZ) without normal modes; compute them first with "
                "vibrapol compute"
            )
        raise InputFormatError(
            f"{path}: not a recognised quantum-chemistry output or vibrapol file "
            f"(known kinds: {', '.join(_READERS)}); pass --kind to force one"
        )
    return name


def read_modes(path: str | Path | Any, kind: str | None = None) -> ModeSet:
    """Read a :class:`ModeSet` from ``path``, a file object, bytes, or a parsed object.

    Parameters
    ----------
    path : str, Path, file object, bytes, cclib ccData or ase.vibrations.VibrationsData
        A file on disk; an open file (text or binary: its text is read from the current
        position) or bytes, sniffed and read by the same readers as a file (messages and the
        provenance name the file object's ``name``, or ``<bytes>``); cclib's parsed data
        (:func:`~vibrapol.sources.cclib_generic.modes_from_ccdata`); or an ASE VibrationsData
        (:func:`~vibrapol.sources.objects.modes_from_ase_vibrations`).
    kind : str, optional
        Name of a registered reader; guessed from the content when omitted (files and text).

    Raises
    ------
    InputFormatError
        For unknown kinds, unreadable files, or content the reader cannot parse; for text whose
        kind cannot be told, the message asks for ``kind``.
    VibrapolError
        For an ``ase.Atoms`` (a structure without vibrations) or another object.
    """
    if kind is not None and kind not in _READERS:
        raise InputFormatError(f"unknown input kind {kind!r}; known kinds: {', '.join(_READERS)}")
    if not isinstance(path, (str, os.PathLike)):
        from vibrapol.sources.objects import read_modes_from

        return read_modes_from(path, kind)
    path = Path(path) if not isinstance(path, str) else path
    # The file is read and decoded once: the sniffer and the reader (which calls read_text
    # itself) get the same text.
    with reading_once():
        read_text(path)  # uniform errors for missing, empty, binary and oversized files
        name = kind or sniff(path)
        return _read_with(name, path)


def _read_with(name: str, path: str | Path) -> ModeSet:
    try:
        return _READERS[name].read(Path(path))
    except InputFormatError:
        raise
    except (ValueError, IndexError, KeyError, ArithmeticError) as exc:
        raise InputFormatError(
            f"{path}: could not be read as {name}; the file looks truncated or edited "
            f"({type(exc).__name__}: {exc})"
        ) from exc
