"""The corpus of bad inputs run by tests/test_bad_inputs.py, as tables (one row per case).

Files come from ``tests/bad_inputs`` (see the README there) or are made here from the fixtures
of ``tests/fixtures``: truncated inside a block, re-encoded, binary.  Each row gives the text the
one-line error must contain; the file name (or the option) it must name is the row's file, or
given explicitly.  Measured spectra are invented data.
"""

from __future__ import annotations

import functools
import json
import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from _paths import FIXTURES, PROJECT_ROOT
from compare_helpers import CHCL3_MODES, chcl3_pair

BAD = Path(__file__).resolve().parent / "bad_inputs"
#: Engine output of our own with polarizability derivatives (examples/make_water_modes.py).
WATER = PROJECT_ROOT / "examples" / "water.modes.json"
WATER_XYZ = "3\nwater\nO 0.0 0.0 0.1173\nH 0.0 0.7572 -0.4692\nH 0.0 -0.7572 -0.4692\n"
ORCA = "orca5_co2.out"
QCHEM = "qchem54_co2.out"
USESYM = "orca6_n2h2_usesym.out"
TURBOMOLE = "turbomole_h2co_raman.out"

Content = bytes | str | Callable[[], bytes | str] | None


@dataclass(frozen=True)
class Case:
    """One bad input: how to build the command, what the error must say and name."""

    id: str
    argv: Callable[[Path], list[str]]
    expect: str
    names: str


# --- building blocks ----------------------------------------------------------------------
def put(tmp: Path, name: str, content: Content) -> str:
    """Path of the input ``name``: from tests/bad_inputs when ``content`` is None, else written."""
    if content is None:
        return str(BAD / name)
    data = content() if callable(content) else content
    path = tmp / "in" / name
    path.write_bytes(data.encode() if isinstance(data, str) else data)
    return str(path)


def out(tmp: Path, name: str = "result.csv") -> str:
    return str(tmp / "out" / name)


def existing(tmp: Path, name: str = "result.csv") -> str:
    path = Path(out(tmp, name))
    path.write_text("keep me\n")
    return str(path)


def cut(fixture: str, marker: str, after: int, part: float = 0.0) -> Callable[[], bytes]:
    """The fixture up to ``after`` lines past the first line holding ``marker``, plus ``part``
    of the next line: a file that ends inside a block."""

    def make() -> bytes:
        lines = (FIXTURES / fixture).read_bytes().splitlines(keepends=True)
        i = next(k for k, line in enumerate(lines) if marker.encode() in line) + after
        rest = lines[i + 1] if i + 1 < len(lines) else b""
        return b"".join(lines[: i + 1]) + rest[: int(len(rest) * part)]

    return make


def head(path: Path, fraction: float) -> Callable[[], bytes]:
    return lambda: path.read_bytes()[: int(path.stat().st_size * fraction)]


def encoded(path: Path, encoding: str) -> Callable[[], bytes]:
    return lambda: path.read_text(encoding="utf-8").encode(encoding)


def overlapping_water_json() -> str:
    doc = json.loads(WATER.read_text())
    doc["atoms"]["coordinates_ang"][1] = doc["atoms"]["coordinates_ang"][0]
    return json.dumps(doc)


@functools.cache
def good_pair_texts() -> tuple[str, str]:
    """The invented CHCl3 VV/VH pair of compare_helpers as two CSV texts."""
    pair = chcl3_pair()
    texts = []
    for s, label in ((pair.vv, "VV"), (pair.vh, "VH")):
        rows = [f"{x:.2f},{y:.6g}" for x, y in zip(s.shift_cm1, s.intensity, strict=True)]
        texts.append("\n".join(["# invented data", f"Raman shift (cm-1),{label}", *rows]) + "\n")
    return texts[0], texts[1]


def good_pair(tmp: Path) -> list[str]:
    vv, vh = good_pair_texts()
    return ["--vv", put(tmp, "good_vv.csv", vv), "--vh", put(tmp, "good_vh.csv", vh)]


BINARY = bytes(range(256)) * 8
FAR_VH = "x,VH\n" + "".join(f"{4000 + i},{i % 3}\n" for i in range(9))
DEEP_JSON = '{"format": "vibrapol.modes", "x": ' + "[" * 100_000 + "]" * 100_000 + "}"


def _mkfifo(tmp: Path, name: str, where: str = "out") -> str:
    os.mkfifo(tmp / where / name)
    return str(tmp / where / name)


def sparse(tmp: Path, name: str, size: int) -> str:
    """An input of ``size`` bytes that takes no disk space (a sparse file): oversized input."""
    path = tmp / "in" / name
    with open(path, "wb") as fh:
        fh.truncate(size)
    return str(path)


def linked(tmp: Path, target: str, name: str, hard: bool = False) -> str:
    """A link ``out/name`` to ``target`` (symbolic, or hard)."""
    path = tmp / "out" / name
    (os.link if hard else os.symlink)(target, path)
    return str(path)


def water_json_copy(tmp: Path) -> str:
    return put(tmp, "water.modes.json", WATER.read_text())


def provenance_extra_key() -> str:
    doc = json.loads(WATER.read_text())
    doc["provenance"]["colour"] = "blue"
    return json.dumps(doc)


def anti_stokes_vv() -> str:
    """The invented VV spectrum mirrored to negative shifts (an anti-Stokes-only export)."""
    lines = good_pair_texts()[0].splitlines()
    rows = [f"{-float(x):.2f},{y}" for x, y in (r.split(",") for r in lines[2:])]
    return "\n".join([lines[0], lines[1], *rows]) + "\n"


