"""Reading inputs: each file read once, bounds kept while reading, structures known by content.

Contracts checked: ``read_modes`` opens each file once (sniffing and the reader share the
text); a file whose size the system does not report (``/proc``) still stops at the bound; the
old import places of ``decode_text``/``read_text`` keep working; an XYZ structure is read as
XYZ whatever its name and whatever its comment line says, with the coordinates ASE reads from
the same atoms under a plain comment (ASE is the reference library).
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from _paths import FIXTURES
from bad_input_cases import WATER, WATER_XYZ
from vibrapol.errors import InputFormatError, VibrapolWarning
from vibrapol.sources import read_modes

_OPENED: list[str] = []
_WATCH: set[str] = set()


def _audit(event: str, args: tuple) -> None:
    if event == "open" and args and isinstance(args[0], str | Path) and str(args[0]) in _WATCH:
        _OPENED.append(str(args[0]))


sys.addaudithook(_audit)


@pytest.mark.parametrize(
    "path",
    [FIXTURES / "orca5_co2.out", FIXTURES / "gaussian_hood_raman.log", WATER],
    ids=["orca", "gaussian-log", "modes-json"],
)
def test_read_modes_opens_each_file_once(path):
    _OPENED.clear()
    _WATCH.add(str(path))
    try:
        read_modes(path)
    finally:
        _WATCH.discard(str(path))
    assert _OPENED == [str(path)]


def test_bound_holds_while_reading_a_file_of_unknown_size():
    from vibrapol.textio import read_bytes

    if not Path("/proc/self/status").is_file():
        pytest.skip("needs Linux /proc")
    # /proc files report size 0 but hold more: the bound is kept while reading.
    with pytest.raises(InputFormatError, match="holds more than the 10 bytes"):
        read_bytes("/proc/self/status", limit=10)


def test_old_import_places_still_work():
    from vibrapol.sources.registry import decode_text, read_text
    from vibrapol.textio import decode_text as decode
    from vibrapol.textio import read_text as read

    assert decode_text is decode and read_text is read


def _ase_positions(text: str, tmp_path: Path) -> np.ndarray:
    import ase.io

    path = tmp_path / "reference.xyz"
    path.write_text(text)
    return ase.io.read(path).get_positions()


def test_xyz_comment_naming_a_program_is_a_structure(tmp_path):
    from vibrapol.sources.registry import sniff_text
    from vibrapol.structure import read_structure

    text = WATER_XYZ.replace("water", "GAMESS-UK8.0_dvb_raman.out")
    path = tmp_path / "dvb.xyz"
    path.write_text(text)
    assert sniff_text(text) is None  # not taken for the program's output
    atoms = read_structure(path)  # ASE's extended-XYZ parser fails on this comment
    assert atoms.get_chemical_symbols() == ["O", "H", "H"]
    np.testing.assert_allclose(atoms.get_positions(), _ase_positions(WATER_XYZ, tmp_path))


def test_xyz_named_pdb_is_read_as_xyz_with_a_warning(tmp_path):
    from vibrapol.structure import read_structure

    path = tmp_path / "water.pdb"
    path.write_text(WATER_XYZ)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        atoms = read_structure(path)
    assert [str(w.message) for w in caught if issubclass(w.category, VibrapolWarning)] == [
        f"{path}: the content is XYZ; read as XYZ"
    ]
    np.testing.assert_allclose(atoms.get_positions(), _ase_positions(WATER_XYZ, tmp_path))
