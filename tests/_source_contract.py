"""Checks the quantum-chemistry output readers share, and helpers for their tests.

:class:`SourceContract` is inherited by the test class of each reader that computes Raman data
from printed derivatives (test_source_firefly.py, test_source_gamessuk.py,
test_source_dalton.py).  A subclass names its reader, fixture and real output; the base class
checks the contract: sniffing by content, reading the fixture without warnings to the
hand-computed values, orthonormal modes in the frame of the coordinates, one-line errors for
truncated and garbled files, a warning when a printed value is tampered with, the ``vibrapol
table`` command on the fixture; and on the real output (trans-1,4-divinylbenzene, C2h, in
../shared/qc-outputs): 54 vibrations read without warnings, frequencies as cclib reads them,
the rule of mutual exclusion, modes in the frame of the coordinates, the table command.

The fixtures (tests/fixtures/*_water_raman.out, written by
tests/fixtures/generators/make_qc_fixtures.py) hold a
water-like molecule whose three vibrations have ∂α/∂Q (Å² amu⁻¹ᐟ²) of
  T1 = 0 (Raman-inactive),
  T2 = [[1.2, 0.1, 0], [0.1, 0.8, 0], [0, 0, 0.5]],
  T3 = [[0, 0.9, 0], [0.9, 0, 0], [0, 0, 0]] (traceless).
By hand (D. A. Long, The Raman Effect, 2002, ch. 5; S = 45a² + 7γ², ρ = 3γ²/(45a² + 4γ²)):
  T2: a = 2.5/3, 45a² = 31.25, γ² = ½(0.4² + 0.3² + 0.7²) + 3·0.1² = 0.40,
      S = 31.25 + 2.8 = 34.05, ρ_linear = 1.2/32.85 = 0.036530…
  T3: a = 0, γ² = 3·0.9² = 2.43, S = 17.01, ρ_linear = 3/4 (traceless: common practice).
"""

from __future__ import annotations

import csv
import functools
import io
import logging
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from _paths import FIXTURES, QC_OUTPUTS, qc_output
from vibrapol.cli import main
from vibrapol.errors import InputFormatError, PrintedValueMismatch
from vibrapol.modeset import ModeSet
from vibrapol.ramantable import raman_table
from vibrapol.sources import sniff as sniff_path
from vibrapol.vibrations import rigid_body_vectors

#: Hand-computed activities (Å⁴/amu) and ρ_linear of the fixture's vibrations (see above).
FIXTURE_ACTIVITY = np.array([0.0, 34.05, 17.01])
FIXTURE_RHO = np.array([np.nan, 1.2 / 32.85, 0.75])

#: The three fixtures of this family of readers (each sniffer must accept only its own).
OWN_FIXTURES = ("firefly_water_raman.out", "gamessuk_water_raman.out", "dalton_water_raman.out")

#: 1 bohr³ in Å³ (design.md; CODATA Bohr radius cubed), for polarizabilities printed in a.u.
BOHR3_ANG3 = 0.148184711


def read_quietly(read: Callable[[Path], ModeSet], path: Path) -> ModeSet:
    """Read with every vibrapol warning turned into an error."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", PrintedValueMismatch)
        return read(path)


@functools.cache
def read_real(read: Callable[[Path], ModeSet], name: str) -> ModeSet:
    """A real output of ../shared/qc-outputs read once per session (skips when it is absent)."""
    return read_quietly(read, qc_output(name))


@functools.cache
def cclib_data(name: str) -> Any:
    """cclib's reading of a real output (a reference library), once per session."""
    import cclib

    return cclib.io.ccread(str(qc_output(name)), loglevel=logging.CRITICAL)


def csv_records(text: str) -> list[dict[str, str]]:
    """Records of a vibrapol CSV, skipping its ``#`` header lines as
    ``pandas.read_csv(comment="#")`` does."""
    body = "\n".join(line for line in text.splitlines() if not line.startswith("#"))
    return list(csv.DictReader(io.StringIO(body)))


def csv_comments(text: str) -> list[str]:
    """The ``#`` header lines of a vibrapol CSV, without the leading ``# ``."""
    return [line[2:] for line in text.splitlines() if line.startswith("#")]