# --- files through `vibrapol table` (name, content, expected text) --------------------------
TABLE_FILES = [
    ("table-empty", "empty.out", b"", "file is empty"),
    ("table-blank", "blank.out", "\n  \n\t\n", "file is empty"),
    ("table-binary", "binary.out", BINARY, "NUL bytes"),
    ("table-unknown-program", "unknown_program.out", None, "not a recognised quantum-chemistry"),
    ("table-utf16-cut", "utf16.out", lambda: encoded(FIXTURES / ORCA, "utf-16")()[:-1],
     "starts with a UTF-16 byte-order mark but is not UTF-16 text"),
    ("table-utf16-no-bom", "u16le.out", encoded(FIXTURES / ORCA, "utf-16-le"), "without a byte"),
    ("cut-orca-frequencies", "o1.out", cut(ORCA, "VIBRATIONAL FREQUENCIES", 1),
     "ORCA VIBRATIONAL FREQUENCIES block ends early"),
    ("cut-orca-at-frequencies-title", "o4.out", cut(ORCA, "VIBRATIONAL FREQUENCIES", 0),
     "ends at the title of the VIBRATIONAL FREQUENCIES block"),
    ("cut-orca-at-raman-title", "o5.out", cut(ORCA, "RAMAN SPECTRUM", 0),
     "ends at the title of the RAMAN SPECTRUM block"),
    ("cut-orca-normal-modes", "o2.out", cut(ORCA, "NORMAL MODES", 8, 0.5),
     "ORCA NORMAL MODES block ends early"),
    ("cut-orca-raman-row", "o3.out", cut(ORCA, "RAMAN SPECTRUM", 6, 0.3),
     "ORCA RAMAN SPECTRUM row at line 125 has 1 of 3 numbers"),
    ("cut-orca-usesym-label-row", "o6.out", cut(USESYM, "1-Bu       1-Au", 0, 0.5),
     "ORCA NORMAL MODES block ends early at line 109"),
    ("cut-orca-usesym-frequencies", "o7.out", cut(USESYM, "Irrep", 3, 0.5),
     "3 frequencies printed for 4 atoms, expected 3N = 12"),
    ("cut-turbomole-atom-rows", "t1.out", cut(TURBOMOLE, "mode               7", 20, 0.5),
     "TURBOMOLE normal-mode block ends early at line 88"),
    ("cut-turbomole-raman-row", "t2.out", cut(TURBOMOLE, "(ort,ort)", 0, 0.5),
     "TURBOMOLE normal-mode block ends early at line 50"),
    ("cut-turbomole-after-heading", "t3.out", cut(TURBOMOLE, "differential RAMAN", 1),
     "TURBOMOLE normal modes: 0 of 3N = 12 modes printed in full"),
    ("cut-qchem-first-block", "q1.out", cut(QCHEM, "VIBRATIONAL ANALYSIS", 6, 0.5),
     "line 53: expected the 'X Y Z' header"),
    ("cut-qchem-mode-header", "q2.out", cut(QCHEM, "Mode:                 4", 3),
     "line 68: expected the 'X Y Z' header"),
    ("cut-qchem-after-last-mode", "q3.out", cut(QCHEM, "Mode:                 4", 13),
     "ends inside the vibrational analysis"),
    ("cut-gaussian-log", "g.log", cut("gaussian_hood_raman.log", "Harmonic frequencies", 12, 0.5),
     "normal-mode table cut short at line 40"),
    ("cut-gaussian98-high-precision", "g98.log",
     cut("gaussian98_hood_raman.log", "Coord Atom Element", 5, 0.5),
     "frequency section cut short at line 56"),
    ("cut-gaussian98-usual-block", "g98u.log", cut("gaussian98_hood_raman.log", " Atom AN", 2, 0.5),
     "frequency section cut short at line 98"),
    ("cut-gaussian98-before-archive", "g98a.log",
     cut("gaussian98_hood_overflow.log", " 1\\1\\", -1), "the job did not finish"),
    ("cut-gaussian03-windows", "g03w.log",
     cut("gaussian03w_hood_raman.log", " Raman Activ", 0, 0.6),
     "frequency section cut short at line 45"),
    ("cut-gaussian-export", "export.out",
     cut("gaussian_export_hood.out", "Harmonic frequencies", 20, 0.3),
     "frequency section cut short at line 34"),
    ("cut-gaussian-projected", "proj.log",
     cut("gaussian_hood_projected.log", "Depolar (U)", 3, 0.5),
     "frequency section cut short at line 48"),
    ("gaussian-optimisation-fchk", "opt.fchk",
     lambda: (FIXTURES / "gaussian_hood_opt.fchk").read_bytes(),
     "the Hessian of this FOpt job is not from a frequency calculation"),
    ("cut-gaussian-fchk", "g.fchk",
     cut("gaussian_hood_raman.fchk", "Polarizability Derivatives", 3, 0.5),
     "'Polarizability Derivatives' has 18 values, expected 72"),
    ("cut-firefly", "ff.out", cut("firefly_water_raman.out", "NORMAL COORDINATE ANALYSIS", 20, .5),
     "normal-mode table is empty or cut short"),
    ("cut-pcgamess-ratio-row", "pcg.out", cut("pcgamess_water_raman.out", "RAMAN INTENSITY", 0, .5),
     "line 48: DEPOLARIZATION row cut short"),
    ("cut-gamess-us-mass-row", "gus.out", cut("gamessus_water_raman.out", "SYMMETRY:", 0, .5),
     "REDUCED MASS row cut short"),
    ("pcgamess-raman-unit-unknown", "pcg_unit.out",
     lambda: (FIXTURES / "pcgamess_water_raman.out").read_text().replace("ANGSTROM**4/AMU", "A.U."),
     "unrecognised layout of the normal coordinate analysis at line 42"),
    ("cut-gamess-uk", "guk.out",
     cut("gamessuk_water_raman.out", "cartesian polarizability derivatives", 8, 0.5),
     "'cartesians to normal mode coordinates transformation matrix' not found"),
    ("cut-dalton", "dalton.out", cut("dalton_water_raman.out", "Normal Coordinates", 9, 0.5),
     "the file ends in the middle of a block"),
    ("json-cut-10pc", "a.modes.json", head(WATER, 0.1), "invalid JSON"),
    ("json-cut-50pc", "b.modes.json", head(WATER, 0.5), "invalid JSON"),
    ("json-cut-last-brace", "c.modes.json", head(WATER, 0.999), "invalid JSON"),
    ("json-deeply-nested", "deep.modes.json", DEEP_JSON, "nested too deeply"),
    ("json-schema-version", "schema_version.modes.json", None, "schema version 99 is not supp"),
    ("json-nan-frequency", "nan_frequency.modes.json", None, "freqs_cm1 contains NaN"),
    ("json-huge-frequency", "huge_frequency.modes.json", None, "freqs_cm1 holds 1e+300"),
    ("json-atomic-number-200", "bad_atomic_number.modes.json", None,
     "atomic numbers must be between 1 and 118"),
    ("json-wrong-shape", "wrong_shape.modes.json", None,
     "coordinates_ang should be an array of shape (2, 3)"),
    ("json-provenance-extra-key", "extra.modes.json", provenance_extra_key,
     "provenance has an unknown key 'colour'"),
]  # fmt: skip

