"""Registry of input readers and content sniffing."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from vibrapol.errors import InputFormatError
from vibrapol.modeset import ModeSet

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


def read_text(path: str | Path) -> str:
    """Read a text file, raising :class:`InputFormatError` for missing or binary files."""
    p = Path(path)
    if not p.exists():
        raise InputFormatError(f"{p}: no such file")
    if p.is_dir():
        raise InputFormatError(f"{p}: is a directory, expected a file")
    data = p.read_bytes()
    if not data.strip():
        raise InputFormatError(f"{p}: file is empty")
    if b"\x00" in data[:SNIFF_CHARS]:
        raise InputFormatError(f"{p}: looks like a binary file, expected text")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _head_tail(text: str) -> tuple[str, str]:
    return text[:SNIFF_CHARS], text[-SNIFF_CHARS:]


def sniff_text(text: str) -> str | None:
    """Name of the first registered reader that recognises ``text``, or None."""
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
        raise InputFormatError(
            f"{path}: not a recognised quantum-chemistry output or vibrapol file "
            f"(known kinds: {', '.join(_READERS)}); pass --kind to force one"
        )
    return name


def read_modes(path: str | Path, kind: str | None = None) -> ModeSet:
    """Read a :class:`ModeSet` from ``path``.

    Parameters
    ----------
    path : str or Path
    kind : str, optional
        Name of a registered reader; guessed from the content when omitted.

    Raises
    ------
    InputFormatError
        For unknown kinds, unreadable files, or content the reader cannot parse.
    """
    name = kind or sniff(path)
    if name not in _READERS:
        raise InputFormatError(f"unknown input kind {name!r}; known kinds: {', '.join(_READERS)}")
    read_text(path)  # uniform errors for missing, empty and binary files
    try:
        return _READERS[name].read(Path(path))
    except InputFormatError:
        raise
    except (ValueError, IndexError, KeyError) as exc:
        raise InputFormatError(f"{path}: could not be read as {name} ({exc})") from exc
