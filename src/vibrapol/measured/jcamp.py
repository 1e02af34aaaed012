"""A small reader for JCAMP-DX spectra (IUPAC / JCAMP-DX 4.24 and 5.x, one-dimensional data).

Handles
-------
* labelled data records ``##LABEL=value`` (labels compared without case, spaces, ``-``, ``/``
  and ``_``, as the standard says), ``$$`` comments, multi-line values;
* ``##XYDATA=(X++(Y..Y))`` in every ASCII form of the standard: AFFN (free numbers, also with
  exponents), PAC (signs as separators), SQZ (squeezed leading digit), DIF (differences) and
  DUP (repeat counts), mixed freely, with the Y-value check at line starts after a DIF line
  and the X check against ``FIRSTX``/``LASTX``/``NPOINTS``;
* ``##XYPOINTS=(XY..XY)`` and ``##XYDATA=(XY..XY)`` (pairs, uneven spacing allowed);
* compound files (``##DATA TYPE=LINK``): every block with data is returned in file order.

Not handled (one clear error each): ``##NTUPLES`` (multi-page NMR/MS data), a block with only a
``##PEAK TABLE``, missing values (``?``).

Why not the ``jcamp`` package from PyPI: its version 1.3.2 was tried on the compressed forms
below and crashed on a DUP count after a SQZ value (IndexError), kept the Y check value as an
extra point when the first data line had no DIF characters, and reports damaged files with
``print`` instead of an error.

The compression alphabet (R. S. McDonald and P. A. Wilks, Appl. Spectrosc. 42, 151 (1988),
Table; from memory):

=====  ======================================================================
form   characters (digit 0 … 9; negative values lower case)
=====  ======================================================================
SQZ    ``@ A B C D E F G H I`` = +0 … +9, ``a … i`` = −1 … −9 (first digit of a value)
DIF    ``% J K L M N O P Q R`` = +0 … +9, ``j … r`` = −1 … −9 (first digit of a difference)
DUP    ``S T U V W X Y Z s`` = 1 … 9 (repeat count of the previous value or difference)
=====  ======================================================================

Example from the same paper (from memory), the ordinates 1 2 3 3 2 1 0 −1 −2 −3 are written
AFFN ``1 2 3 3 2 1 0 -1 -2 -3``, PAC ``1+2+3+3+2+1+0-1-2-3``, SQZ ``ABCCBA@abc``, DIF
``AJJ%jjjjjj`` and DIFDUP ``AJT%jX``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError

_SQZ = {c: v for v, c in enumerate("@ABCDEFGHI")} | {c: -v for v, c in enumerate("abcdefghi", 1)}
_DIF = {c: v for v, c in enumerate("%JKLMNOPQR")} | {c: -v for v, c in enumerate("jklmnopqr", 1)}
_DUP = {c: v for v, c in enumerate("STUVWXYZs", 1)}
#: Characters that occur only in compressed (ASDF) data; "E"/"e" are SQZ digits too, but also
#: exponent markers of free-format numbers, so they do not decide on their own.
_ASDF_ONLY = (set(_SQZ) | set(_DIF) | set(_DUP)) - {"E", "e"}


def normalize_label(label: str) -> str:
    """Label as compared by the standard: upper case, no spaces, ``-``, ``/`` or ``_``."""
    return re.sub(r"[\s\-/_]", "", label).upper()


@dataclass(frozen=True, eq=False)
class JcampBlock:
    """One data block of a JCAMP-DX file.

    Attributes
    ----------
    title : str
        ``##TITLE``.
    data_type : str
        ``##DATA TYPE`` (e.g. ``"RAMAN SPECTRUM"``).
    x_units, y_units : str
        ``##XUNITS`` and ``##YUNITS`` as written (e.g. ``"1/CM"``, ``"NANOMETERS"``).
    x, y : ndarray
        Abscissae and ordinates after ``XFACTOR``/``YFACTOR``, in file order.
    lines : ndarray of int
        Line number of the data line each point came from.
    labels : tuple of (str, str)
        Every labelled data record of the block (normalized label, value), in file order.
    """

    title: str
    data_type: str
    x_units: str
    y_units: str
    x: np.ndarray
    y: np.ndarray
    lines: np.ndarray
    labels: tuple[tuple[str, str], ...]

    def label(self, name: str, default: str = "") -> str:
        """Value of a labelled data record (name compared as the standard says)."""
        key = normalize_label(name)
        for k, v in self.labels:
            if k == key:
                return v
        return default


@dataclass
class _Record:
    label: str
    value: str
    line: int
    data: list[tuple[int, str]]


def looks_like_jcamp(text: str) -> bool:
    """True when the text starts (after blank lines and ``$$`` comments) with ``##``."""
    for line in text.splitlines()[:50]:
        s = line.strip()
        if not s or s.startswith("$$"):
            continue
        return s.startswith("##")
    return False


