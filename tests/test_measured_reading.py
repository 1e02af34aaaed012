"""Reading measured spectra from delimited text: layouts, axis kinds, pairs, and bad input.

All spectra here are invented data.  Expected shifts are computed by hand from the
definition of the Raman shift, ν̃₀ − ν̃ with ν̃ = 10⁷/λ(nm) (common practice).
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pytest

from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.measured import (
    MeasuredSpectrum,
    find_bands,
    read_pair,
    read_spectra,
    read_spectrum,
)

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "measured"


def text(s: str, name: str = "sample.txt") -> io.StringIO:
    f = io.StringIO(s)
    f.name = name
    return f


def five(fmt: str, x0: float = 100.0) -> str:
    return "".join(fmt.format(x=x0 + i, y=10.0 + i, z=5.0 + 0.5 * i) for i in range(5))


def one_line_error(exc: pytest.ExceptionInfo, where: str) -> str:
    message = str(exc.value)
    assert "\n" not in message
    assert where in message
    return message


# -- layouts ------------------------------------------------------------------------------


def test_comma_with_header_two_channels():
    pair = read_pair(text("Raman shift (cm-1),VV,VH\n" + five("{x},{y},{z}\n")))
    np.testing.assert_array_equal(pair.vv.shift_cm1, [100, 101, 102, 103, 104])
    np.testing.assert_array_equal(pair.vv.intensity, [10, 11, 12, 13, 14])
    np.testing.assert_array_equal(pair.vh.intensity, [5, 5.5, 6, 6.5, 7])
    assert pair.vv.label == "VV" and pair.vh.label == "VH"


def test_columns_found_by_name_in_any_order():
    body = "shift,crossed,parallel\n" + five("{x},{z},{y}\n")
    pair = read_pair(text(body))
    assert pair.vv.intensity[0] == 10.0 and pair.vh.intensity[0] == 5.0


def test_tab_without_header_and_comments():
    pair = read_pair(text("# exported\n% another comment\n" + five("{x}\t{y}\t{z}\n")))
    assert pair.vh is not None and pair.vh.intensity[-1] == 7.0
    assert any("no axis units" in n for n in pair.vv.notes)


def test_whitespace_header_with_spaces_in_names():
    s = read_spectrum(text("Raman shift (cm-1)    Intensity counts\n" + five("{x}   {y}\n")))
    assert s.label == "Intensity counts"
    assert not any("no axis units" in n for n in s.notes)


def test_semicolon_decimal_comma_file_with_bom_and_comments():
    pair = read_pair(FIXTURES / "decimal_comma.csv")
    np.testing.assert_allclose(pair.vv.shift_cm1, [100.5, 101.5, 102.5, 103.5, 104.5])
    np.testing.assert_allclose(pair.vv.intensity, [1000.25, 1001.5, 1002, 1003.75, 1004])
    np.testing.assert_allclose(pair.vh.intensity, [500.5, 501, 502, 503.5, 504])


def test_whitespace_decimal_comma():
    s = read_spectrum(text("".join(f"{100 + i},5  {i},25\n" for i in range(5))))
    np.testing.assert_allclose(s.shift_cm1, [100.5, 101.5, 102.5, 103.5, 104.5])
    np.testing.assert_allclose(s.intensity, [0.25, 1.25, 2.25, 3.25, 4.25])


def test_descending_and_uneven_axis():
    xs = [1800.0, 1799.0, 1797.5, 1795.0, 1790.0]
    s = read_spectrum(text("".join(f"{x} {i}\n" for i, x in enumerate(xs))))
    np.testing.assert_array_equal(s.shift_cm1, xs[::-1])
    np.testing.assert_array_equal(s.intensity, [4, 3, 2, 1, 0])
    assert "descending axis reversed" in s.notes


def test_scientific_notation():
    s = read_spectrum(text(five("{x:.3e} {y:.4E}\n")))
    np.testing.assert_allclose(s.intensity, [10, 11, 12, 13, 14])


# -- axis kinds ---------------------------------------------------------------------------


def test_wavelength_axis_from_header_with_laser():
    s = read_spectrum(FIXTURES / "wavelength_nm.txt", laser_nm=532.0)
    # 10^7/532 - 10^7/560 = 18796.9925 - 17857.1429 = 939.8496 cm-1 (by hand).
    assert s.shift_cm1[4] == pytest.approx(939.8496, abs=1e-3)
    # 10^7/532 - 10^7/540 = 278.4740 cm-1.
    assert s.shift_cm1[0] == pytest.approx(278.4740, abs=1e-3)
    assert any("wavelength" in n for n in s.notes) and s.laser_nm == 532.0


def test_micrometre_axis():
    body = "wavelength (um),I\n" + "".join(f"{0.540 + 0.005 * i:.3f},{i}\n" for i in range(5))
    s = read_spectrum(text(body), laser_nm=532.0)
    assert s.shift_cm1[0] == pytest.approx(278.4740, abs=1e-3)


def test_absolute_wavenumber_axis():
    # 785 nm → 10^7/785 = 12738.8535 cm-1; 11738.8535 cm-1 is a shift of 1000.0000 cm-1.
    body = "".join(f"{11738.8535 - 10 * i} {i}\n" for i in range(5))
    s = read_spectrum(text(body), axis="wavenumber", laser_nm=785.0)
    assert s.shift_cm1[0] == pytest.approx(1000.0, abs=1e-3)
    assert s.shift_cm1[-1] == pytest.approx(1040.0, abs=1e-3)


def test_pair_from_two_files_on_different_grids():
    vv = text("".join(f"{100 + i} {2 * i}\n" for i in range(11)), "vv.txt")
    vh = text(
        "".join(f"{99.5 + 0.7 * i} {3 + 0.5 * (99.5 + 0.7 * i)}\n" for i in range(20)), "vh.txt"
    )
    pair = read_pair(vv, vh)
    # VH is linear in x, so linear interpolation onto the VV axis is exact.
    np.testing.assert_allclose(pair.vh.intensity, 3 + 0.5 * pair.vv.shift_cm1, rtol=1e-12)
    assert pair.vv.shift_cm1[0] == 100 and pair.vv.shift_cm1[-1] == 110
    assert any("interpolated onto the VV axis" in n for n in pair.vh.notes)


def test_single_column_file_is_vv_only():
    pair = read_pair(text(five("{x} {y}\n")))
    assert pair.vh is None and pair.vv.label == "VV"


def test_read_spectra_returns_every_column():
    spectra = read_spectra(
        text("x,a,b,c\n" + "".join(f"{i},{i},{2 * i},{3 * i}\n" for i in range(5)))
    )
    assert [s.label for s in spectra] == ["a", "b", "c"]
    assert (
        read_spectrum(
            text("x,a,b,c\n" + "".join(f"{i},1,2,{i}\n" for i in range(5))), column="c"
        ).intensity[4]
        == 4
    )


def test_in_memory_arrays_are_read_only_copies():
    x = np.linspace(0, 10, 11)
    s = MeasuredSpectrum(x, np.ones(11))
    x[0] = -5
    assert s.shift_cm1[0] == 0
    with pytest.raises(ValueError):
        s.intensity[0] = 2.0


# -- bad input: one clear line each ------------------------------------------------------

BAD_FILES = [
    ("1 2\n", "only 1 data point"),
    ("1 2\n2 3\n2 4\n5 5\n6 6\n", "x value 2 appears twice (line 2 and line 3)"),
    ("1 2\n2 nan\n3 4\n5 5\n6 6\n", "line 2: column 2 is 'nan'"),
    ("1 2\n2 inf\n3 4\n5 5\n6 6\n", "line 2: column 2 is 'inf'"),
    ("1 2\n2 3\n4 4\n3 5\n6 6\n", "line 4: x value 3 after 4 breaks the ascending order"),
    ("1 2\n2 3\n3 4\nEND\n5 5\n", "line 4: 'END' is not a row of numbers"),
    ("1,5,2\n2,5,3\n3,5\n4,5,1\n5,5,1\n", "line 3: cannot split the numbers"),
    ("1,5 2.5\n2,5 3.5\n3,5 4\n4,5 1\n5,5 1\n", "both '.' (line 1) and ','"),
    ("1\n2\n3\n4\n5\n", "one column of numbers"),
    ("1;;2\n2;3;4\n3;4;5\n4;5;6\n5;6;7\n", "line 1: an empty field"),
    ("   \n\n", "file is empty"),
]


@pytest.mark.parametrize(("body", "message"), BAD_FILES)
def test_bad_files_give_one_line_errors(body, message):
    with pytest.raises(InputFormatError) as exc:
        read_spectra(text(body, "bad.txt"))
    assert message in one_line_error(exc, "bad.txt")


def test_decimal_comma_with_decimal_point_option():
    with pytest.raises(InputFormatError) as exc:
        read_spectra(FIXTURES / "decimal_comma.csv", decimal=".")
    assert "decimal comma but decimal='.'" in one_line_error(exc, "decimal_comma.csv")


def test_missing_file():
    with pytest.raises(InputFormatError, match="no such file"):
        read_spectra(FIXTURES / "absent.txt")


LASER_ERRORS = [
    (None, "give the laser line in nm"),
    (550.0, "laser line 550 nm is inside the wavelength range 540–565 nm"),
    (600.0, "laser line 600 nm is above the wavelength range"),
    (400.0, "shifts reach 7301 cm-1"),  # 10^7/400 - 10^7/565 = 25000 - 17699.1 = 7300.9
    (5.0, "outside 150–2500 nm"),
]


@pytest.mark.parametrize(("laser_nm", "message"), LASER_ERRORS)
def test_wrong_or_missing_laser_line_for_wavelength_axis(laser_nm, message):
    with pytest.raises(VibrapolError) as exc:
        read_spectrum(FIXTURES / "wavelength_nm.txt", laser_nm=laser_nm)
    assert message in one_line_error(exc, "wavelength_nm.txt")


def test_laser_below_absolute_wavenumber_range():
    body = "".join(f"{19000 + i} {i}\n" for i in range(5))
    with pytest.raises(VibrapolError) as exc:
        read_spectrum(text(body), axis="wavenumber", laser_nm=532.0)
    assert "lies inside or below the absolute-wavenumber range" in one_line_error(exc, "sample.txt")


def test_absolute_wavenumbers_taken_for_shift():
    body = "".join(f"{17000 + i} {i}\n" for i in range(5))
    with pytest.raises(VibrapolError) as exc:
        read_spectrum(text(body))
    assert "axis='wavenumber'" in one_line_error(exc, "sample.txt")


def test_reversed_ranges():
    s = read_spectrum(text(five("{x} {y}\n")))
    with pytest.raises(VibrapolError, match=r"\(104, 100\) is reversed"):
        s.crop(104, 100)
    with pytest.raises(VibrapolError, match="is reversed"):
        find_bands(s, range_cm1=(2000.0, 200.0))


def test_several_columns_need_a_choice():
    body = "x,a,b,c\n" + "".join(f"{i},1,2,3\n" for i in range(5))
    with pytest.raises(VibrapolError) as exc:
        read_spectrum(text(body))
    assert "holds 3 spectra (a, b, c); choose one with column=" in one_line_error(exc, "sample.txt")
    with pytest.raises(VibrapolError, match="say which are VV and VH"):
        read_pair(text(body))
    with pytest.raises(VibrapolError, match="no column or block named 'd'"):
        read_spectrum(text(body), column="d")


def test_header_starting_with_a_digit_is_a_header():
    s = read_spectrum(text("532 nm laser, 10 s\n" + five("{x} {y}\n")))
    np.testing.assert_array_equal(s.intensity, [10, 11, 12, 13, 14])
