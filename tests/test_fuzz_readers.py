"""Property-based fuzzing of every text reader: damaged files raise vibrapol's errors, nothing else.

Each example takes a real file — a fixture of our own in tests/fixtures (same layouts as the
programs) or, in the slow runs, a real output from ../shared/qc-outputs — damages it with one to
four mutations (truncation at any byte, a byte replaced, a line deleted or duplicated, a number
replaced by a huge, tiny, NaN, infinite or malformed one), writes it to a file and reads it the
way the command line does.  The property: the reader returns a result or raises a
:class:`vibrapol.errors.VibrapolError`; any other exception is a bug (a traceback for the user).
A ModeSet that is accepted must also give a Raman table or a VibrapolError.

The default runs are derandomized (the same examples every time, about 2,700 in all); the
``slow`` runs draw fresh examples (about 10,000) and add the real outputs.
"""

from __future__ import annotations

import json
import re
import warnings
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from _paths import FIXTURES, PROJECT_ROOT, qc_output
from bad_input_cases import good_pair_texts
from vibrapol.errors import VibrapolError
from vibrapol.measured import read_pair, read_spectra
from vibrapol.ramantable import raman_table
from vibrapol.sources import read_modes

OPS = ("truncate", "replace-byte", "delete-line", "duplicate-line", "number")
#: Replacements for a number: overflow, underflow, NaN and infinity in the spellings programs
#: and people write, Fortran's field overflow, and malformed numbers.
NUMBERS = (b"1e308", b"-1e308", b"1e400", b"1D+300", b"NaN", b"nan", b"-inf", b"Infinity", b"0",
           b"-0.0", b"1e-320", b"*****", b"9" * 40, b"", b"1.2.3", b"--", b"0x1F")  # fmt: skip
_NUMBER = re.compile(rb"[-+]?\d+\.?\d*(?:[eEdD][-+]?\d+)?")

MUTATIONS = st.lists(
    st.tuples(st.sampled_from(OPS), st.integers(0, 10**9), st.integers(0, 255)),
    min_size=1,
    max_size=4,
)


def mutate(data: bytes, ops: list[tuple[str, int, int]]) -> bytes:
    """Apply the mutations in order (positions taken modulo the current size)."""
    for op, pos, k in ops:
        if not data:
            break
        if op == "truncate":
            data = data[: pos % len(data)]
        elif op == "replace-byte":
            i = pos % len(data)
            data = data[:i] + bytes([k]) + data[i + 1 :]
        elif op in ("delete-line", "duplicate-line"):
            lines = data.splitlines(keepends=True)
            i = pos % len(lines)
            keep = [lines[i]] * (2 if op == "duplicate-line" else 0)
            data = b"".join([*lines[:i], *keep, *lines[i + 1 :]])
        else:
            found = list(_NUMBER.finditer(data))
            if found:
                m = found[pos % len(found)]
                data = data[: m.start()] + NUMBERS[k % len(NUMBERS)] + data[m.end() :]
    return data


def fuzz_settings(examples: int, *, fresh: bool = False) -> settings:
    return settings(
        max_examples=examples,
        deadline=None,
        derandomize=not fresh,
        database=None,
        suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    )


def _only_vibrapol_errors(action) -> None:  # noqa: ANN001
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # warnings are allowed; only exceptions matter here
        try:
            action()
        except VibrapolError:
            pass


def _read_modes_and_table(path: Path, kind: str | None) -> None:
    modes = read_modes(path, kind=kind)
    raman_table(modes)


# --- quantum-chemistry outputs and *.modes.json ---------------------------------------------
#: (file in tests/fixtures or the project, reader kind; None = sniffed as the CLI does)
QC_TARGETS = [
    ("orca5_co2.out", "orca"),
    ("orca6_nh3_planar.out", "orca"),
    ("orca6_n2h2_usesym.out", "orca"),
    ("turbomole_h2co_raman.out", "turbomole"),
    ("turbomole_h2co_raman.out", None),
    ("qchem54_co2.out", "qchem"),
    ("firefly_water_raman.out", "firefly"),
    ("gamessuk_water_raman.out", "gamess-uk"),
    ("dalton_water_raman.out", "dalton"),
    ("gaussian_hood_raman.log", "gaussian-log"),
    ("gaussian_hood_raman.fchk", "gaussian-fchk"),
    ("orca5_co2.out", "cclib"),
    ("qchem54_co2.out", "cclib"),
    ("compare/chcl3_hf_321g.modes.json", "modes-json"),
    ("gaussian_hood_raman.log", None),
    ("firefly_water_raman.out", None),
    ("pcgamess_water_raman.out", None),
    ("gamessus_water_raman.out", "firefly"),
]
_IDS = [f"{name}-{kind or 'sniffed'}" for name, kind in QC_TARGETS]
#: Real outputs for the slow runs (cclib's regression files, ../shared/qc-outputs).
REAL_TARGETS = [
    ("ORCA5.0.0_dvb_raman.out", "orca"),
    ("QChem5.4.1_dvb_raman.out", "qchem"),
    ("Gaussian16-A.03_dvb_raman.out", "gaussian-log"),
    ("Gaussian16-A.03_dvb_raman.fchk", "gaussian-fchk"),
    ("Firefly8.0.1_dvb_raman.out", "firefly"),
    ("GAMESS-UK8.0_dvb_raman.out", "gamess-uk"),
]