def _records(text: str) -> list[_Record]:
    out: list[_Record] = []
    for number, raw in enumerate(text.splitlines(), 1):
        line = raw.split("$$", 1)[0].rstrip()
        if line.lstrip().startswith("##"):
            body = line.lstrip()[2:]
            if "=" not in body:
                raise InputFormatError(f"line {number}: {raw.strip()!r} has no '='")
            label, value = body.split("=", 1)
            out.append(_Record(normalize_label(label), value.strip(), number, []))
        elif line.strip():
            if not out:
                raise InputFormatError(f"line {number}: text before the first ##LABEL=")
            out[-1].data.append((number, line.strip()))
    return out


def _tokens(text: str, exponents: bool, where: str) -> list[tuple[str, str]]:
    """Split one data line into (kind, digits) tokens; kind is 'abs', 'dif' or 'dup'."""
    tokens: list[tuple[str, str]] = []
    kind, digits = "", ""
    n = len(text)
    for i, c in enumerate(text):
        if c.isdigit() or c == ".":
            if not kind:
                kind = "abs"
            digits += c
            continue
        if exponents and c in "eE" and kind == "abs" and digits[-1:].isdigit():
            if i + 1 < n and (text[i + 1].isdigit() or text[i + 1] in "+-"):
                digits += "e"
                continue
        if c in "+-" and digits.endswith("e"):
            digits += c
            continue
        if kind:
            tokens.append((kind, digits))
            kind, digits = "", ""
        if c in " \t,":
            continue
        if c in "+-":
            kind, digits = "abs", c
        elif c in _SQZ:
            kind, digits = "abs", str(_SQZ[c])
        elif c in _DIF:
            kind, digits = "dif", str(_DIF[c])
        elif c in _DUP:
            kind, digits = "dup", str(_DUP[c])
        elif c == "?":
            raise InputFormatError(f"{where}: missing value '?' in the data; not supported")
        else:
            raise InputFormatError(f"{where}: unexpected character {c!r} in a data line")
    if kind:
        tokens.append((kind, digits))
    return tokens


