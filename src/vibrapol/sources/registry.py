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


#: Byte-order marks of the wider Unicode encodings (UTF-32 first: its LE mark starts with the
#: UTF-16 LE one).  Text with one of them is decoded (the mark is dropped); some Windows
#: programs save "Unicode" text this way.
_WIDE_BOMS = (
    (b"\xff\xfe\x00\x00", "utf-32"),
    (b"\x00\x00\xfe\xff", "utf-32"),
    (b"\xff\xfe", "utf-16"),
    (b"\xfe\xff", "utf-16"),
)


def decode_text(data: bytes, where: str) -> str:
    """Bytes of a text file as str: UTF-16/32 with a byte-order mark, UTF-8, else Latin-1.

    Raises
    ------
    InputFormatError
        For NUL bytes without a byte-order mark (binary, or UTF-16 without its mark) and for
        UTF-16/32 text that does not decode.
    """
    for bom, encoding in _WIDE_BOMS:
        if data.startswith(bom):
            try:
                return data.decode(encoding)  # these codecs consume the mark
            except UnicodeDecodeError as exc:
                raise InputFormatError(
                    f"{where}: starts with a {encoding.upper()} byte-order mark but is not "
                    f"{encoding.upper()} text (byte {exc.start}); save it as UTF-8"
                ) from None
    if b"\x00" in data[:SNIFF_CHARS]:
        raise InputFormatError(
            f"{where}: contains NUL bytes: a binary file, or UTF-16/UTF-32 text without a "
            "byte-order mark; expected UTF-8 text"
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def read_text(path: str | Path) -> str:
    """Read a text file in any encoding :func:`decode_text` takes, with any line endings.

    Line endings are left as they are: every reader splits with ``str.splitlines``, which
    takes LF, CRLF and CR alike.

    Raises
    ------
    InputFormatError
        For missing, unreadable, empty or binary files.
    """
    p = Path(path)
    if not p.exists():
        raise InputFormatError(f"{p}: no such file")
    if p.is_dir():
        raise InputFormatError(f"{p}: is a directory, expected a file")
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise InputFormatError(f"{p}: cannot be read ({exc.strerror or exc})") from exc
    text = decode_text(data, str(p))
    if not text.strip():
        raise InputFormatError(f"{p}: file is empty")
    return text


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
    except (ValueError, IndexError, KeyError, ArithmeticError) as exc:
        raise InputFormatError(
            f"{path}: could not be read as {name}; the file looks truncated or edited "
            f"({type(exc).__name__}: {exc})"
        ) from exc
