"""Readers that turn an input file into a :class:`~vibrapol.modeset.ModeSet`.

Each reader module registers itself by name with :func:`register`; :func:`sniff` guesses the
kind of a file from its content (never from its name alone) and :func:`read_modes` reads it.
"""

from __future__ import annotations

# Importing the modules registers their readers (order = sniffing priority).
from vibrapol.sources import modes_json as _modes_json  # noqa: E402, F401, I001
from vibrapol.sources.registry import Reader, read_modes, readers, register, sniff

__all__ = ["Reader", "read_modes", "readers", "register", "sniff"]
