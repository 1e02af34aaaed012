"""Safe output files: never overwrite without permission, never leave a partial file."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from vibrapol.errors import VibrapolError


def check_writable(path: str | Path, force: bool = False) -> Path:
    """Check, before any work is done, that ``path`` may be written.

    The directory is tested by creating (and removing) an empty temporary file in it:
    permission bits alone say nothing for root or on read-only file systems.

    Raises
    ------
    VibrapolError
        If the file exists and ``force`` is False, is a directory or another non-regular file
        (a device, a pipe), or its directory is missing, is a file, or cannot be written.
    """
    p = Path(path)
    if p.is_dir():
        raise VibrapolError(f"{p}: is a directory, expected a file name")
    if p.exists() and not force:
        raise VibrapolError(f"{p}: already exists; pass --force to overwrite it")
    if p.exists() and not p.is_file():
        raise VibrapolError(f"{p}: is not a regular file (a device or pipe?); give a file name")
    parent = p.parent if str(p.parent) else Path(".")
    if parent.exists() and not parent.is_dir():
        raise VibrapolError(f"{p}: {parent} is a file, not a directory")
    if not parent.is_dir():
        raise VibrapolError(f"{p}: directory {parent} does not exist")
    try:
        fd, probe = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".check", dir=parent)
    except OSError as exc:
        raise VibrapolError(
            f"{p}: cannot write in directory {parent} ({exc.strerror or exc}); "
            "choose another output location"
        ) from None
    os.close(fd)
    os.unlink(probe)
    return p


def write_atomic(path: str | Path, data: str | bytes, force: bool = False) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same directory and a rename.

    The destination either keeps its old content or gets the complete new content; an
    interrupted write leaves nothing behind.
    """
    p = check_writable(path, force)
    mode = "wb" if isinstance(data, bytes) else "w"
    tmp = ""
    try:
        fd, tmp = tempfile.mkstemp(
            prefix=f".{p.name}.", suffix=".tmp", dir=p.parent if str(p.parent) else "."
        )
        # mkstemp creates the file with mode 0600; give it the mode a plain open() would.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        with os.fdopen(
            fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": ""})
        ) as fh:
            fh.write(data)
        os.replace(tmp, p)
    except BaseException as exc:
        if tmp and os.path.exists(tmp):
            os.unlink(tmp)
        if isinstance(exc, OSError):  # disk full, file system gone read-only, ...
            raise VibrapolError(f"{p}: could not be written ({exc.strerror or exc})") from exc
        raise
    return p
