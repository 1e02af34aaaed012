"""The frequency sections of a Gaussian log, in every layout Gaussian 98 to 16 prints.

A section starts at the line ``Harmonic frequencies (cm**-1), ...`` and holds blocks of modes.
Two kinds of block exist:

- the usual one (every version), three modes per block, rows ending in ``--`` and Cartesian
  displacements with 2 decimals under a header ``Atom AN X Y Z`` (Gaussian 09/16 print two
  spaces before ``Atom`` and before ``AN``, Gaussian 98/03 one);
- the high-precision one (``Freq=HPModes``, or ``IOp(7/33=1)``), printed as a section of its
  own just before the usual one: five modes per block, rows ending in ``---`` and displacements
  with 5 decimals, one row per Cartesian coordinate under ``Coord Atom Element:``.

Gaussian 09/16 print two depolarization rows, ``Depolar (P)`` (plane-polarized incident light)
and ``Depolar (U)`` (unpolarized); Gaussian 98 prints one, ``Depolar``, for plane-polarized
light.  A number too wide for its field is printed as ``*`` characters (overflow): it is not a
number, so it becomes NaN and the overflow is listed (mode and quantity) for the caller to
report.  Files of other programs written in this layout (frequency exports) read the same way.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import InputFormatError
from vibrapol.sources.gaussian import PrintedModes

#: The first line of every frequency section.
FREQ_HEADER = "Harmonic frequencies (cm**-1)"

#: Width of the printed number fields (F10.4 in both block kinds): a run of '*' this long is
#: one overflowed field, a longer run several adjacent ones.
FIELD_WIDTH = 10

#: ``<label> --`` (usual block) or ``<label> ---`` (high-precision block), then the values.
_ROW = re.compile(r"^\s+(?P<label>[A-Za-z][A-Za-z0-9 .()]*?)\s+(?P<dash>---|--)(?P<values>.*)$")


_FIRST_ROW = re.compile(r"^ +Frequencies ---? ")


@dataclass(frozen=True, eq=False)
class FrequencySection:
    """What one frequency section printed, and how to read it.

    Attributes
    ----------
    printed : PrintedModes
        Per-mode values and displacements (NaN where a field overflowed).
    high_precision : bool
        True for the ``---`` block of ``Freq=HPModes``.
    single_ratio : bool
        True when one unqualified ``Depolar`` row was printed (Gaussian 98: plane-polarized).
    overflow : tuple of str
        "<quantity> of mode <k>" for every field printed as ``****``.
    line : int
        Line number (1-based) of the section's first line.
    """

    printed: PrintedModes
    high_precision: bool
    single_ratio: bool
    overflow: tuple[str, ...]
    line: int


def row_key(label: str) -> str | None:
    """Which per-mode quantity a row label names (both block kinds); None for the others."""
    text = " ".join(label.split())
    if text.startswith("Frequencies"):
        return "freqs_cm1"
    if text.startswith("IR Inten"):
        return "ir_intensity"
    if text.startswith("Raman Activ"):
        return "activity"
    if text.startswith("Depolar"):
        return "rho_natural" if "(U)" in text else "rho_linear"
    return None


_QUANTITY = {
    "freqs_cm1": "frequency",
    "ir_intensity": "IR intensity",
    "activity": "Raman activity",
    "rho_linear": "depolarization ratio (plane-polarized)",
    "rho_natural": "depolarization ratio (unpolarized)",
}


def _fields(text: str) -> list[list[float]] | None:
    """Readings of a row's fields: one when plain numbers, two when stars make it ambiguous.

    Fields are fixed-width (F10.4), so adjacent numbers may touch (``12345.678918442.5155``) and
    an overflowed field is a run of stars that may touch its neighbours; numbers are then cut
    after as many decimals as the row's plain numbers have (4 when none is plain).  A run of
    stars is read both as one field and as one field per 10 characters; the caller keeps the
    reading with the expected count.  None when the row holds something else.
    """
    tokens = text.split()
    try:
        return [[float(tok.replace("D", "E").replace("d", "e")) for tok in tokens]]
    except ValueError:
        pass
    decimals = next(
        (len(m.group(1)) for tok in tokens if (m := re.fullmatch(r"[-+]?\d+\.(\d+)", tok))), 4
    )
    pattern = re.compile(rf"\*+|[-+]?\d*\.\d{{{decimals}}}")
    if pattern.sub("", text).strip():
        return None
    pieces = pattern.findall(text)
    readings = []
    for per_width in (True, False):
        values: list[float] = []
        for piece in pieces:
            if piece.startswith("*"):
                count = max(1, round(len(piece) / FIELD_WIDTH)) if per_width else 1
                values += [np.nan] * count
            else:
                values.append(float(piece))
        readings.append(values)
    return readings


def row_values(text: str, count: int, where: str, line_no: int, last: bool) -> list[float]:
    """``count`` numbers of a row; overflowed fields (stars) are NaN.

    Raises
    ------
    InputFormatError
        When the row holds another number of fields: "cut short" on the last line of the file,
        else "unrecognised layout".
    """
    for values in _fields(text) or []:
        if len(values) == count:
            return values
    if last:
        raise InputFormatError(
            f"{where}: frequency section cut short at line {line_no} (truncated file?)"
        )
    raise InputFormatError(
        f"{where}: unrecognised layout of a frequency-section row at line {line_no} "
        f"(expected {count} numbers, found {text.strip()!r})"
    )


def _block_width(lines: list[str], i: int, found: int) -> int:
    """Number of modes of the block whose Frequencies row is line ``i``: from the index row."""
    for back in (1, 2):
        if i - back >= 0:
            fields = lines[i - back].split()
            if fields and all(f.isdigit() for f in fields):
                return len(fields)
    return found


def _displacement_rows(
    lines: list[str], start: int, n_atoms: int, width: int, where: str
) -> tuple[np.ndarray, int]:
    """Usual block: N rows ``atom Z dx dy dz ...`` after the ``Atom AN`` header at ``start``."""
    table = []
    for k in range(start + 1, start + 1 + n_atoms):
        if k >= len(lines):
            raise InputFormatError(
                f"{where}: normal-mode table cut short at line {k} (truncated file?)"
            )
        values = row_values(lines[k], 2 + 3 * width, where, k + 1, k == len(lines) - 1)
        table.append(values[2:])
    disp = np.array(table).reshape(n_atoms, width, 3).transpose(1, 0, 2)
    return disp.reshape(width, 3 * n_atoms), start + 1 + n_atoms


def _high_precision_rows(
    lines: list[str], start: int, n_atoms: int, width: int, where: str
) -> tuple[np.ndarray, int]:
    """High-precision block: 3N rows ``coord atom Z d_1 ... d_k`` after ``Coord Atom Element:``.

    Layout (invented numbers)::

         Coord Atom Element:
           1     1     8          0.00012  -0.07123   0.00000   0.70411  -0.00210
           2     1     8         -0.06903   0.00000   0.52016   0.00000   0.00005
    """
    disp = np.full((width, 3 * n_atoms), np.nan)
    for k in range(start + 1, start + 1 + 3 * n_atoms):
        if k >= len(lines):
            raise InputFormatError(
                f"{where}: normal-mode table cut short at line {k} (truncated file?)"
            )
        values = row_values(lines[k], 3 + width, where, k + 1, k == len(lines) - 1)
        coord, atom = int(values[0]), int(values[1])
        if not (1 <= coord <= 3 and 1 <= atom <= n_atoms):
            raise InputFormatError(
                f"{where}: unrecognised layout of the high-precision normal-mode table at line "
                f"{k + 1} (coordinate {coord} of atom {atom} for {n_atoms} atoms)"
            )
        disp[:, 3 * (atom - 1) + coord - 1] = values[3:]
    return disp, start + 1 + 3 * n_atoms


def _read_block(
    lines: list[str], i: int, stop: int, dash: str, width: int, n_atoms: int, where: str
) -> tuple[dict[str, list[float]], np.ndarray | None, int, bool]:
    """Rows and displacements of the block whose Frequencies row is line ``i``.

    Returns the rows by key, the displacements (None when the block has no table before a blank
    line or the end of the section), the line after the block, and whether the plane-polarized
    ratio came from an unqualified ``Depolar`` row.
    """
    block: dict[str, list[float]] = {}
    single = False
    while i < stop:
        line = lines[i]
        match = _ROW.match(line)
        if match is not None and match.group("dash") == dash:
            key = row_key(match.group("label"))
            if key is not None and key not in block:
                block[key] = row_values(
                    match.group("values"), width, where, i + 1, i == len(lines) - 1
                )
                single = single or (key == "rho_linear" and "(P)" not in match.group("label"))
            i += 1
            continue
        head = line.split()
        if head[:2] == ["Atom", "AN"]:
            disp, i = _displacement_rows(lines, i, n_atoms, width, where)
            return block, disp, i, single
        if head[:3] == ["Coord", "Atom", "Element:"]:
            disp, i = _high_precision_rows(lines, i, n_atoms, width, where)
            return block, disp, i, single
        if not head:
            break
        i += 1
    return block, None, i, single


def read_section(lines: list[str], start: int, stop: int, n_atoms: int, where: str):
    """The :class:`FrequencySection` between lines ``start`` (its header) and ``stop``.

    Layout of the usual block (invented numbers; Gaussian 98/03 print `` Atom AN`` and may
    print one row ``Depolar     --``)::

                              1                      2                      3
                              A                      A                      A
         Frequencies --    412.3456              1023.4567              3456.7890
         Red. masses --      1.2345                 2.3456                 1.0456
         IR Inten    --      3.4567                 0.1234                12.3456
         Raman Activ --      1.2345                 7.6543                45.6789
         Depolar (P) --      0.7500                 0.2345                 0.1234
         Depolar (U) --      0.8571                 0.3799                 0.2197
          Atom  AN      X      Y      Z        X      Y      Z        X      Y      Z
             1   8     0.01  -0.02   0.03     0.10   0.20  -0.05     0.00   0.01   0.02

    The high-precision block prints ``Frequencies ---``, ``Reduced masses ---``,
    ``IR Intensities ---``, ``Raman Activities ---``, ``Depolarizations ---`` (labels right
    aligned, five modes) and the table of :func:`_high_precision_rows`.

    Raises
    ------
    InputFormatError
        A block cut short (truncated file) or of an unknown layout (the line is named).
    """
    rows: dict[str, list[float]] = {key: [] for key in _QUANTITY}
    columns: list[np.ndarray] = []
    overflow: list[str] = []
    kinds: set[str] = set()
    single_ratio = False
    i = start + 1
    while i < stop:
        match = _ROW.match(lines[i])
        if match is None or row_key(match.group("label")) != "freqs_cm1":
            i += 1
            continue
        dash = match.group("dash")
        kinds.add(dash)
        readings = _fields(match.group("values")) or [[]]
        width = _block_width(lines, i, len(readings[0]))
        first_mode = len(rows["freqs_cm1"])
        block, disp, i, single = _read_block(lines, i, stop, dash, width, n_atoms, where)
        single_ratio = single_ratio or single
        if disp is None:
            modes = f"modes {first_mode + 1}-{first_mode + width}"
            if i >= len(lines) - 1:
                raise InputFormatError(
                    f"{where}: normal-mode table cut short in the block of {modes} "
                    "(truncated file?)"
                )
            raise InputFormatError(
                f"{where}: unrecognised layout of the block of {modes} at line {i + 1} "
                "(no displacement table under its rows)"
            )
        for key, values in block.items():
            for k, v in enumerate(values):
                if np.isnan(v):
                    overflow.append(f"{_QUANTITY[key]} of mode {first_mode + k + 1}")
            rows[key] += values
        columns += list(disp)
    n = len(rows["freqs_cm1"])
    if n == 0:
        raise InputFormatError(
            f"{where}: frequency section at line {start + 1} has no modes (truncated file?)"
        )
    if len(kinds) > 1:
        raise InputFormatError(
            f"{where}: unrecognised layout of the frequency section at line {start + 1} "
            "(blocks of both the usual and the high-precision kind)"
        )
    found = {k: np.array(v) if len(v) == n else None for k, v in rows.items() if k != "freqs_cm1"}
    printed = PrintedModes(
        freqs_cm1=np.array(rows["freqs_cm1"]), displacements=np.array(columns), **found
    )
    return FrequencySection(printed, "---" in kinds, single_ratio, tuple(overflow), start + 1)


def read_sections(
    lines: list[str], n_atoms: int, where: str
) -> tuple[FrequencySection, FrequencySection | None]:
    """The last frequency section and, when printed just before it, its other-precision twin.

    Returns ``(main, twin)``: with ``Freq=HPModes`` Gaussian prints a high-precision section
    and then the usual one for the same modes; ``main`` is the last section, ``twin`` the one
    before it when it is of the other kind and has as many modes (else None).

    Raises
    ------
    InputFormatError
        No frequency section, or one vibrapol cannot read.
    """
    starts = [i for i, line in enumerate(lines) if FREQ_HEADER in line]
    if not starts:  # an export without the section header: from the first Frequencies row
        first = next((i for i, line in enumerate(lines) if _FIRST_ROW.match(line)), None)
        starts = [] if first is None else [max(first - 3, 0)]
    if not starts:
        raise InputFormatError(f"{where}: no vibrational frequencies found (is it a Freq job?)")
    bounds = [*starts, len(lines)]

    def section(k: int) -> FrequencySection:
        stop = bounds[k + 1]
        for j in range(bounds[k], stop):
            if "Thermochemistry" in lines[j]:
                stop = j
                break
        return read_section(lines, bounds[k], stop, n_atoms, where)

    main = section(len(starts) - 1)
    if len(starts) < 2:
        return main, None
    try:
        twin = section(len(starts) - 2)
    except InputFormatError:
        return main, None
    twin_freqs, main_freqs = twin.printed.freqs_cm1, main.printed.freqs_cm1
    assert twin_freqs is not None and main_freqs is not None  # read_section always sets them
    if twin.high_precision == main.high_precision or len(twin_freqs) != len(main_freqs):
        return main, None
    return main, twin
