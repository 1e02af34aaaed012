"""Safe output files: never overwrite without permission, never leave a partial file."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from vibrapol.errors import VibrapolError


def check_writable(path: str | Path, force: bool = False) -> Path:
    """Check, before any work is done, that ``path`` may be written.

    Raises
    ------
    VibrapolError
        If the file exists and ``force`` is False, or its directory is missing or not writable.
    """
    p = Path(path)
    if p.exists() and not force:
        raise VibrapolError(f"{p}: already exists; pass --force to overwrite it")
    if p.exists() and p.is_dir():
        raise VibrapolError(f"{p}: is a directory, expected a file name")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise VibrapolError(f"{p}: directory {parent} does not exist")
    if not os.access(parent, os.W_OK):
        raise VibrapolError(f"{p}: directory {parent} is not writable")
    return p


def write_atomic(path: str | Path, data: str | bytes, force: bool = False) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same directory and a rename.

    The destination either keeps its old content or gets the complete new content; an
    interrupted write leaves nothing behind.
    """
    p = check_writable(path, force)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(
        prefix=f".{p.name}.", suffix=".tmp", dir=p.parent if str(p.parent) else "."
    )
    try:
        # mkstemp creates the file with mode 0600; give it the mode a plain open() would.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        with os.fdopen(
            fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": ""})
        ) as fh:
            fh.write(data)
        os.replace(tmp, p)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return p
