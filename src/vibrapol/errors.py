"""Error and warning types of vibrapol.

Every error a user can cause (a bad file, a bad option) is a :class:`VibrapolError`; the command
line prints its message on one line and exits with status 2.  Programming errors stay ordinary
Python exceptions.
"""

from __future__ import annotations


class VibrapolError(Exception):
    """A problem caused by the input; its message says what, where, and what to do."""


class InputFormatError(VibrapolError, ValueError):
    """A file could not be read: unknown kind, truncated, or malformed."""


class ShapeError(VibrapolError, ValueError):
    """An array has the wrong shape for what it describes."""


class GeometryError(VibrapolError, ValueError):
    """A structure that cannot be analysed (one atom, overlapping atoms, bad shape)."""


class OptionError(VibrapolError, ValueError):
    """A parameter or command-line option has a value outside its allowed range."""


class VibrapolWarning(UserWarning):
    """Base class of vibrapol's warnings."""


class PrintedValueMismatch(VibrapolWarning):
    """vibrapol's numbers from the derivatives disagree with those the program printed."""


class AccuracyWarning(VibrapolWarning):
    """A result is less reliable than usual (imaginary modes, poor symmetry, noisy input)."""


class ChangedValuesWarning(VibrapolWarning):
    """vibrapol uses numbers other than the source's because an option asked for it.

    The message says which numbers changed and how (e.g. ``--symmetrize``).
    """


class OpenShellWarning(AccuracyWarning):
    """An open-shell (spin-unrestricted) reference: its ⟨S²⟩ and spin contamination."""