def table_rows(capsys: pytest.CaptureFixture[str], *args: str) -> list[dict[str, str]]:
    """Rows of ``vibrapol table ARGS --format csv``, which must exit with status 0."""
    assert main(["table", *args, "--format", "csv"]) == 0
    return csv_records(capsys.readouterr().out)


def rigid_overlap(modes: ModeSet) -> float:
    """Largest |L·R| between the modes and the rigid-body motions of the coordinates.

    Vibrations are orthogonal to overall translation and rotation (Wilson, Decius and Cross,
    Molecular Vibrations, 1955, ch. 2): a small value means the modes are in the frame of the
    coordinates.
    """
    rigid = rigid_body_vectors(modes.coordinates_ang, modes.masses_da)
    return float(np.max(np.abs(modes.modes @ rigid.T)))


def rotation_rule_error(modes: ModeSet) -> tuple[float, float]:
    """Largest violation of the rotational sum rule of ∂α/∂x, and the scale of the rule.

    Rotating the molecule rigidly by δθ about axis e moves atom i by e × r_i and turns α into
    α + δθ (Wα − αW), W v = e × v; hence Σ_i (e × r_i)·∂α/∂r_i = Wα − αW (invariance under
    rotation, a fact of the trade).  It only holds with coordinates, derivatives and α in one
    frame.
    """
    t = modes.dalpha_dx.reshape(modes.n_atoms, 3, 3, 3)
    alpha = modes.polarizability_ang3
    com = modes.masses_da @ modes.coordinates_ang / modes.masses_da.sum()
    worst, scale = 0.0, 0.0
    for e in np.eye(3):
        lhs = np.einsum("ic,icab->ab", np.cross(e, modes.coordinates_ang - com), t)
        w = np.array([np.cross(e, v) for v in np.eye(3)]).T
        rhs = w @ alpha - alpha @ w
        worst, scale = max(worst, np.abs(lhs - rhs).max()), max(scale, np.abs(rhs).max())
    return worst, scale


def cut_after(text: str, marker: str, extra_lines: int) -> str:
    """The text up to ``extra_lines`` lines after the last line containing ``marker``."""
    lines = text.splitlines(keepends=True)
    index = max(i for i, line in enumerate(lines) if marker in line)
    return "".join(lines[: index + 1 + extra_lines])


