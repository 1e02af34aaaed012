"""Reading every input file: regular files only, size-bounded, decoded the same way everywhere.

Rules (docs/cli.md, "Shared behaviour"):

* an input must be a regular file (or a symbolic link to one).  Devices (``/dev/zero``,
  ``/dev/urandom``), named pipes, sockets and directories are refused with one line *before*
  they are opened, so a pipe with no writer cannot block and a device cannot fill memory;
* each kind of input has a size bound, checked on the file's size before reading and again
  while reading (a file that grows, or a ``/proc`` file that reports size 0, stops at the
  bound): :data:`MAX_QC_BYTES` for quantum-chemistry outputs and ``*.modes.json`` (a long
  run's output with many geometry steps can reach hundreds of MB), :data:`MAX_STRUCTURE_BYTES`
  for structures and :data:`MAX_SPECTRUM_BYTES` for measured spectra (a million points in a
  delimited file take about 30 MB);
* text is UTF-16/32 with a byte-order mark, UTF-8 (with or without a mark), else Latin-1;
  line endings are left as they are (readers split with ``str.splitlines``).

:func:`reading_once` lets a caller read a file once and hand the same text to the sniffer and
to the reader: within the block, :func:`read_text` of the same file returns the text already
read instead of reading the file again.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
import stat
from collections.abc import Iterator
from pathlib import Path

from vibrapol.errors import InputFormatError

#: Size bound of quantum-chemistry outputs and ``*.modes.json`` files (bytes).
MAX_QC_BYTES = 2 * 1024**3
#: Size bound of structure files (bytes).
MAX_STRUCTURE_BYTES = 200 * 1024**2
#: Size bound of measured spectra (bytes).
MAX_SPECTRUM_BYTES = 200 * 1024**2

#: Characters from the start of a file searched for NUL bytes (binary files).
NUL_SCAN_BYTES = 200_000

#: Byte-order marks of the wider Unicode encodings (UTF-32 first: its LE mark starts with the
#: UTF-16 LE one).  Text with one of them is decoded (the mark is dropped); some Windows
#: programs save "Unicode" text this way.
_WIDE_BOMS = (
    (b"\xff\xfe\x00\x00", "utf-32"),
    (b"\x00\x00\xfe\xff", "utf-32"),
    (b"\xff\xfe", "utf-16"),
    (b"\xfe\xff", "utf-16"),
)

#: (device, inode) of every input file read inside :func:`tracking_inputs` (one command):
#: outputs are checked against it, so that no command overwrites one of its own inputs
#: (:mod:`vibrapol.fileio`).
_INPUTS_READ: contextvars.ContextVar[set[tuple[int, int]] | None] = contextvars.ContextVar(
    "vibrapol_inputs_read", default=None
)

#: Texts read inside :func:`reading_once`, by (device, inode, size, mtime).
_ONCE: contextvars.ContextVar[dict[tuple[int, int, int, int], str] | None] = contextvars.ContextVar(
    "vibrapol_text_once", default=None
)


#: Texts given in memory (a file object, bytes) inside :func:`given_text`, by name.
_GIVEN: contextvars.ContextVar[dict[str, str] | None] = contextvars.ContextVar(
    "vibrapol_given_text", default=None
)


def _size(n: int) -> str:
    for unit, factor in (("GB", 1024**3), ("MB", 1024**2), ("kB", 1024)):
        if n >= factor:
            return f"{n / factor:.3g} {unit}"
    return f"{n} bytes"


def check_input_file(
    path: str | Path, limit: int = MAX_QC_BYTES, what: str = "file"
) -> os.stat_result:
    """Check that ``path`` is a regular file of at most ``limit`` bytes, without opening it.

    Parameters
    ----------
    path : str or Path
    limit : int
        Largest size accepted, in bytes.
    what : str
        What the file should be, for the messages ("file", "structure file", ...).

    Returns
    -------
    os.stat_result
        The status of the file (symbolic links followed).

    Raises
    ------
    InputFormatError
        Missing, a directory, a device, pipe or socket, larger than ``limit``, or a name the
        system refuses (too long, no permission to the directory).
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise InputFormatError(f"{p}: no such file") from None
    except OSError as exc:
        raise InputFormatError(f"{p}: cannot be read ({exc.strerror or exc})") from None
    if stat.S_ISDIR(st.st_mode):
        raise InputFormatError(f"{p}: is a directory, expected a {what}")
    if not stat.S_ISREG(st.st_mode):
        kind = (
            "a named pipe"
            if stat.S_ISFIFO(st.st_mode)
            else "a socket"
            if stat.S_ISSOCK(st.st_mode)
            else "a device"
        )
        raise InputFormatError(f"{p}: is {kind}, not a regular file; give a {what} on disk")
    if st.st_size > limit:
        raise InputFormatError(
            f"{p}: is {_size(st.st_size)}, more than the {_size(limit)} a {what} may have; "
            "check that this is the right file"
        )
    return st


