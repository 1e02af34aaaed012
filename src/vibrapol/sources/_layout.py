"""The one-line error for a printed block whose layout a reader does not know."""

from __future__ import annotations

from vibrapol.errors import InputFormatError


class UnknownLayout(InputFormatError):
    """A block is present but printed in a layout the reader does not know.

    Readers may catch it for an optional block and go on without it (with a warning).
    """


def layout_error(where: str, block: str, line: int, what: str) -> UnknownLayout:
    """Error for a block that is present but printed in a layout not known to the reader.

    Reads "<where>: unrecognised layout of <block> at line <line + 1>: <what>; please report
    this program version" (``line`` is 0-based).  Distinct from a truncated file: the block is
    there, complete or not, and differs from every layout the reader was written for.
    """
    return UnknownLayout(
        f"{where}: unrecognised layout of {block} at line {line + 1}: {what}; "
        "please report this program version"
    )
