"""Columns of numbers from delimited text: comma, semicolon, tab or whitespace, any header.

Layout read (one point per line; the first column is x, the others intensities)::

    # comment lines start with '#', '%', '!' or '//' and may appear anywhere
    Raman shift (cm-1), VV, VH        <- optional header: the last text line before the data
    200.5, 1012.3, 745.0
    201.0, 1013.9, 744.2

The delimiter is detected from the data lines (tab, ';', ',', then runs of whitespace: the
first that splits every data line into the same number ≥ 2 of numbers); the decimal mark is
'.' unless the numbers carry a comma and the delimiter is not one (``200,5;1012,3`` or
``200,5  1012,3``).  Anything ambiguous or inconsistent is an error naming the line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError

_COMMENT = ("#", "%", "!", "//")
_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")
_NONFINITE = re.compile(r"^[+-]?(nan|inf|infinity)$", re.IGNORECASE)
_DELIMITERS = ("\t", ";", ",", None)  # None: runs of whitespace
_DELIMITER_NAMES = {"\t": "tab", ";": "';'", ",": "','", None: "whitespace"}


@dataclass(frozen=True, eq=False)
class DelimitedTable:
    """Numbers read from a delimited text file.

    Attributes
    ----------
    values : ndarray, shape (n_rows, n_columns)
        The numbers, in file order.
    names : tuple of str
        Column names from the header, or ``("column 1", …)`` when there is none.
    lines : ndarray of int, shape (n_rows,)
        Line number of each row in the file.
    delimiter : str or None
        The delimiter found (None = whitespace).
    decimal : str
        The decimal mark found ('.' or ',').
    """

    values: np.ndarray
    names: tuple[str, ...]
    lines: np.ndarray
    delimiter: str | None
    decimal: str


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    return [f.strip() for f in line.split(delimiter)]


def _is_numberish(field: str) -> bool:
    return bool(_NUMBER.match(field) or _NONFINITE.match(field))


def _looks_like_data(line: str) -> bool:
    fields = [f for f in re.split(r"[\s;,]+", line.strip()) if f]
    return bool(fields) and all(_is_numberish(f) for f in fields)


def _find_delimiter(rows: list[tuple[int, str]], where: str) -> str | None:
    bad_field: tuple[int, str] | None = None  # first non-number under a consistent split
    best: tuple[int, str | None, int, int] | None = None  # (rows agreeing, delim, line, fields)
    for delim in _DELIMITERS:
        split = [_split(text, delim) for _, text in rows]
        counts = [len(f) for f in split]
        common = max(set(counts), key=counts.count)
        if common < 2:
            continue
        if all(c == common for c in counts):
            odd = [
                (n, f)
                for (n, _), fs in zip(rows, split, strict=True)
                for f in fs
                if not _is_numberish(f)
            ]
            if not odd:
                return delim
            bad_field = bad_field or odd[0]
        elif best is None or counts.count(common) > best[0]:
            line = next(n for (n, _), c in zip(rows, counts, strict=True) if c != common)
            best = (counts.count(common), delim, line, common)
    if bad_field is not None:
        number, field = bad_field
        what = "an empty field" if not field else f"{field!r} is not a number"
        raise InputFormatError(f"{where}: line {number}: {what}")
    if best is None:
        raise InputFormatError(
            f"{where}: found only one column of numbers; need x and intensity columns"
        )
    _, delim, line, common = best
    raise InputFormatError(
        f"{where}: line {line}: cannot split the numbers into the same columns as the other "
        f"lines ({common} {_DELIMITER_NAMES[delim]}-separated fields); a decimal comma mixed "
        "with a comma delimiter, or a thousands separator?"
    )


def _find_decimal(
    rows: list[tuple[int, str]], delimiter: str | None, decimal: str, where: str
) -> str:
    commas = next((n for n, t in rows if any("," in f for f in _split(t, delimiter))), None)
    points = next((n for n, t in rows if any("." in f for f in _split(t, delimiter))), None)
    if decimal == "auto":
        if commas is not None and points is not None:
            raise InputFormatError(
                f"{where}: numbers use both '.' (line {points}) and ',' (line {commas}) as "
                "decimal marks; make them consistent or pass decimal='.' or ','"
            )
        return "," if commas is not None else "."
    if decimal == "." and commas is not None:
        raise InputFormatError(
            f"{where}: line {commas}: number with a decimal comma but decimal='.'; pass "
            "decimal=',' (--decimal ,)"
        )
    if decimal == ",":
        if delimiter == ",":
            raise InputFormatError(f"{where}: decimal=',' but ',' also separates the columns")
        if points is not None:
            raise InputFormatError(
                f"{where}: line {points}: number with a decimal point but decimal=','"
            )
    return decimal


def read_delimited(
    text: str, where: str = "", *, delimiter: str | None = "auto", decimal: str = "auto"
) -> DelimitedTable:
    r"""Parse delimited text into a :class:`DelimitedTable`.

    Parameters
    ----------
    text : str
        File content.
    where : str
        File name for messages.
    delimiter : {"auto", "\t", ";", ",", " ", None}
        Column delimiter; ``None`` or ``" "`` means runs of whitespace.
    decimal : {"auto", ".", ","}
        Decimal mark.

    Raises
    ------
    InputFormatError
        No data, one column only, inconsistent columns, mixed or contradictory decimal marks,
        text inside the data, NaN or infinite values (each names the line).
    """
    if decimal not in ("auto", ".", ","):
        raise InputFormatError(f"decimal must be 'auto', '.' or ',', not {decimal!r}")
    rows: list[tuple[int, str]] = []
    header: str | None = None
    for number, raw in enumerate(text.lstrip("\ufeff").splitlines(), 1):
        line = raw.strip()
        if not line or line.startswith(_COMMENT):
            continue
        if _looks_like_data(line):
            rows.append((number, line))
        elif rows:
            raise InputFormatError(
                f"{where}: line {number}: {line[:40]!r} is not a row of numbers (text inside "
                "the data; comment it out with '#')"
            )
        else:
            header = line
    if not rows:
        raise InputFormatError(f"{where}: no rows of numbers found")
    if delimiter == "auto":
        delim = _find_delimiter(rows, where)
    else:
        delim = None if delimiter in (None, " ") else delimiter
        if delim not in _DELIMITERS:
            raise InputFormatError(
                f"delimiter must be 'auto', tab, ';', ',' or whitespace, not {delimiter!r}"
            )
    mark = _find_decimal(rows, delim, decimal, where)
    n_cols = len(_split(rows[0][1], delim))
    values = np.empty((len(rows), n_cols))
    for r, (number, line) in enumerate(rows):
        fields = _split(line, delim)
        if len(fields) != n_cols:
            raise InputFormatError(
                f"{where}: line {number}: {len(fields)} fields where line {rows[0][0]} has {n_cols}"
            )
        for c, field in enumerate(fields):
            if _NONFINITE.match(field):
                raise InputFormatError(
                    f"{where}: line {number}: column {c + 1} is {field!r}, not a finite number"
                )
            if not _NUMBER.match(field):
                raise InputFormatError(f"{where}: line {number}: {field!r} is not a number")
            values[r, c] = float(field.replace(",", ".") if mark == "," else field)
    if n_cols < 2:
        raise InputFormatError(f"{where}: only one column of numbers; need x and intensity columns")
    names = tuple(f"column {i + 1}" for i in range(n_cols))
    if header is not None:
        splits = [_split(header, delim)]
        if delim is None:  # names may contain single spaces: "Raman shift (cm-1)"
            splits = [header.split("\t"), re.split(r"\s{2,}", header), header.split()]
        for fields in splits:
            if len(fields) == n_cols:
                names = tuple(f.strip().strip("\"'") for f in fields)
                break
    return DelimitedTable(values, names, np.array([n for n, _ in rows]), delim, mark)