def decode_asdf(text: str, *, exponents: bool = False, where: str = "") -> tuple[list[float], bool]:
    """Decode one line of AFFN/PAC/SQZ/DIF/DUP numbers.

    Parameters
    ----------
    text : str
        The data line (X first, then ordinates).
    exponents : bool
        Read ``E``/``e`` after digits as an exponent (free-format numbers) rather than as a
        SQZ digit; decided per block by :func:`read_jcamp`.
    where : str
        File and line for messages.

    Returns
    -------
    values : list of float
        X followed by the ordinates on the line (differences already summed, repeats
        expanded).
    ends_in_dif : bool
        True when the last ordinate was written in DIF form (the next line then starts with
        a Y check value).

    Raises
    ------
    InputFormatError
        Unknown characters, a difference or repeat with nothing before it, malformed digits.
    """
    tokens = _tokens(text, exponents, where)
    if not tokens:
        return [], False
    if tokens[0][0] != "abs" or (len(tokens) > 1 and tokens[1][0] != "abs"):
        raise InputFormatError(f"{where}: a line must start with X and an absolute ordinate")
    values: list[float] = []
    last: tuple[str, float] | None = None
    try:
        for kind, digits in tokens:
            if kind == "abs":
                last = ("abs", float(digits))
                values.append(last[1])
            elif kind == "dif":
                last = ("dif", float(digits))
                values.append(values[-1] + last[1])
            else:
                count = int(digits)
                if last is None or count < 1 or len(values) < 2:
                    raise InputFormatError(f"{where}: repeat count {digits} with nothing to repeat")
                for _ in range(count - 1):
                    values.append(last[1] if last[0] == "abs" else values[-1] + last[1])
    except ValueError as exc:
        raise InputFormatError(f"{where}: malformed number in {text!r}") from exc
    return values, last is not None and last[0] == "dif" and len(values) > 1


def _number(rec: dict[str, str], key: str, where: str, default: float | None = None) -> float:
    if key not in rec:
        if default is not None:
            return default
        raise InputFormatError(f"{where}: ##{key}= is missing (needed for the X++(Y..Y) data)")
    try:
        value = float(rec[key])
    except ValueError as exc:
        raise InputFormatError(f"{where}: ##{key}={rec[key]!r} is not a number") from exc
    if not math.isfinite(value):
        raise InputFormatError(f"{where}: ##{key}={rec[key]!r} is not a finite number")
    return value