# --- measured files through `vibrapol match --vv FILE` (name, content, options, expected) ----
MEASURED_FILES = [
    ("measured-one-point", "one_point.csv", None, [], "only 1 data point(s)"),
    ("measured-duplicate-x", "duplicate_x.csv", None, [],
     "x value 202 appears twice (line 5 and line 6)"),
    ("measured-not-monotonic", "not_monotonic.csv", None, [], "breaks the ascending order"),
    ("measured-nan-intensity", "nan_intensity.csv", None, [],
     "line 5: column 2 is 'nan', not a finite number"),
    ("measured-huge-intensity", "huge_intensity.csv", None, [],
     "line 5: intensity 1e+300 is beyond"),
    ("measured-flat", "flat.csv", None, [],
     "every intensity (VV) is 7; the file holds no spectrum"),
    ("measured-tiny-intensity", "tiny_intensity.csv", None, [],
     "the largest intensity (VV) is 1.8e-60, below 1e-50"),
    ("measured-text-in-data", "text_in_data.csv", None, [],
     "line 6: 'saturated detector, scan aborted' is not a row of numbers"),
    ("measured-ragged", "ragged.csv", None, [], "line 5: cannot split the numbers"),
    ("measured-one-column", "one_column.csv", None, [], "only one column of numbers"),
    ("measured-empty", "empty.csv", "", [], "file is empty"),
    ("measured-binary", "spectrum.spc", BINARY, [], "NUL bytes"),
    ("measured-utf16-no-bom", "u16.csv", encoded(BAD / "flat.csv", "utf-16-le"), [],
     "without a byte-order mark"),
    ("measured-cut-mid-row", "cut.csv", lambda: good_pair_texts()[0].rsplit(",", 1)[0] + ",",
     [], "an empty field"),
    ("wavelength-laser-inside", "wavelength_nm.csv", None, ["--laser-nm", "560"],
     "laser line 560 nm is inside the wavelength range"),
    ("wavelength-laser-above", "wavelength_nm.csv", None, ["--laser-nm", "700"],
     "laser line 700 nm is above the wavelength range"),
    ("wavelength-no-laser", "wavelength_nm.csv", None, [], "give the laser line in nm"),
    ("wavelength-laser-too-short", "wavelength_nm.csv", None, ["--laser-nm", "400"],
     "the shifts reach"),
    ("jcamp-no-end", "no_end.jdx", None, [], "##END= missing"),
    ("jcamp-npoints", "npoints_mismatch.jdx", None, [], "##NPOINTS=9 but 7 ordinates were read"),
    ("jcamp-x-check", "xcheck.jdx", None, [], "X check failed"),
    ("jcamp-peak-table-only", "peak_table.jdx", None, [], "only a ##PEAK TABLE"),
    ("jcamp-cut-in-data", "cut.jdx", cut("measured/difdup_raman.jdx", "##XYDATA", 1, 0.5), [],
     "##END= missing"),
]  # fmt: skip

# --- structures through both `vibrapol symmetry` and `vibrapol compute` ---------------------
STRUCTURES = [
    ("one-atom", "one_atom.xyz", None, "a single atom has no vibrations"),
    ("overlapping-atoms", "overlapping_atoms.xyz", None, "atoms 1 and 2 are only 0.000 Å apart"),
    ("nan-coordinate", "nan_coordinate.xyz", None, "coordinates contain NaN"),
    ("huge-coordinate", "huge_coordinate.xyz", None, "a coordinate of 1e+300 Å is beyond"),
    ("truncated-xyz", "truncated.xyz", None, "no atomic coordinates found"),
    ("unknown-element", "unknown_element.xyz", None, "no atomic coordinates found"),
    ("empty-xyz", "empty.xyz", "", "file is empty"),
    ("binary-xyz", "mol.xyz", BINARY, "NUL bytes"),
    ("two-frames", "two.xyz", WATER_XYZ * 2, "holds 2 structures (frames); give one"),
]  # fmt: skip


