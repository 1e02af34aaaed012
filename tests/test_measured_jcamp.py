"""JCAMP-DX reader: the compression forms of the standard, checks, compound files, errors.

Reference for the forms: R. S. McDonald and P. A. Wilks, Appl. Spectrosc. 42, 151 (1988).  Its
example (quoted from memory) writes the ordinates 1 2 3 3 2 1 0 −1 −2 −3 as
AFFN ``1 2 3 3 2 1 0 -1 -2 -3``, PAC ``1+2+3+3+2+1+0-1-2-3``, SQZ ``ABCCBA@abc``,
DIF ``AJJ%jjjjjj`` and DIFDUP ``AJT%jX``.  The other data blocks are invented and hand-encoded
(each test says how).
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pytest

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.measured import read_jcamp, read_pair, read_spectrum
from vibrapol.measured.jcamp import decode_asdf

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "measured"
STANDARD_ORDINATES = [1, 2, 3, 3, 2, 1, 0, -1, -2, -3]


def block(data: str, *, first_x=100, last_x=109, n=10, extra="", yfactor=1, xfactor=1) -> str:
    return (
        "##TITLE=test block\n##JCAMP-DX=4.24\n##DATA TYPE=RAMAN SPECTRUM\n##XUNITS=1/CM\n"
        f"##YUNITS=ARBITRARY UNITS\n##XFACTOR={xfactor}\n##YFACTOR={yfactor}\n##FIRSTX={first_x}\n"
        f"##LASTX={last_x}\n##NPOINTS={n}\n{extra}##XYDATA=(X++(Y..Y))\n{data}##END=\n"
    )


@pytest.mark.parametrize(
    ("form", "line"),
    [
        ("AFFN", "100 1 2 3 3 2 1 0 -1 -2 -3"),
        ("PAC", "100+1+2+3+3+2+1+0-1-2-3"),
        ("SQZ", "100ABCCBA@abc"),
        ("DIF", "100AJJ%jjjjjj"),
        ("DIFDUP", "100AJT%jX"),
    ],
)
def test_compression_forms_of_the_standard(form, line):
    (b,) = read_jcamp(block(line + "\n"), "t.jdx")
    np.testing.assert_array_equal(b.y, STANDARD_ORDINATES)
    np.testing.assert_array_equal(b.x, np.arange(100, 110))


def test_dup_after_a_squeezed_value():
    # SQZ with DUP: ABCTBA@abc = A B C C B A @ a b c (T repeats C, 2 in all).
    values, ends_in_dif = decode_asdf("100ABCTBA@abc")
    assert values[1:] == STANDARD_ORDINATES and not ends_in_dif


def test_multi_digit_values_and_exponents():
    # A0 = 10, J5 = +15 → 25; Q05 = +805 → 830; j0 = -10 → 820.
    assert decode_asdf("7A0J5Q05j0")[0] == [7, 10, 25, 830, 820]
    assert decode_asdf("7 1.5E+03 2e-2", exponents=True)[0] == [7, 1500.0, 0.02]


def test_difdup_fixture_with_y_check_and_factors():
    s = read_spectrum(FIXTURES / "difdup_raman.jdx")
    # Ordinates 100 105 110 110 110 108 100 90 95 1000 (hand-encoded, see the file) × 0.01.
    np.testing.assert_allclose(s.intensity, [1.0, 1.05, 1.1, 1.1, 1.1, 1.08, 1.0, 0.9, 0.95, 10.0])
    np.testing.assert_array_equal(s.shift_cm1, np.arange(10, 20))
    assert s.label == "invented band, DIFDUP form"


def test_first_line_without_dif_then_dif_lines():
    # Hand-encoded: line 1 "ABCC" = 1 2 3 3 (x 100-103, SQZ only: no Y check follows);
    # line 2 "Cjjj" = 3 2 1 0 (x 104-107, ends in DIF); line 3 "@J": @ = 0 is the Y check of
    # x 107, J → 1 (x 108, ends in DIF); line 4 "AJ": A = 1 checks x 108, J → 2 (x 109).
    body = "100ABCC\n104Cjjj\n107@J\n108AJ\n"
    (b,) = read_jcamp(block(body), "t.jdx")
    np.testing.assert_array_equal(b.y, [1, 2, 3, 3, 3, 2, 1, 0, 1, 2])


def test_xypoints_uneven_pairs_with_factors():
    text = (
        "##TITLE=peaks\n##JCAMP-DX=5.01\n##DATA TYPE=RAMAN SPECTRUM\n##XUNITS=NANOMETERS\n"
        "##YUNITS=COUNTS\n##XFACTOR=0.01\n##YFACTOR=2\n##NPOINTS=5\n##XYPOINTS=(XY..XY)\n"
        "54000,1; 54500,2; 55000,4\n56000,3 56500,1\n##END=\n"
    )
    (b,) = read_jcamp(text, "p.jdx")
    np.testing.assert_allclose(b.x, [540, 545, 550, 560, 565])
    np.testing.assert_allclose(b.y, [2, 4, 8, 6, 2])
    f = io.StringIO(text)
    f.name = "p.jdx"
    with pytest.raises(VibrapolError, match="give the laser line"):
        read_spectrum(f)
    f.seek(0)
    s = read_spectrum(f, laser_nm=532.0)
    # 10^7/532 - 10^7/540 = 278.4740 cm-1 (by hand).
    assert s.shift_cm1[0] == pytest.approx(278.4740, abs=1e-3)


def test_link_file_gives_a_pair():
    pair = read_pair(FIXTURES / "link_vv_vh.jdx")
    np.testing.assert_array_equal(pair.vv.shift_cm1, np.arange(100, 110))
    np.testing.assert_array_equal(pair.vv.intensity, STANDARD_ORDINATES)
    # VH block: same ordinates on x = 109 … 100, YFACTOR 0.5, reversed onto the ascending axis.
    np.testing.assert_allclose(pair.vh.intensity, 0.5 * np.array(STANDARD_ORDINATES[::-1]))
    assert "descending axis reversed" in pair.vh.notes


DAMAGED = [
    # Line 1 = 1 2 3 3 2 1 (x 100-105) ends in DIF, so line 2 (file line 13) must start at
    # x 105 with the check value 1.
    (block("100AJJ%jj\n105Bjjj\n"), "line 13: Y check failed (line starts with 2, the previous"),
    (block("100AJJ%jj\n109Ajjj\n"), "line 13: X check failed (line starts at 109, expected 105)"),
    (block("100AJJ%jjjjj\n"), "##NPOINTS=10 but 9 ordinates were read"),
    (block("100AJJ?jjjjj\n"), "missing value '?'"),
    (block("100AJJ%jjjjj#\n"), "unexpected character '#'"),
    (block("100JJJ%jjjjjj\n"), "must start with X and an absolute ordinate"),
    (
        block("100AJJ%jjjjjj\n").replace("##FIRSTX=100", "##FIRSTX=abc"),
        "##FIRSTX='abc' is not a number",
    ),
    (block("100AJJ%jjjjjj\n").replace("##LASTX=109\n", ""), "##LASTX= is missing"),
    (block("100AJJ%jjjjjj\n").replace("##END=\n", ""), "##END= missing"),
    ("##TITLE=x\n##JCAMP-DX=5.01\n##PEAK TABLE=(XY..XY)\n1,2\n##END=\n", "only a ##PEAK TABLE"),
    ("##TITLE=x\n##JCAMP-DX=5.01\n##NTUPLES=NMR\n##END=\n", "##NTUPLES (multi-page) data"),
]


@pytest.mark.parametrize(("content", "message"), DAMAGED)
def test_damaged_files_give_one_line_errors(content, message):
    with pytest.raises(InputFormatError) as exc:
        read_jcamp(content, "damaged.jdx")
    assert "\n" not in str(exc.value) and "damaged.jdx" in str(exc.value)
    assert message in str(exc.value)