def read_bytes(path: str | Path, limit: int = MAX_QC_BYTES, what: str = "file") -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes (see :func:`check_input_file`).

    Raises
    ------
    InputFormatError
        As :func:`check_input_file`, and when the file grows past ``limit`` while it is read.
    """
    p = Path(path)
    check_input_file(p, limit, what)
    try:
        # O_NONBLOCK: should the file have been swapped for a pipe since the check, opening
        # it must not wait for a writer; the fstat below then refuses it.
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise InputFormatError(f"{p}: cannot be read ({exc.strerror or exc})") from None
    with os.fdopen(fd, "rb") as fh:
        st = os.fstat(fh.fileno())
        if not stat.S_ISREG(st.st_mode):
            raise InputFormatError(f"{p}: is not a regular file; give a {what} on disk")
        try:
            data = fh.read(limit + 1)
        except OSError as exc:
            raise InputFormatError(f"{p}: cannot be read ({exc.strerror or exc})") from None
    if len(data) > limit:
        raise InputFormatError(
            f"{p}: holds more than the {_size(limit)} a {what} may have; "
            "check that this is the right file"
        )
    _note(st)
    return data


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
    if b"\x00" in data[:NUL_SCAN_BYTES]:
        raise InputFormatError(
            f"{where}: contains NUL bytes: a binary file, or UTF-16/UTF-32 text without a "
            "byte-order mark; expected UTF-8 text"
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def read_text(path: str | Path, limit: int = MAX_QC_BYTES, what: str = "file") -> str:
    """Read a text file in any encoding :func:`decode_text` takes, with any line endings.

    Inside :func:`reading_once` a file already read is not read again.

    Raises
    ------
    InputFormatError
        For missing, non-regular, oversized, unreadable, empty or binary files.
    """
    p = Path(path)
    given = _GIVEN.get()
    if given is not None and str(p) in given:
        return given[str(p)]
    cache = _ONCE.get()
    key = None
    if cache is not None:
        st = check_input_file(p, limit, what)
        key = (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns)
        if key in cache:
            return cache[key]
    text = decode_text(read_bytes(p, limit, what), str(p))
    if not text.strip():
        raise InputFormatError(f"{p}: file is empty")
    if cache is not None and key is not None:
        cache[key] = text
    return text


@contextlib.contextmanager
def reading_once() -> Iterator[None]:
    """Within the block, each file is read and decoded once; later reads return the same text.

    Nested blocks share the outer block's texts.  The texts are dropped when the outermost
    block ends.
    """
    if _ONCE.get() is not None:
        yield
        return
    token = _ONCE.set({})
    try:
        yield
    finally:
        _ONCE.reset(token)


@contextlib.contextmanager
def given_text(name: str, text: str) -> Iterator[None]:
    """Within the block, :func:`read_text` of ``name`` returns ``text`` (no file is opened).

    How :func:`vibrapol.sources.read_modes` hands the text of a file object or of bytes to the
    readers, which read by name.
    """
    token = _GIVEN.set({**(_GIVEN.get() or {}), str(Path(name)): text})
    try:
        yield
    finally:
        _GIVEN.reset(token)


def stream_text(source: object, where: str, limit: int = MAX_QC_BYTES) -> str:
    """The text of bytes, or of an open file (text or binary), decoded as :func:`read_text` does.

    At most ``limit`` bytes (characters for a text stream) are read; a text stream's byte-order
    mark is dropped.

    Raises
    ------
    InputFormatError
        When the content is larger than ``limit``, binary, empty, or the stream cannot be read.
    """
    if isinstance(source, (bytes, bytearray, memoryview)):
        data: object = bytes(source)
    else:
        try:
            data = source.read(limit + 1)  # type: ignore[attr-defined]
        except (OSError, ValueError, UnicodeDecodeError) as exc:
            raise InputFormatError(f"{where}: cannot be read ({exc})") from None
    if len(data) > limit:  # type: ignore[arg-type]
        raise InputFormatError(
            f"{where}: holds more than the {_size(limit)} an input may have; "
            "check that this is the right file"
        )
    if isinstance(data, bytes):
        text = decode_text(data, where)
    elif isinstance(data, str):
        if "\x00" in data[:NUL_SCAN_BYTES]:
            raise InputFormatError(f"{where}: contains NUL characters: a binary file, not text")
        text = data.removeprefix("\ufeff")
    else:
        raise InputFormatError(
            f"{where}: reading gave {type(data).__name__}, expected text or bytes"
        )
    if not text.strip():
        raise InputFormatError(f"{where}: is empty")
    return text


def _note(st: os.stat_result) -> None:
    found = _INPUTS_READ.get()
    if found is not None:
        found.add((st.st_dev, st.st_ino))


@contextlib.contextmanager
def tracking_inputs() -> Iterator[None]:
    """Within the block (one command), remember every input file read (see :func:`inputs_read`)."""
    token = _INPUTS_READ.set(set())
    try:
        yield
    finally:
        _INPUTS_READ.reset(token)


def inputs_read() -> frozenset[tuple[int, int]]:
    """(device, inode) of every input file read so far inside :func:`tracking_inputs`."""
    return frozenset(_INPUTS_READ.get() or ())