def _table(tmp: Path, *extra: str) -> list[str]:
    return ["table", str(WATER), "--format", "csv", "-o", out(tmp), *extra]


def _spectrum(tmp: Path, *extra: str) -> list[str]:
    return ["spectrum", str(WATER), "-o", out(tmp), *extra]


def _sweep(tmp: Path, orientation: str, *extra: str) -> list[str]:
    return ["sweep", str(WATER), "--orientation", orientation, "-o", out(tmp), *extra]


def _match(tmp: Path, *extra: str) -> list[str]:
    return ["match", str(CHCL3_MODES), *good_pair(tmp), "-o", out(tmp), *extra]


def _compute(tmp: Path, *extra: str) -> list[str]:
    w = put(tmp, "w.xyz", WATER_XYZ)
    return ["compute", w, "--basis", "sto-3g", "-o", out(tmp, "w.modes.json"), *extra]


def _mix(tmp: Path, degeneracy: str) -> list[str]:
    return ["rank", "--mixture", f"{CHCL3_MODES},{WATER}", "--degeneracy", degeneracy,
            *good_pair(tmp)]  # fmt: skip


# --- bad options and outputs (argv builder, expected text, what it must name) --------------
OPTIONS = [
    ("table-missing", lambda t: ["table", str(t / "in" / "nowhere.out")], "no such file",
     "nowhere.out"),
    ("table-directory", lambda t: ["table", str(t / "in")], "is a directory", "in"),
    ("table-wrong-kind", lambda t: ["table", str(FIXTURES / QCHEM), "--kind", "orca"],
     "no VIBRATIONAL FREQUENCIES block", QCHEM),
    ("table-degeneracy-tol", lambda t: _table(t, "--degeneracy-tol-cm1", "-1"),
     "degeneracy tolerance must be ≥ 0", "degeneracy tolerance"),
    # a table of a file without Raman data is its species table; a spectrum is refused
    ("spectrum-no-raman", lambda t: ["spectrum", str(BAD / "no_raman.modes.json"), "-o", out(t)],
     "has no Raman data", "no_raman.modes.json"),
    ("table-symmetrize-invariants",
     lambda t: ["table", str(FIXTURES / ORCA), "--symmetrize", "-o", out(t)],
     "cannot be un-mixed", "orca5_co2.out"),
    ("table-symmetrize-no-symmetry", lambda t: _table(t, "--no-symmetry", "--symmetrize"),
     "cannot go with --no-symmetry", "--symmetrize"),
    ("symmetry-symmetrize-structure",
     lambda t: ["symmetry", put(t, "w.xyz", WATER_XYZ), "--symmetrize", "-o", out(t, "r.txt")],
     "--symmetrize needs normal modes", "w.xyz"),
    ("spectrum-fwhm-negative", lambda t: _spectrum(t, "--fwhm-cm1", "-1"),
     "fwhm_cm1 must be a positive number", "fwhm_cm1"),
    ("spectrum-fwhm-nan", lambda t: _spectrum(t, "--fwhm-cm1", "nan"),
     "fwhm_cm1 must be a positive number", "fwhm_cm1"),
    ("spectrum-fwhm-huge", lambda t: _spectrum(t, "--fwhm-cm1", "1e308"),
     "fwhm_cm1 must be a positive number of cm⁻¹ up to 10000", "fwhm_cm1"),
    ("spectrum-fwhm-word", lambda t: _spectrum(t, "--fwhm-cm1", "wide"),
     "argument --fwhm-cm1: invalid float value: 'wide'", "--fwhm-cm1"),
    ("spectrum-range-reversed", lambda t: _spectrum(t, "--range-cm1", "3000:100"),
     "range must run from low to high", "3000:100"),
    ("spectrum-range-infinite", lambda t: _spectrum(t, "--range-cm1", "0:inf"),
     "range must have finite bounds", "0:inf"),
    ("spectrum-range-dash-value", lambda t: _spectrum(t, "--range-cm1", "-3600:3600"),
     "must be joined with '='", "--range-cm1"),
    ("spectrum-step-zero", lambda t: _spectrum(t, "--step-cm1", "0"),
     "grid step must be a positive number", "grid step"),
    ("spectrum-temperature-negative", lambda t: _spectrum(t, "--temperature-k", "-5"),
     "temperature must be between 0 and 100000 K", "temperature"),
    ("spectrum-temperature-huge", lambda t: _spectrum(t, "--temperature-k", "1e308"),
     "temperature must be between 0 and 100000 K", "temperature"),
    ("spectrum-laser-negative", lambda t: _spectrum(t, "--laser-nm", "-532"),
     "laser wavelength must be a positive number of nm", "laser"),
    ("spectrum-scale-zero", lambda t: _spectrum(t, "--scale", "0"),
     "scale factor must lie between 0.5 and 1.5", "scale factor"),
    ("spectrum-scale-other-basis", lambda t: _spectrum(t, "--scale-for", "HF/STO-3G"),
     "the HF/STO-3G scale factor does not belong to this output", "RHF/6-31g*"),
    ("spectrum-scale-mp2-ambiguous", lambda t: _spectrum(t, "--scale-for", "MP2/6-31G*"),
     "ambiguous: frozen-core and all-electron factors differ", "MP2(FC)/6-31G(d)"),
    ("spectrum-mixture-of-molecules",
     lambda t: ["spectrum", str(WATER), str(FIXTURES / "orca6_nh3_planar.out"), "-o", out(t)],
     "are different molecules, not conformers", "--overlay"),
    ("spectrum-unknown-channel", lambda t: _spectrum(t, "--channels", "zz"),
     "unknown channel 'zz'", "zz"),
    ("spectrum-unknown-kind", lambda t: _spectrum(t, "--kind", "spreadsheet"),
     "argument --kind: invalid choice: 'spreadsheet'", "--kind"),
    ("spectrum-figure-suffix", lambda t: _spectrum(t, "--figure", out(t, "figure.txt")),
     "figure files must end in .png, .svg or .pdf", "figure.txt"),
    ("spectrum-figure-width", lambda t: _spectrum(t, "--figure", out(t, "f.svg"), "--width", "1e6"),
     "figure width must be between 1 and 40 inches", "figure width"),
    ("spectrum-labels-negative", lambda t: _spectrum(t, "--figure", out(t, "f.svg"), "--top=-1"),
     "--top must be 0 or more", "--top"),
    ("spectrum-energies-one-source", lambda t: _spectrum(t, "--energies-kjmol", "0"),
     "--energies-kjmol needs two or more sources", "--energies-kjmol"),
    ("spectrum-zero-point-one-source", lambda t: _spectrum(t, "--zero-point"),
     "--zero-point needs two or more sources", "--zero-point"),
    ("spectrum-degeneracy-tol-nan", lambda t: _spectrum(t, "--degeneracy-tol-cm1", "nan"),
     "degeneracy tolerance must be ≥ 0", "degeneracy tolerance"),
    ("output-directory-missing", lambda t: _spectrum(t)[:2] + ["-o", out(t, "no/s.csv")],
     "does not exist", "s.csv"),
    ("output-parent-is-a-file", lambda t: _spectrum(t)[:2] + ["-o", existing(t, "p") + "/s.csv"],
     "is a file, not a directory", "s.csv"),
    ("output-is-a-directory", lambda t: _spectrum(t)[:2] + ["-o", str(t / "out"), "--force"],
     "is a directory, expected a file name", "out"),
    ("output-exists", lambda t: _spectrum(t)[:2] + ["-o", existing(t)],
     "already exists; pass --force", "result.csv"),
    ("output-sticks-exist", lambda t: _spectrum(t, "--sticks", existing(t, "sticks.csv")),
     "already exists; pass --force", "sticks.csv"),
    ("output-figure-exists", lambda t: _spectrum(t, "--figure", existing(t, "f.svg")),
     "already exists; pass --force", "f.svg"),
    ("output-fifo-with-force",
     lambda t: _spectrum(t)[:2] + ["-o", _mkfifo(t, "pipe.csv"), "--force"],
     "is not a regular file", "pipe.csv"),
    ("output-compute-exists", lambda t: _compute(t)[:4] + ["-o", existing(t, "w.modes.json")],
     "already exists; pass --force", "w.modes.json"),
    ("output-match-exists", lambda t: _match(t)[:-2] + ["-o", existing(t)],
     "already exists; pass --force", "result.csv"),
    ("sweep-angles-reversed", lambda t: _sweep(t, "isotropic", "--angles-deg", "360:0:5"),
     "--angles-deg must be START:STOP:STEP with STEP > 0", "--angles-deg"),
    ("sweep-angles-too-many", lambda t: _sweep(t, "isotropic", "--angles-deg", "0:1e9:1e-6"),
     "more than 36001", "--angles-deg"),
    ("sweep-angles-infinite", lambda t: _sweep(t, "isotropic", "--angles-deg", "0:inf:1"),
     "--angles-deg must be finite numbers", "--angles-deg"),
    ("sweep-euler-nan", lambda t: _sweep(t, "fixed", "--euler-deg", "nan,0,0"),
     "--euler-deg must be finite numbers", "--euler-deg"),
    ("sweep-tilt-nan", lambda t: _sweep(t, "uniaxial", "--tilt-deg", "nan"),
     "tilt must be between 0 and 180 degrees", "tilt"),
    ("sweep-no-derivatives",
     lambda t: ["sweep", str(FIXTURES / ORCA), "--orientation", "isotropic", "-o", out(t)],
     "need polarizability derivatives", ORCA),
    ("match-missing-vv", lambda t: ["match", str(CHCL3_MODES), "--vv", str(t / "in" / "vv.csv")],
     "no such file", "vv.csv"),
    ("match-range-reversed", lambda t: _match(t, "--range-cm1", "3000:100"),
     "range must run from low to high", "3000:100"),
    ("match-min-snr-negative", lambda t: _match(t, "--min-snr", "-1"),
     "min_snr (--min-snr) must be a positive number", "--min-snr"),
    ("match-position-tolerance", lambda t: _match(t, "--position-tolerance", "1"),
     "--position-tolerance must be between 0 and 0.5", "--position-tolerance"),
    ("match-scale-word", lambda t: _match(t, "--scale", "big"),
     "--scale: must be a number, got 'big'", "--scale"),
    ("match-vh-elsewhere",
     lambda t: ["match", str(CHCL3_MODES), "--vv", good_pair(t)[1], "--vh",
                put(t, "far.csv", FAR_VH)],
     "hardly overlap", "far.csv"),
    ("rank-no-candidates", lambda t: ["rank", *good_pair(t)],
     "give at least one SOURCE or --mixture", "SOURCE"),
    ("rank-degeneracy-nan", lambda t: _mix(t, f"{CHCL3_MODES}=nan"),
     "--degeneracy must be SOURCE=G with G > 0", "--degeneracy"),
    ("rank-degeneracy-unknown-file", lambda t: _mix(t, "other.json=2"),
     "--degeneracy names other.json, which is in no --mixture", "other.json"),
    ("rank-missing-candidate",
     lambda t: ["rank", str(CHCL3_MODES), str(t / "in" / "gone.modes.json"), *good_pair(t)],
     "no such file", "gone.modes.json"),
    ("symmetry-overlapping-modes-json",
     lambda t: ["symmetry", put(t, "overlap.modes.json", overlapping_water_json())],
     "atoms 1 and 2 are only 0.000 Å apart", "overlap.modes.json"),
    ("symmetry-tolerance-negative",
     lambda t: ["symmetry", put(t, "w.xyz", WATER_XYZ), "--symmetry-tolerance-ang", "-1"],
     "symmetry tolerance must be > 0", "symmetry tolerance"),
    ("compute-missing", lambda t: _compute(t)[:1] + [str(t / "in" / "gone.xyz")] + _compute(t)[2:],
     "no such structure file", "gone.xyz"),
    ("compute-unknown-method", lambda t: _compute(t, "--method", "b3lpy"),
     "unknown method 'b3lpy'", "b3lpy"),
    ("compute-unknown-basis", lambda t: _compute(t, "--basis", "6-31q"),
     "unknown basis '6-31q'", "6-31q"),
    ("compute-basis-lacks-element",
     lambda t: ["compute", put(t, "u2.xyz", "2\nU2\nU 0 0 0\nU 0 0 2.5\n"), "--basis", "6-31g*",
                "-o", out(t, "u.modes.json")],
     "unknown basis '6-31g*' (or not defined for these elements)", "6-31g*"),
    ("compute-spin-parity", lambda t: _compute(t, "--multiplicity", "2"),
     "10 electrons (charge 0) cannot have multiplicity 2", "--multiplicity"),
    ("compute-odd-electrons", lambda t: _compute(t, "--charge", "1"),
     "9 electrons (charge 1) cannot be closed-shell", "--charge"),
    ("compute-step-negative", lambda t: _compute(t, "--step-ang", "-0.01"),
     "displacement step must be in (0, 0.1] Å", "displacement step"),
    ("compute-no-workers", lambda t: _compute(t, "--workers", "0"),
     "workers must be 1 or more", "workers"),
    ("compute-unknown-optimizer", lambda t: _compute(t, "--optimizer", "lbfgs"),
     "argument --optimizer: invalid choice: 'lbfgs'", "--optimizer"),
    ("compute-unknown-solvent", lambda t: _compute(t, "--solvent", "unobtainium"),
     "unknown solvent 'unobtainium'", "--epsilon"),
    ("compute-epsilon-alone", lambda t: _compute(t, "--epsilon", "30"),
     "--epsilon and --epsilon-optical go together", "--epsilon-optical"),
    ("compute-solvent-field-route", lambda t: _compute(t, "--solvent", "water", "--route", "field"),
     "the field route cannot run with a solvent", "--route"),
    ("compute-unknown-dispersion", lambda t: _compute(t, "--method", "b3lyp-d5"),
     "unknown dispersion correction '-d5'", "-d3bj"),
    ("compute-dispersion-no-parameters", lambda t: _compute(t, "--method", "lda-d3bj"),
     "no D3BJ parameters for 'lda'", "lda"),
    # engine options that do not go together (issue 17): refused before any SCF
    ("compute-dynamic-solvent",
     lambda t: _compute(t, "--laser-nm", "532", "--dynamic", "--solvent", "water"),
     "cannot be combined with a solvent", "--solvent"),
    ("compute-laser-solvent", lambda t: _compute(t, "--laser-nm", "532", "--solvent", "water"),
     "cannot be combined with a solvent", "--solvent"),
    ("compute-dynamic-field-route",
     lambda t: _compute(t, "--laser-nm", "532", "--dynamic", "--route", "field"),
     "the field route gives the static polarizability only", "--route"),
    ("compute-dynamic-no-laser", lambda t: _compute(t, "--dynamic"),
     "--dynamic needs --laser-nm", "--laser-nm"),
    ("compute-laser-open-shell",
     lambda t: _compute(t, "--charge", "1", "--multiplicity", "2", "--laser-nm", "532"),
     "is for closed-shell molecules (multiplicity 1) only", "--laser-nm"),
    ("compute-laser-out-of-range", lambda t: _compute(t, "--laser-nm", "5000"),
     "laser wavelength 5000 nm is outside", "laser"),
    ("compute-auxbasis-without-fit", lambda t: _compute(t, "--auxbasis", "def2-universal-jkfit"),
     "needs density fitting (--density-fit)", "--auxbasis"),
    ("compute-auxbasis-unknown",
     lambda t: _compute(t, "--density-fit", "--auxbasis", "no-such-jkfit"),
     "unknown basis 'no-such-jkfit'", "--auxbasis"),
    ("compute-solvent-and-epsilon",
     lambda t: _compute(t, "--solvent", "water", "--epsilon", "30", "--epsilon-optical", "1.8"),
     "not both", "--solvent"),
    ("compute-epsilon-below-vacuum",
     lambda t: _compute(t, "--epsilon", "0.5", "--epsilon-optical", "1.8"),
     "--epsilon must be above 1", "--epsilon"),
    ("compute-optimizer-without-optimisation",
     lambda t: _compute(t, "--no-optimize", "--optimizer", "cartesian-bfgs"),
     "--optimizer has no effect with --no-optimize", "--optimizer"),
    ("compute-step-on-field-route", lambda t: _compute(t, "--route", "field", "--step-ang", "0.01"),
     "--step-ang has no effect on the field route", "--step-ang"),
    ("compute-field-on-cartesian-route",
     lambda t: _compute(t, "--route", "cartesian", "--field-au", "0.002"),
     "--field-au has no effect on the cartesian route", "--field-au"),
    ("compute-epsilon-optical-below-vacuum",
     lambda t: _compute(t, "--epsilon", "30", "--epsilon-optical", "0.9"),
     "--epsilon-optical must lie between 1 and 100", "--epsilon-optical"),
    # inputs that are not regular files, or too large: refused before they are opened
    ("table-dev-zero", lambda t: ["table", "/dev/zero", "-o", out(t)],
     "is a device, not a regular file", "/dev/zero"),
    ("symmetry-dev-urandom", lambda t: ["symmetry", "/dev/urandom"],
     "is a device, not a regular file", "/dev/urandom"),
    ("compute-dev-zero", lambda t: ["compute", "/dev/zero", "-o", out(t, "z.modes.json")],
     "is a device, not a regular file", "/dev/zero"),
    ("match-vv-dev-zero", lambda t: ["match", str(CHCL3_MODES), "--vv", "/dev/zero"],
     "is a device, not a regular file", "/dev/zero"),
    ("table-fifo", lambda t: ["table", _mkfifo(t, "pipe.out", "in")],
     "is a named pipe, not a regular file", "pipe.out"),
    ("symmetry-fifo", lambda t: ["symmetry", _mkfifo(t, "pipe.xyz", "in")],
     "is a named pipe, not a regular file", "pipe.xyz"),
    ("compute-fifo", lambda t: ["compute", _mkfifo(t, "pipe.xyz", "in"), "-o", out(t, "p.json")],
     "is a named pipe, not a regular file", "pipe.xyz"),
    ("rank-vv-fifo", lambda t: ["rank", str(CHCL3_MODES), "--vv", _mkfifo(t, "vv.csv", "in")],
     "is a named pipe, not a regular file", "vv.csv"),
    ("table-oversize", lambda t: ["table", sparse(t, "huge.out", 2 * 1024**3 + 1)],
     "more than the 2 GB a file may have", "huge.out"),
    ("compute-oversize", lambda t: ["compute", sparse(t, "huge.xyz", 200 * 1024**2 + 1),
                                    "-o", out(t, "h.json")],
     "more than the 200 MB a structure file may have", "huge.xyz"),
    ("match-vv-oversize",
     lambda t: ["match", str(CHCL3_MODES), "--vv", sparse(t, "huge.csv", 200 * 1024**2 + 1)],
     "more than the 200 MB a measured spectrum may have", "huge.csv"),
    # outputs: all checked before any is written
    ("output-sticks-same-as-output", lambda t: _spectrum(t, "--sticks", out(t)),
     "given twice as an output", "result.csv"),
    ("output-figure-same-as-rho-figure",
     lambda t: _spectrum(t, "--figure", out(t, "f.svg"), "--rho-figure", out(t, "f.svg")),
     "given twice as an output", "f.svg"),
    ("output-figure-link-to-rho-figure",
     lambda t: _spectrum(t, "--figure", out(t, "f.svg"),
                         "--rho-figure", linked(t, out(t, "f.svg"), "g.svg"), "--force"),
     "are the same file", "g.svg"),
    ("output-is-input-force",
     lambda t: ["table", (w := water_json_copy(t)), "-o", w, "--force"],
     "is the input", "water.modes.json"),
    ("output-hard-link-to-input",
     lambda t: ["table", (w := water_json_copy(t)), "-o", linked(t, w, "h.csv", hard=True),
                "--force"],
     "is the input", "h.csv"),
    ("output-symlink-to-input",
     lambda t: ["table", (w := water_json_copy(t)), "-o", linked(t, w, "s.csv"), "--force"],
     "is the input", "s.csv"),
    ("output-dangling-symlink",
     lambda t: ["table", str(WATER), "-o", linked(t, out(t, "nowhere.csv"), "d.csv")],
     "which does not exist; pass --force", "d.csv"),
    ("output-trailing-slash", lambda t: ["table", str(WATER), "-o", out(t, "name") + "/"],
     "ends in '/', a directory name", "name/"),
    ("output-name-too-long", lambda t: ["table", str(WATER), "-o", out(t, "a" * 300 + ".csv")],
     "file name too long", "aaaa"),
    ("compute-output-is-input",
     lambda t: ["compute", (w := put(t, "w.xyz", WATER_XYZ)), "-o", w, "--force"],
     "is the input", "w.xyz"),
    ("compute-output-and-output-dir", lambda t: _compute(t, "--output-dir", str(t / "out")),
     "not both", "--output-dir"),
    ("match-table-same-as-output", lambda t: _match(t, "--table", out(t)),
     "given twice as an output", "result.csv"),
    # quiet wrong answers
    ("sweep-band-far-away", lambda t: _sweep(t, "isotropic", "--bands", "99999"),
     "--bands 99999: no computed band within 50 cm⁻¹", "--bands"),
    ("match-vh-same-file",
     lambda t: ["match", str(CHCL3_MODES), "--vv", (v := good_pair(t)[1]), "--vh", v],
     "is the same file as --vv", "good_vv.csv"),
    ("match-vh-same-content",
     lambda t: ["match", str(CHCL3_MODES), "--vv", good_pair(t)[1], "--vh",
                put(t, "copy.csv", good_pair_texts()[0])],
     "has the same content as --vv", "copy.csv"),
    ("match-anti-stokes-only",
     lambda t: ["match", str(CHCL3_MODES), "--vv", put(t, "as.csv", anti_stokes_vv())],
     "every Raman shift is ≤ 0", "as.csv"),
    ("table-xyz-structure", lambda t: ["table", put(t, "w.xyz", WATER_XYZ)],
     "is a structure (XYZ) without normal modes", "w.xyz"),
    ("compute-charge-beyond-basis", lambda t: _compute(t, "--charge=-1000"),
     "charge -1000 gives 1010 electrons, more than the 7 orbitals", "--charge"),
    ("compute-charge-no-electrons", lambda t: _compute(t, "--charge", "1000"),
     "charge 1000 leaves -990 electrons", "--charge"),
    ("compute-method-empty", lambda t: _compute(t, "--method", ""), "--method is empty",
     "--method"),
    ("compute-method-blank", lambda t: _compute(t, "--method", "  "), "--method is empty",
     "--method"),
    ("compute-basis-empty", lambda t: _compute(t, "--basis", ""), "--basis is empty", "--basis"),
    ("compute-scheduler-malformed", lambda t: _compute(t, "--scheduler", "bogus"),
     "is not a scheduler address", "--scheduler"),
    ("compute-scheduler-not-listening", lambda t: _compute(t, "--scheduler", "tcp://127.0.0.1:1"),
     "cannot connect to the Dask scheduler", "tcp://127.0.0.1:1"),
    ("compute-too-large-without-yes",
     lambda t: ["compute", put(t, "cluster.xyz", water_cluster(167)), "--basis", "sto-3g",
                "-o", out(t, "c.modes.json")],
     "estimated cost", "--yes"),
    # isotopologues (vibrapol.isotopes) and animations (vibrapol.animation)
    ("table-isotopes-no-element", lambda t: _table(t, "--isotopes", "C=13"), "no C atom",
     "C=13"),
    ("table-isotopes-bad-mass", lambda t: _table(t, "--isotopes", "H=-2"), "ELEMENT=MASS",
     "H=-2"),
    ("table-isotopes-atom-range", lambda t: _table(t, "--isotopes", "4=2"),
     "atom 4 out of range", "4=2"),
    ("table-isotopes-no-dalpha-dx",
     lambda t: ["table", str(FIXTURES / ORCA), "-o", out(t), "--isotopes", "C=13"],
     "need the Cartesian derivatives", ORCA),
    ("shifts-no-isotopes", lambda t: ["shifts", str(WATER), "-o", out(t)], "needs --isotopes",
     "--isotopes"),
    ("animate-mode-range",
     lambda t: ["animate", str(WATER), "--mode", "9", "-o", out(t, "m.xyz")],
     "mode 9 does not exist", "mode 9"),
    ("animate-suffix", lambda t: ["animate", str(WATER), "--mode", "1", "-o", out(t, "m.pdb")],
     "must end in .xyz or .traj", "m.pdb"),
    ("animate-amplitude",
     lambda t: ["animate", str(WATER), "--mode", "1", "--amplitude-ang", "5",
                "-o", out(t, "m.xyz")],
     "amplitude must be", "amplitude"),
    ("animate-existing",
     lambda t: ["animate", str(WATER), "--mode", "1", "-o", existing(t, "m.xyz")],
     "already exists", "m.xyz"),
    ("match-iso-without-isotopes", lambda t: _match(t, "--iso-vv", good_pair(t)[1]),
     "go together", "--isotopes"),
]  # fmt: skip