#: Vibrations of each molecule: 3N − 6, or 3N − 5 when linear (common practice).
_N_MODES = {"orca5_co2.out": 4, "orca6_nh3_planar.out": 6, "qchem54_co2.out": 4,
            "firefly_water_raman.out": 3, "gamessuk_water_raman.out": 3,
            "dalton_water_raman.out": 3, "gaussian_hood_raman.log": 6,
            "pcgamess_water_raman.out": 3, "gamessus_water_raman.out": 3,
            "gaussian_hood_raman.fchk": 6, "compare/chcl3_hf_321g.modes.json": 9,
            "orca6_n2h2_usesym.out": 6, "turbomole_h2co_raman.out": 6}  # fmt: skip


@pytest.mark.parametrize(("name", "kind"), QC_TARGETS, ids=_IDS)
def test_targets_read_when_intact(name, kind):
    # The fuzzing starts from files that read: an undamaged target gives all its vibrations.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        modes = read_modes(FIXTURES / name, kind=kind)
    assert modes.n_modes == _N_MODES[name]
    assert raman_table(modes).activity.shape == (_N_MODES[name],)


def _qc_example(source: Path, kind: str | None, ops, tmp_path: Path) -> None:  # noqa: ANN001
    path = tmp_path / source.name
    path.write_bytes(mutate(source.read_bytes(), ops))
    _only_vibrapol_errors(lambda: _read_modes_and_table(path, kind))