def _xpp_yy(
    data: list[tuple[int, str]], rec: dict[str, str], where: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    first_x, last_x = _number(rec, "FIRSTX", where), _number(rec, "LASTX", where)
    n_points = int(_number(rec, "NPOINTS", where))
    x_factor = _number(rec, "XFACTOR", where, 1.0)
    y_factor = _number(rec, "YFACTOR", where, 1.0)
    if n_points < 2:
        raise InputFormatError(f"{where}: ##NPOINTS={n_points}; a spectrum needs more points")
    dx = (last_x - first_x) / (n_points - 1)
    exponents = not any(set(text) & _ASDF_ONLY for _, text in data)
    ys: list[float] = []
    lines: list[int] = []
    check_next = False
    tol = max(abs(dx), 0.5 * abs(x_factor)) * (1 + 1e-9)
    for number, text in data:
        at = f"{where}: line {number}"
        values, ends_in_dif = decode_asdf(text, exponents=exponents, where=at)
        if not values:
            continue
        x_line, new = values[0] * x_factor, values[1:]
        index = len(ys) - 1 if check_next else len(ys)
        if abs(x_line - (first_x + index * dx)) > tol:
            raise InputFormatError(
                f"{at}: X check failed (line starts at {x_line:g}, expected "
                f"{first_x + index * dx:g}); a data line is missing or ##FIRSTX/##LASTX/##NPOINTS "
                "are wrong"
            )
        if check_next:
            if not new or abs(new[0] - ys[-1]) > 1e-9 * max(1.0, abs(ys[-1])):
                got = f"{new[0]:g}" if new else "nothing"
                raise InputFormatError(
                    f"{at}: Y check failed (line starts with {got}, the previous line ended with "
                    f"{ys[-1]:g}); the file is damaged"
                )
            new = new[1:]
        ys.extend(new)
        lines.extend([number] * len(new))
        check_next = ends_in_dif
    if len(ys) != n_points:
        raise InputFormatError(f"{where}: ##NPOINTS={n_points} but {len(ys)} ordinates were read")
    x = first_x + dx * np.arange(n_points)
    return x, np.asarray(ys) * y_factor, np.asarray(lines)


def _xy_pairs(
    data: list[tuple[int, str]], rec: dict[str, str], where: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    x_factor = _number(rec, "XFACTOR", where, 1.0)
    y_factor = _number(rec, "YFACTOR", where, 1.0)
    xs: list[float] = []
    ys: list[float] = []
    lines: list[int] = []
    for number, text in data:
        if "?" in text:
            raise InputFormatError(f"{where}: line {number}: missing value '?'; not supported")
        fields = [f for f in re.split(r"[\s,;]+", text.strip()) if f]
        try:
            numbers = [float(f) for f in fields]
        except ValueError as exc:
            raise InputFormatError(
                f"{where}: line {number}: expected X,Y pairs, got {text!r}"
            ) from exc
        if len(numbers) % 2:
            raise InputFormatError(f"{where}: line {number}: odd count of numbers in X,Y pairs")
        xs.extend(numbers[0::2])
        ys.extend(numbers[1::2])
        lines.extend([number] * (len(numbers) // 2))
    if "NPOINTS" in rec and int(_number(rec, "NPOINTS", where)) != len(xs):
        raise InputFormatError(f"{where}: ##NPOINTS={rec['NPOINTS']} but {len(xs)} pairs were read")
    return np.asarray(xs) * x_factor, np.asarray(ys) * y_factor, np.asarray(lines)


def _block(records: list[_Record], where: str) -> JcampBlock | None:
    rec = {r.label: r.value for r in records}
    table = next((r for r in records if r.label in ("XYDATA", "XYPOINTS")), None)
    if table is None:
        if "NTUPLES" in rec:
            raise InputFormatError(f"{where}: ##NTUPLES (multi-page) data is not supported")
        return None
    form = re.sub(r"\s", "", table.value).upper()
    at = f"{where} (block {rec.get('TITLE', '')!r})"
    if form == "(X++(Y..Y))":
        x, y, lines = _xpp_yy(table.data, rec, at)
    elif form == "(XY..XY)":
        x, y, lines = _xy_pairs(table.data, rec, at)
    else:
        raise InputFormatError(f"{at}: ##{table.label}={table.value} is not a supported data form")
    return JcampBlock(
        title=rec.get("TITLE", ""),
        data_type=rec.get("DATATYPE", ""),
        x_units=rec.get("XUNITS", ""),
        y_units=rec.get("YUNITS", ""),
        x=x,
        y=y,
        lines=lines,
        labels=tuple((r.label, r.value) for r in records),
    )


def read_jcamp(text: str, where: str = "") -> tuple[JcampBlock, ...]:
    """Parse JCAMP-DX text into its data blocks.

    Parameters
    ----------
    text : str
        Whole file content.
    where : str
        File name for messages.

    Returns
    -------
    tuple of JcampBlock
        Every block holding XYDATA or XYPOINTS, in file order (a LINK block's children).

    Raises
    ------
    InputFormatError
        Malformed records, failed X/Y checks, a point count that disagrees with ``NPOINTS``,
        unsupported forms, or no data at all.
    """
    try:
        records = _records(text)
    except InputFormatError as exc:
        raise InputFormatError(f"{where}: {exc}") from None
    blocks: list[JcampBlock] = []
    stack: list[list[_Record]] = []
    for rec in records:
        if rec.label == "TITLE":
            stack.append([rec])
        elif not stack:
            raise InputFormatError(f"{where}: line {rec.line}: ##{rec.label}= before ##TITLE=")
        elif rec.label == "END":
            block = _block(stack.pop(), where)
            if block is not None:
                blocks.append(block)
        else:
            stack[-1].append(rec)
    if stack:
        raise InputFormatError(f"{where}: ##END= missing for block {stack[-1][0].value!r}")
    if not blocks:
        kinds = {r.label for r in records}
        what = "only a ##PEAK TABLE" if "PEAKTABLE" in kinds else "no ##XYDATA or ##XYPOINTS"
        raise InputFormatError(f"{where}: JCAMP-DX file with {what}; a full spectrum is needed")
    return tuple(blocks)