def water_cluster(n: int) -> str:
    """``n`` water molecules 3.1 Å apart on a cubic grid (3n atoms; an invented structure)."""
    side = int(np.ceil(n ** (1 / 3)))
    lines = [str(3 * n), f"{n} water molecules on a grid (invented test structure)"]
    for k in range(n):
        origin = 3.1 * np.array([k % side, (k // side) % side, k // side**2])
        for symbol, xyz in (("O", (0, 0, 0.1173)), ("H", (0, 0.7572, -0.4692)),
                            ("H", (0, -0.7572, -0.4692))):  # fmt: skip
            x, y, z = origin + xyz
            lines.append(f"{symbol} {x:.4f} {y:.4f} {z:.4f}")
    return "\n".join(lines) + "\n"


def _file_case(case_id: str, name: str, content: Content, expect: str,
               command: Callable[[Path, str], list[str]]) -> Case:  # fmt: skip
    return Case(case_id, lambda t: command(t, put(t, name, content)), expect, name)


def all_cases() -> list[Case]:
    """Every case of the corpus, in table order."""
    cases = [
        _file_case(i, n, c, e, lambda t, p: ["table", p, "--format", "csv", "-o", out(t)])
        for i, n, c, e in TABLE_FILES
    ]
    cases += [
        _file_case(i, n, c, e, lambda t, p, o=o: ["match", str(CHCL3_MODES), "--vv", p, *o,
                                                  "-o", out(t)])
        for i, n, c, o, e in MEASURED_FILES
    ]  # fmt: skip
    for command, target in (("symmetry", "report.txt"), ("compute", "w.modes.json")):
        cases += [
            _file_case(f"{command}-{i}", n, c, e,
                       lambda t, p, cmd=command, tg=target: [cmd, p, "-o", out(t, tg)])
            for i, n, c, e in STRUCTURES
        ]  # fmt: skip
    cases += [Case(*row) for row in OPTIONS]
    return cases
