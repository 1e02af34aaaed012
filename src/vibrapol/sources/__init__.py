"""Readers that turn an input file into a :class:`~vibrapol.modeset.ModeSet`.

Each reader module registers itself by name with :func:`register`; :func:`sniff` guesses the
kind of a file from its content (never from its name alone) and :func:`read_modes` reads it.
"""

from __future__ import annotations

# Importing the modules registers their readers (order = sniffing priority).
from vibrapol.sources import modes_json as _modes_json  # noqa: E402, F401, I001
from vibrapol.sources import orca as _orca  # noqa: F401
from vibrapol.sources import qchem as _qchem  # noqa: F401
from vibrapol.sources.registry import Reader, read_modes, readers, register, sniff

__all__ = ["Reader", "read_modes", "readers", "register", "sniff"]

from vibrapol.sources import firefly as _firefly  # noqa: E402, F401, I001
from vibrapol.sources import gamessuk as _gamessuk  # noqa: E402, F401
from vibrapol.sources import dalton as _dalton  # noqa: E402, F401
from vibrapol.sources import turbomole as _turbomole  # noqa: E402, F401
from vibrapol.sources import gaussian_fchk, gaussian_log  # noqa: E402, F401, I001

# The generic cclib reader is the fallback: registered last, so it is sniffed last.
from vibrapol.sources import cclib_generic as _cclib_generic  # noqa: E402, F401, I001
