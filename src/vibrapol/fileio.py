"""Safe output files: checked before any work, never clobbered, all written or none.

The rules (docs/cli.md, "Shared behaviour"):

* an existing file is overwritten only with ``force``; a name ending in ``/``, a directory, a
  device or a pipe is refused;
* a symbolic link is followed, as editors do: the file it points to is written and the link
  stays.  A link to a file that does not exist yet counts as an existing file (refused without
  ``force``), so a stray link cannot send output somewhere unexpected unasked;
* no output may be one of the command's inputs, even with ``force`` (compared by device and
  inode, so symbolic and hard links are caught), and no two outputs of one command may be the
  same file;
* :func:`write_all` writes every file to a temporary file in its directory and renames them
  all only when every one is complete; on any failure (disk full, name too long, …) the
  temporaries are removed and one line says what went wrong.
"""

from __future__ import annotations

import contextlib
import errno
import os
import stat
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path

from vibrapol.errors import VibrapolError
from vibrapol.textio import inputs_read

#: Figure formats vibrapol writes, named by the file suffix.
FIGURE_FORMATS = ("png", "svg", "pdf")


def figure_format(path: str | os.PathLike[str]) -> str:
    """Format of a figure file from its suffix (``png``, ``svg`` or ``pdf``, any case).

    Raises
    ------
    VibrapolError
        If the name does not end in one of the figure suffixes.
    """
    name = os.fspath(path)
    fmt = name.rsplit(".", 1)[-1].lower() if "." in name else ""
    if fmt not in FIGURE_FORMATS:
        raise VibrapolError(f"{name}: figure files must end in .png, .svg or .pdf")
    return fmt


def _oserror(p: str | Path, exc: OSError, doing: str = "cannot be written") -> VibrapolError:
    if exc.errno == errno.ENAMETOOLONG:
        return VibrapolError(f"{p}: file name too long for this file system; use a shorter name")
    return VibrapolError(f"{p}: {doing} ({exc.strerror or exc})")


def _stat(p: str | Path, follow: bool = True) -> os.stat_result | None:
    """Status of ``p`` or None when it does not exist; other failures are one-line errors."""
    try:
        return os.stat(p) if follow else os.lstat(p)
    except (FileNotFoundError, NotADirectoryError):
        return None
    except OSError as exc:
        raise _oserror(p, exc) from None


def check_writable(path: str | Path, force: bool = False) -> Path:
    """Check, before any work is done, that ``path`` may be written; return the file to write.

    The returned path is ``path`` itself, or the file a symbolic link points to.  The directory
    is tested by creating (and removing) an empty temporary file in it: permission bits alone
    say nothing for root or on read-only file systems.

    Raises
    ------
    VibrapolError
        If the file exists (or is a dangling link) and ``force`` is False, the name ends in a
        slash, names a directory or another non-regular file (a device, a pipe), is too long,
        or its directory is missing, is a file, or cannot be written.
    """
    name = os.fspath(path)
    if name.endswith(("/", os.sep)):
        raise VibrapolError(f"{name}: ends in '/', a directory name; give a file name")
    p = Path(name)
    link = _stat(p, follow=False)
    target = p
    if link is not None and stat.S_ISLNK(link.st_mode):
        target = Path(os.path.realpath(p))
        if _stat(p) is None and not force:
            raise VibrapolError(
                f"{p}: is a symbolic link to {target}, which does not exist; "
                "pass --force to write it there"
            )
    st = _stat(target)
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise VibrapolError(f"{p}: is a directory, expected a file name")
        if not force:
            raise VibrapolError(f"{p}: already exists; pass --force to overwrite it")
        if not stat.S_ISREG(st.st_mode):
            raise VibrapolError(f"{p}: is not a regular file (a device or pipe?); give a file name")
    parent = target.parent if str(target.parent) else Path(".")
    parent_st = _stat(parent)
    if parent_st is None:
        raise VibrapolError(f"{p}: directory {parent} does not exist")
    if not stat.S_ISDIR(parent_st.st_mode):
        raise VibrapolError(f"{p}: {parent} is a file, not a directory")
    try:
        fd, probe = tempfile.mkstemp(prefix=f".{target.name[:40]}.", suffix=".check", dir=parent)
    except OSError as exc:
        raise VibrapolError(
            f"{p}: cannot write in directory {parent} ({exc.strerror or exc}); "
            "choose another output location"
        ) from None
    os.close(fd)
    os.unlink(probe)
    name_max = os.pathconf(parent, "PC_NAME_MAX") if hasattr(os, "pathconf") else 255
    if len(target.name.encode()) > name_max:
        raise _oserror(p, OSError(errno.ENAMETOOLONG, os.strerror(errno.ENAMETOOLONG)))
    return target