class SourceContract:
    """Base class; subclasses set the attributes below (names of the test classes: Test*)."""

    kind: str  # registry name
    fixture: str  # file name in tests/fixtures
    #: Fixtures of other programs this reader also reads (members of one program family).
    family_fixtures: tuple[str, ...] = ()
    real_file: str  # file name in ../shared/qc-outputs
    sniff: Callable[[str, str], bool]
    read: Callable[[Path], ModeSet]
    #: Tolerance for the fixture's activities: half a unit of the derivatives' last printed
    #: digit, propagated (Firefly prints bohr² with 4 decimals, the others 7–8).
    fixture_atol: float = 1e-6
    #: (marker, lines kept after it): cuts that leave the file unreadable.
    truncations: tuple[tuple[str, int], ...] = ()
    #: (text, replacement) that turns one printed number into Fortran's overflow stars.
    garble: tuple[str, str] = ("", "")
    #: (text, replacement) that changes one printed Raman value (must occur once).
    tamper: tuple[str, str] = ("", "")
    #: The real output: (program_version, method, basis) as its banner and options print them.
    real_provenance: tuple[str, str, str] = ("", "", "")
    #: Lowest and highest vibration (cm⁻¹) as the real output prints them.
    real_freq_ends_cm1: tuple[float, float] = (np.nan, np.nan)
    #: Largest difference (cm⁻¹) from cclib's frequencies of the real output: 0 to rounding
    #: when both read the same printed table.
    real_freq_atol_vs_cclib: float = 1e-9
    #: Largest |L·R| (:func:`rigid_overlap`) accepted for the real output's modes; a frame
    #: turned by 5° gives 0.06.
    real_rigid_overlap_max: float = 1e-4
    #: Largest violation of the rotational sum rule (:func:`rotation_rule_error`) as a fraction
    #: of its scale; None when the reader stores no polarizability to check it with.
    real_rotation_rule_max: float | None = None
    #: (a frequency printed in the real output, texts the table row of that mode must show).
    real_table_row: tuple[str, tuple[str, ...]] = ("", ())
    #: Texts the table of the real output must show (program and version, method/basis).
    real_table_header: tuple[str, ...] = ()

    def fixture_text(self) -> str:
        return (FIXTURES / self.fixture).read_text(encoding="utf-8")

    def write_cut(self, path: Path, marker: str, keep: int) -> Path:
        """The fixture cut ``keep`` lines after the last line with ``marker``, at ``path``."""
        path.write_text(cut_after(self.fixture_text(), marker, keep), encoding="utf-8")
        return path

    def write_replaced(self, path: Path, old: str, new: str) -> Path:
        """The fixture with its one occurrence of ``old`` replaced by ``new``, at ``path``."""
        text = self.fixture_text()
        assert text.count(old) == 1
        path.write_text(text.replace(old, new), encoding="utf-8")
        return path

    def real_modes(self) -> ModeSet:
        return read_real(type(self).read, self.real_file)

    # -- sniffing --------------------------------------------------------------------------
    def test_sniff_accepts_only_its_own_fixture(self):
        for path in sorted(FIXTURES.glob("*.out")):
            text = path.read_text(encoding="utf-8")
            assert type(self).sniff(text[:200_000], text[-200_000:]) == (
                path.name == self.fixture or path.name in self.family_fixtures
            ), path.name

    def test_sniff_real_outputs(self):
        if not QC_OUTPUTS.is_dir():
            pytest.skip("../shared/qc-outputs is absent in this checkout")
        for path in sorted(QC_OUTPUTS.glob("*.out")):
            text = path.read_text(encoding="utf-8", errors="replace")
            assert type(self).sniff(text[:200_000], text[-200_000:]) == (
                path.name == self.real_file
            ), path.name

    def test_registry_picks_this_reader(self):
        assert sniff_path(FIXTURES / self.fixture) == self.kind

    # -- the fixture -----------------------------------------------------------------------
    def test_fixture_values_match_hand_computation(self):
        modes = read_quietly(type(self).read, FIXTURES / self.fixture)
        table = raman_table(modes)
        assert modes.n_atoms == 3 and modes.n_modes == 3
        assert table.activity == pytest.approx(FIXTURE_ACTIVITY, abs=self.fixture_atol)
        assert np.isnan(table.rho_linear[0])  # inactive mode: ρ undefined, not a number
        assert table.rho_linear[1:] == pytest.approx(FIXTURE_RHO[1:], abs=self.fixture_atol)
        # ρ_natural = 2ρ/(1+ρ) follows from the two definitions (Long 2002, ch. 5)
        expected_natural = 2 * FIXTURE_RHO[1:] / (1 + FIXTURE_RHO[1:])
        assert table.rho_natural[1:] == pytest.approx(expected_natural, abs=2 * self.fixture_atol)

    def test_fixture_modes_orthonormal_and_in_the_coordinate_frame(self):
        modes = read_quietly(type(self).read, FIXTURES / self.fixture)
        assert np.abs(modes.modes @ modes.modes.T - np.eye(3)).max() < 1e-6
        assert rigid_overlap(modes) < 1e-5  # fixture modes carry 6-8 decimals
        assert np.all(np.diff(modes.freqs_cm1) > 0)  # stored in ascending order
        p = modes.provenance
        assert p.source_kind == self.kind and p.program and p.program_version and p.masses

    def test_fixture_masses_from_the_file(self):
        modes = read_quietly(type(self).read, FIXTURES / self.fixture)
        # the fixture prints O = 15.994915 and H = 1.007825 (5–10 decimals depending on program)
        assert modes.masses_da == pytest.approx([15.994915, 1.007825, 1.007825], abs=6e-6)

    # -- bad files -------------------------------------------------------------------------
    @staticmethod
    def _assert_one_line_error(read: Callable[[Path], ModeSet], path: Path) -> str:
        with pytest.raises(InputFormatError) as info:
            read(path)
        message = str(info.value)
        assert "\n" not in message and str(path) in message
        return message

    def test_truncated_files_give_one_line_errors(self, tmp_path):
        assert self.truncations
        for n, (marker, keep) in enumerate(self.truncations):
            path = self.write_cut(tmp_path / f"cut{n}.out", marker, keep)
            self._assert_one_line_error(type(self).read, path)

    def test_every_cut_reads_or_fails_cleanly(self, tmp_path, capfd):
        # Cut the fixture after each of its lines: the reader either returns a ModeSet (the
        # cut left everything it needs) or raises InputFormatError with one line, and nothing
        # (e.g. cclib's log) reaches the terminal.
        lines = self.fixture_text().splitlines(keepends=True)
        path = tmp_path / "cut.out"
        failures = 0
        for n in range(1, len(lines)):
            path.write_text("".join(lines[:n]), encoding="utf-8")
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", PrintedValueMismatch)
                    type(self).read(path)
            except InputFormatError as exc:
                assert "\n" not in str(exc)
                failures += 1
        assert failures > len(lines) // 2
        captured = capfd.readouterr()
        assert captured.out == "" and captured.err == ""

    def test_garbled_number_gives_one_line_error(self, tmp_path):
        path = self.write_replaced(tmp_path / "garbled.out", *self.garble)
        self._assert_one_line_error(type(self).read, path)

    def test_tampered_printed_value_warns(self, tmp_path):
        path = self.write_replaced(tmp_path / "tampered.out", *self.tamper)
        with pytest.warns(PrintedValueMismatch, match="disagrees"):
            type(self).read(path)

    # -- the command line ------------------------------------------------------------------
    def test_table_command_on_fixture(self, capsys):
        rows = table_rows(capsys, str(FIXTURES / self.fixture))
        assert [float(r["activity"]) for r in rows] == pytest.approx(
            FIXTURE_ACTIVITY, abs=self.fixture_atol
        )
        assert rows[0]["rho_linear"] == ""  # inactive mode: empty ρ
        assert rows[1]["polarized"] == "true" and rows[2]["polarized"] == "false"

    def test_table_command_on_truncated_file_exits_2(self, tmp_path, capsys):
        path = self.write_cut(tmp_path / "cut.out", *self.truncations[0])
        out = tmp_path / "table.csv"
        assert main(["table", str(path), "--format", "csv", "-o", str(out)]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and str(path) in err
        assert not out.exists()

    # -- the real output -------------------------------------------------------------------
    def test_real_reads_54_vibrations_without_warnings(self):
        modes = self.real_modes()  # PrintedValueMismatch would be an error here
        assert modes.n_atoms == 20 and modes.n_modes == 54  # 3N - 6, C10H10
        p = modes.provenance
        assert (p.program_version, p.method, p.basis) == self.real_provenance

    def test_real_frequencies_equal_the_printed_ones(self):
        # cclib's own reading of the printed frequencies (rotations removed, sorted ascending)
        # is the outside reference.
        freqs = self.real_modes().freqs_cm1
        reference = cclib_data(self.real_file).vibfreqs
        assert freqs == pytest.approx(reference, abs=self.real_freq_atol_vs_cclib)
        assert freqs[[0, -1]] == pytest.approx(self.real_freq_ends_cm1, abs=1e-9)

    def test_real_mutual_exclusion(self):
        # dvb is centrosymmetric (C2h): IR-active modes are Raman-inactive (rule of mutual
        # exclusion, common practice).  IR intensities as printed, read by cclib.
        ir = np.asarray(cclib_data(self.real_file).vibirs)
        activity = raman_table(self.real_modes()).activity
        ir_active = ir > 1e-3 * ir.max()
        assert ir_active.sum() >= 20
        assert np.all(activity[ir_active] < 1e-6 * activity.max())

    def test_real_modes_in_the_frame_of_the_coordinates(self):
        modes = self.real_modes()
        assert rigid_overlap(modes) < self.real_rigid_overlap_max
        if self.real_rotation_rule_max is not None:  # derivatives and α in that frame too
            worst, scale = rotation_rule_error(modes)
            assert worst < self.real_rotation_rule_max * scale

    def test_real_table_command(self, capsys):
        assert main(["table", str(qc_output(self.real_file))]) == 0
        text = capsys.readouterr().out
        frequency, shown = self.real_table_row
        line = next(row for row in text.splitlines() if frequency in row)
        assert shown and all(part in line for part in shown)
        assert self.real_table_header and all(part in text for part in self.real_table_header)
