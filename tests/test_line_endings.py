"""Files written on other systems read exactly like the originals.

Windows line endings (CRLF), old Mac ones (CR), a UTF-8 byte-order mark, UTF-16 text with its
byte-order mark (little- or big-endian) and a Latin-1 byte in a comment are not bad input:
every reader must give the same result as for the file itself.
The reference of each check is the same file with Unix line endings and plain UTF-8 (the
fixtures of tests/fixtures, all of our own, and the real outputs of ../shared/qc-outputs).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from _paths import FIXTURES, PROJECT_ROOT, qc_output
from bad_input_cases import good_pair_texts
from compare_helpers import CHCL3_MODES
from vibrapol.cli import main
from vibrapol.measured import read_spectra

VARIANTS = {
    "crlf": lambda b: b.replace(b"\n", b"\r\n"),
    "cr": lambda b: b.replace(b"\n", b"\r"),
    "utf8-bom": lambda b: b"\xef\xbb\xbf" + b,
    # "Unicode" text as some Windows programs save it: UTF-16 with a byte-order mark
    "utf16": lambda b: b"\xff\xfe" + b.decode("utf-8").encode("utf-16-le"),
    "utf16-be": lambda b: b"\xfe\xff" + b.decode("utf-8").encode("utf-16-be"),
    # a Latin-1 "é" at the end of the first line (a title or comment in every fixture)
    "latin1": lambda b: b.replace(b"\n", b" \xe9\n", 1),
}

QC_FIXTURES = [
    "orca5_co2.out",
    "orca6_nh3_planar.out",
    "orca6_n2h2_usesym.out",
    "turbomole_h2co_raman.out",
    "qchem54_co2.out",
    "firefly_water_raman.out",
    "pcgamess_water_raman.out",
    "gamessuk_water_raman.out",
    "dalton_water_raman.out",
    "gaussian_hood_raman.log",
    "gaussian_hood_raman.fchk",
]
MEASURED_FIXTURES = ["decimal_comma.csv", "wavelength_nm.txt", "link_vv_vh.jdx", "difdup_raman.jdx"]


def _table_csv(path, capsys) -> str:
    # the header lines name the file read: compare everything else
    assert main(["table", str(path), "--format", "csv"]) == 0
    return capsys.readouterr().out.replace(str(path), "SOURCE")


@pytest.mark.parametrize("variant", sorted(VARIANTS))
@pytest.mark.parametrize("name", QC_FIXTURES)
def test_quantum_chemistry_outputs(name, variant, tmp_path, capsys):
    original = FIXTURES / name
    changed = tmp_path / name
    changed.write_bytes(VARIANTS[variant](original.read_bytes()))
    expected = _table_csv(original, capsys)
    assert expected.count("\n") > 2  # a header and the modes
    assert _table_csv(changed, capsys) == expected


@pytest.mark.parametrize("variant", ["crlf", "utf8-bom", "utf16"])
def test_modes_json(variant, tmp_path, capsys):
    original = PROJECT_ROOT / "examples" / "water.modes.json"
    changed = tmp_path / "water.modes.json"
    changed.write_bytes(VARIANTS[variant](original.read_bytes()))
    assert _table_csv(changed, capsys) == _table_csv(original, capsys)


@pytest.mark.parametrize("name", ["Gaussian16-A.03_dvb_raman.out", "ORCA5.0.0_dvb_raman.out"])
def test_real_outputs_with_windows_line_endings(name, tmp_path, capsys):
    original = qc_output(name)
    changed = tmp_path / name
    changed.write_bytes(VARIANTS["crlf"](original.read_bytes()))
    expected = _table_csv(original, capsys)
    rows = [line for line in expected.splitlines() if not line.startswith("#")]
    assert len(rows) == 55  # column names and the 54 modes of divinylbenzene (README)
    assert _table_csv(changed, capsys) == expected


@pytest.mark.parametrize("variant", sorted(VARIANTS))
@pytest.mark.parametrize("name", MEASURED_FIXTURES)
def test_measured_files(name, variant, tmp_path):
    original = FIXTURES / "measured" / name
    changed = tmp_path / name
    changed.write_bytes(VARIANTS[variant](original.read_bytes()))
    want = read_spectra(original, laser_nm=532.0)
    got = read_spectra(changed, laser_nm=532.0)
    assert [s.label for s in got] == [s.label for s in want]
    for a, b in zip(got, want, strict=True):
        np.testing.assert_array_equal(a.shift_cm1, b.shift_cm1)
        np.testing.assert_array_equal(a.intensity, b.intensity)


def test_match_with_windows_line_endings(tmp_path, capsys):
    # The whole match on the invented CHCl3 pair: the same assignment table from CRLF files.
    results = {}
    for variant in ("lf", "crlf"):
        d = tmp_path / variant
        d.mkdir()
        files = []
        for label, text in zip(("vv", "vh"), good_pair_texts(), strict=True):
            data = text.encode()
            path = d / f"{label}.csv"
            path.write_bytes(data if variant == "lf" else VARIANTS["crlf"](data))
            files.append(str(path))
        out = d / "assignment.csv"
        argv = ["match", str(CHCL3_MODES), "--vv", files[0], "--vh", files[1], "-o", str(out)]
        assert main(argv) == 0
        capsys.readouterr()
        # the '#' header names the measured files, which sit in different folders
        results[variant] = out.read_text().replace(str(d), "DIR")
    assert results["crlf"] == results["lf"]
    rows = [line for line in results["lf"].splitlines() if not line.startswith("#")]
    assert len(rows) == 8  # header, six fundamentals and the overtone


@pytest.mark.parametrize("variant", ["crlf", "cr", "utf8-bom", "utf16", "utf16-be"])
def test_structure_files(variant, tmp_path, capsys):
    xyz = b"3\nwater\nO 0.0 0.0 0.1173\nH 0.0 0.7572 -0.4692\nH 0.0 -0.7572 -0.4692\n"
    reports = []
    for name, data in (("plain.xyz", xyz), ("changed.xyz", VARIANTS[variant](xyz))):
        (tmp_path / name).write_bytes(data)
        assert main(["symmetry", str(tmp_path / name), "--format", "json"]) == 0
        doc = json.loads(capsys.readouterr().out)
        doc.pop("source", None)
        reports.append(doc)
    assert reports[1] == reports[0]
    assert reports[0]["point_group"] == "C2v"  # water (common practice)


def test_binary_structure_formats_are_still_read(tmp_path):
    # The text checks (NUL bytes, encodings) must not shut out binary formats ase reads: an ASE
    # trajectory of ase's own water molecule gives back its atoms and positions exactly.
    import ase.io
    from ase.build import molecule

    from vibrapol.structure import read_structure

    water = molecule("H2O")
    path = tmp_path / "water.traj"
    ase.io.write(path, water)
    atoms = read_structure(path)
    assert list(atoms.get_atomic_numbers()) == [8, 1, 1]
    np.testing.assert_allclose(atoms.get_positions(), water.get_positions(), atol=1e-12)
