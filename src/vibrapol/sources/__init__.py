"""Readers that turn an input file into a :class:`~vibrapol.modeset.ModeSet`.

Each reader module defines its :class:`Reader` as ``READER``; :data:`PRIORITY` below is the one
list that sets the order in which :func:`sniff` tries them.  :func:`sniff` guesses the kind of a
file from its content (never from its name alone) and :func:`read_modes` reads it.
"""

from __future__ import annotations

from vibrapol.sources import (
    cclib_generic,
    dalton,
    firefly,
    gamessuk,
    gaussian_fchk,
    gaussian_log,
    modes_json,
    orca,
    qchem,
    turbomole,
)
from vibrapol.sources.registry import Reader, read_modes, readers, register, sniff

#: Sniffing priority: the first reader whose sniffer recognises a file reads it.  vibrapol's own
#: file first, the program readers next, the generic cclib reader last (the fallback, which
#: also recognises outputs that a reader of our own reads in full).
PRIORITY: tuple[Reader, ...] = (
    modes_json.READER,
    orca.READER,
    qchem.READER,
    firefly.READER,
    gamessuk.READER,
    dalton.READER,
    turbomole.READER,
    gaussian_fchk.READER,
    gaussian_log.READER,
    cclib_generic.READER,
)

for _reader in PRIORITY:
    register(_reader)
del _reader

__all__ = ["PRIORITY", "Reader", "read_modes", "readers", "register", "sniff"]