def _identity(path: str | Path) -> tuple[int, int] | None:
    with contextlib.suppress(OSError, ValueError):
        st = os.stat(path)
        if stat.S_ISREG(st.st_mode):
            return st.st_dev, st.st_ino
    return None


def check_outputs(
    paths: Iterable[str | Path | None],
    force: bool = False,
    inputs: Iterable[str | Path] = (),
) -> list[Path]:
    """Check every output of one command before any work; return the files to write.

    Parameters
    ----------
    paths : iterable of path or None
        The outputs (None entries, for outputs not asked for, are skipped).
    force : bool
        Whether existing files may be overwritten.
    inputs : iterable of path
        The command's input files.  Inputs already read by this process are known anyway.

    Raises
    ------
    VibrapolError
        As :func:`check_writable`; and when two outputs are the same file, or an output is an
        input (even with ``force``).
    """
    given = [p for p in paths if p is not None and os.fspath(p) != ""]
    targets = [check_writable(p, force) for p in given]
    seen: dict[object, str | Path] = {}
    for name, target in zip(given, targets, strict=True):
        keys = [os.path.normcase(os.path.realpath(target)), _identity(target)]
        for key in keys:
            if key is None:
                continue
            if key in seen:
                first = seen[key]
                raise VibrapolError(
                    f"{name}: given twice as an output; give each output its own name"
                    if os.fspath(first) == os.fspath(name)
                    else f"{first} and {name} are the same file; give each output its own name"
                )
            seen[key] = name
    read = dict.fromkeys(inputs_read(), "an input")
    for source in inputs:
        key = _identity(source)
        if key is not None:
            read[key] = os.fspath(source)
    for name, target in zip(given, targets, strict=True):
        key = _identity(target)
        if key is not None and key in read:
            source = read[key]
            also = "one of the inputs" if source == "an input" else f"the input {source}"
            raise VibrapolError(
                f"{name}: is {also}; write the output to another file (--force does not "
                "overwrite inputs)"
            )
    return targets


def _write_temp(target: Path, data: bytes) -> str:
    """Write ``data`` to a new temporary file beside ``target``; return its name."""
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name[:40]}.", suffix=".tmp", dir=target.parent)
    try:
        # mkstemp creates the file with mode 0600; give it the mode a plain open() would.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        view = memoryview(data)
        while view:
            view = view[os.write(fd, view) :]
        os.fsync(fd)
    except BaseException:
        os.close(fd)
        os.unlink(tmp)
        raise
    os.close(fd)
    return tmp


def write_all(
    files: Sequence[tuple[str | Path, str | bytes]],
    force: bool = False,
    inputs: Iterable[str | Path] = (),
) -> list[Path]:
    """Write several files, all or none.

    Every path is checked again (:func:`check_outputs`), every file is written completely to a
    temporary file in its directory, and only then are they renamed into place.  Text is
    written as UTF-8 exactly as given (no newline translation).

    Raises
    ------
    VibrapolError
        As :func:`check_outputs`, and when a file cannot be written (disk full, file system
        read-only, ...); nothing is left behind then.
    """
    targets = check_outputs([p for p, _ in files], force, inputs)
    temps: list[str] = []
    current: str | Path = ""
    try:
        for (name, data), target in zip(files, targets, strict=True):
            current = name
            raw = data.encode("utf-8") if isinstance(data, str) else data
            temps.append(_write_temp(target, raw))
        for tmp, target in zip(temps, targets, strict=True):
            os.replace(tmp, target)
    except BaseException as exc:
        for tmp in temps:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        if isinstance(exc, OSError):  # disk full, file system gone read-only, ...
            raise _oserror(current, exc, "could not be written; nothing was written") from exc
        raise
    return [Path(p) for p, _ in files]


def write_atomic(path: str | Path, data: str | bytes, force: bool = False) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same directory and a rename.

    The destination either keeps its old content or gets the complete new content; an
    interrupted write leaves nothing behind.  See :func:`write_all` for the rules.
    """
    return write_all([(path, data)], force)[0]