@pytest.mark.parametrize(("name", "kind"), QC_TARGETS, ids=_IDS)
@fuzz_settings(100)
@given(ops=MUTATIONS)
def test_quantum_chemistry_readers(name, kind, ops, tmp_path):
    _qc_example(FIXTURES / name, kind, ops, tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize(("name", "kind"), QC_TARGETS, ids=_IDS)
@fuzz_settings(400, fresh=True)
@given(ops=MUTATIONS)
def test_quantum_chemistry_readers_long(name, kind, ops, tmp_path):
    _qc_example(FIXTURES / name, kind, ops, tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize(("name", "kind"), REAL_TARGETS, ids=[n for n, _ in REAL_TARGETS])
@fuzz_settings(40, fresh=True)
@given(ops=MUTATIONS)
def test_real_outputs(name, kind, ops, tmp_path):
    _qc_example(qc_output(name), kind, ops, tmp_path)


def test_engine_modes_json_survives_mutations(tmp_path):
    # Not hypothesis: every line of the example file deleted in turn (a systematic sweep).
    source = PROJECT_ROOT / "examples" / "water.modes.json"
    lines = source.read_bytes().splitlines(keepends=True)
    accepted = 0
    for i in range(len(lines)):
        path = tmp_path / f"cut{i}.modes.json"
        path.write_bytes(b"".join(lines[:i] + lines[i + 1 :]))
        try:
            read_modes(path)
            accepted += 1
        except VibrapolError:
            pass
    # Deleting a line breaks the JSON (a bracket, a comma) or the data it holds, except where
    # the line is a lone list item whose neighbours still make valid JSON of the right shape:
    # some deletions must be refused, and none may raise anything else.
    assert accepted < len(lines)


# --- measured spectra ----------------------------------------------------------------------
def _invented_csv(rows: int) -> bytes:
    vv, _ = good_pair_texts()  # invented CHCl3 VV spectrum (compare_helpers)
    return "".join(vv.splitlines(keepends=True)[: rows + 2]).encode()


MEASURED_TARGETS = {
    "decimal_comma.csv": lambda: (FIXTURES / "measured" / "decimal_comma.csv").read_bytes(),
    "wavelength_nm.txt": lambda: (FIXTURES / "measured" / "wavelength_nm.txt").read_bytes(),
    "invented_vv.csv": lambda: _invented_csv(60),
    "link_vv_vh.jdx": lambda: (FIXTURES / "measured" / "link_vv_vh.jdx").read_bytes(),
    "difdup_raman.jdx": lambda: (FIXTURES / "measured" / "difdup_raman.jdx").read_bytes(),
}


def _measured_example(name: str, ops, tmp_path: Path) -> None:  # noqa: ANN001
    path = tmp_path / name
    path.write_bytes(mutate(MEASURED_TARGETS[name](), ops))
    _only_vibrapol_errors(lambda: read_spectra(path, laser_nm=532.0))
    _only_vibrapol_errors(lambda: read_pair(path, laser_nm=532.0))


@pytest.mark.parametrize("name", sorted(MEASURED_TARGETS))
@fuzz_settings(150)
@given(ops=MUTATIONS)
def test_measured_readers(name, ops, tmp_path):
    _measured_example(name, ops, tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(MEASURED_TARGETS))
@fuzz_settings(600, fresh=True)
@given(ops=MUTATIONS)
def test_measured_readers_long(name, ops, tmp_path):
    _measured_example(name, ops, tmp_path)


#: Characters of delimited data and of JCAMP-DX compressed (ASDF) data, for text made from
#: scratch rather than by damaging a file.
DELIMITED_CHARS = "0123456789.,;\t -+eE#%naif\n"
ASDF_CHARS = "0123456789.+- \t,@ABCDEFGHIabcdefghi%JKLMNOPQRjklmnopqrSTUVWXYZs?$e"
_JCAMP_HEAD = (
    "##TITLE=fuzz\n##JCAMP-DX=5.01\n##DATA TYPE=RAMAN SPECTRUM\n##XUNITS=1/CM\n"
    "##YUNITS=ARBITRARY UNITS\n##FIRSTX={first}\n##LASTX={last}\n##NPOINTS={n}\n"
    "##XYDATA=(X++(Y..Y))\n"
)


def _from_scratch_example(kind: str, text: str, numbers: tuple[int, int, int], tmp_path) -> None:  # noqa: ANN001
    if kind == "jcamp":
        first, last, n = numbers
        text = _JCAMP_HEAD.format(first=first, last=last, n=n) + text + "\n##END=\n"
    path = tmp_path / f"scratch.{kind}"
    path.write_text(text, encoding="utf-8")
    _only_vibrapol_errors(lambda: read_spectra(path))


SCRATCH = st.tuples(
    st.sampled_from(["delimited", "jcamp"]),
    st.integers(-5, 5000),
    st.integers(-5, 5000),
    st.integers(-2, 60),
    st.data(),
)


def _scratch_text(data, kind: str) -> str:  # noqa: ANN001
    chars = DELIMITED_CHARS if kind == "delimited" else ASDF_CHARS + "\n"
    return data.draw(st.text(alphabet=chars, max_size=400), label="text")


@fuzz_settings(500)
@given(case=SCRATCH)
def test_measured_text_from_scratch(case, tmp_path):
    kind, first, last, n, data = case
    _from_scratch_example(kind, _scratch_text(data, kind), (first, last, n), tmp_path)


@pytest.mark.slow
@fuzz_settings(2000, fresh=True)
@given(case=SCRATCH)
def test_measured_text_from_scratch_long(case, tmp_path):
    kind, first, last, n, data = case
    _from_scratch_example(kind, _scratch_text(data, kind), (first, last, n), tmp_path)


# --- the instrument correction file (measured/depolarization.py) ---------------------------
def _correction_json() -> bytes:
    from vibrapol.measured import PolarizationCorrection

    corr = PolarizationCorrection(  # invented numbers
        factor=1.08,
        factor_err=0.01,
        n_reference_bands=2,
        reference=((218.0, 0.75), (314.0, 0.75)),
        reduced_chi2=1.1,
        laser_nm=532.0,
        note="invented",
    )
    return json.dumps(corr.to_dict(), indent=2).encode()


@fuzz_settings(150)
@given(ops=MUTATIONS)
def test_correction_reader(ops, tmp_path):
    from vibrapol.measured import read_correction

    path = tmp_path / "instrument.json"
    path.write_bytes(mutate(_correction_json(), ops))
    _only_vibrapol_errors(lambda: read_correction(path))


@pytest.mark.parametrize("name", sorted(MEASURED_TARGETS))
def test_measured_targets_read_when_intact(name, tmp_path):
    path = tmp_path / name
    path.write_bytes(MEASURED_TARGETS[name]())
    spectra = read_spectra(path, laser_nm=532.0)
    # every fixture holds at least five points per spectrum (the reader's minimum)
    assert all(len(s) >= 5 for s in spectra) and 1 <= len(spectra) <= 2
