"""Isotopologues: --isotopes syntax, the Teller–Redlich product rule, the shift table, the CLI.

References: the Teller–Redlich product rule (E. B. Wilson, J. C. Decius and P. C. Cross,
*Molecular Vibrations*, McGraw-Hill (1955), §8-6; exact for harmonic frequencies, common
practice) with moments of inertia from ASE (``Atoms.get_moments_of_inertia``); D₂O's
fundamentals keep H₂O's order ν₂ < ν₁ < ν₃ (gas phase 1178, 2671, 2788 cm⁻¹ against 1595,
3657, 3756 cm⁻¹; NIST/Herzberg, from memory).  Inputs: examples/water.modes.json (PySCF
RHF/6-31G*, examples/make_water_modes.py) and real program outputs in ../shared/qc-outputs/.
"""

from __future__ import annotations

import csv
import io
import warnings

import numpy as np
import pytest

from _paths import PROJECT_ROOT, QC_OUTPUTS
from vibrapol.cli import main
from vibrapol.errors import ChangedValuesWarning, OptionError, VibrapolError
from vibrapol.isotopes import frequencies_only, isotope_shifts, isotopologue, parse_isotopes
from vibrapol.sources import read_modes

WATER = str(PROJECT_ROOT / "examples" / "water.modes.json")
#: Mass of ²H in Da (AME2016, from memory).
D = 2.01410177812


def product_rule(parent, heavy) -> tuple[float, float]:
    """Π ν̃′/ν̃ over all vibrations, and its Teller–Redlich value from masses and inertia."""
    from ase import Atoms

    def atoms(masses):
        return Atoms(parent.atomic_numbers, parent.coordinates_ang, masses=masses)

    a, b = atoms(parent.masses_da), atoms(heavy.masses_da)
    lhs = float(np.prod(heavy.freqs_cm1 / parent.freqs_cm1))
    rhs = np.prod((parent.masses_da / heavy.masses_da) ** 3)
    rhs *= (b.get_masses().sum() / a.get_masses().sum()) ** 3
    rhs *= np.prod(b.get_moments_of_inertia()) / np.prod(a.get_moments_of_inertia())
    return lhs, float(np.sqrt(rhs))


def csv_rows(text: str) -> list[dict[str, str]]:
    """The rows of a CSV after its '#' header lines."""
    body = "".join(x for x in text.splitlines(True) if not x.startswith("#"))
    return list(csv.DictReader(io.StringIO(body)))


def quiet_isotopologue(modes, spec):
    with pytest.warns(ChangedValuesWarning, match="masses changed"):
        return isotopologue(modes, spec)


def test_product_rule_h2o_d2o():
    water = read_modes(WATER)
    lhs, rhs = product_rule(water, quiet_isotopologue(water, f"H={D}"))
    assert lhs == pytest.approx(rhs, rel=1e-9)


@pytest.mark.parametrize(
    "name", ["Gaussian16-A.03_dvb_raman.fchk", "Gaussian16-A.03_dvb_raman.out"]
)
def test_product_rule_on_a_real_output_c10d10(name):
    path = QC_OUTPUTS / name
    if not path.exists():
        pytest.skip(f"{path} not present")
    dvb = frequencies_only(read_modes(path))
    lhs, rhs = product_rule(dvb, quiet_isotopologue(dvb, f"H={D}"))
    assert lhs == pytest.approx(rhs, rel=1e-8)


def test_d2o_modes_pair_in_the_order_of_h2o():
    water = read_modes(WATER)
    shifts = isotope_shifts(water, quiet_isotopologue(water, f"H={D}"))
    assert shifts.partner.tolist() == [0, 1, 2]
    assert np.all(shifts.overlap > 0.99)
    # every H motion slows by about 1/√2 on deuteration: ratios between 0.70 and 0.75
    assert np.all((shifts.ratio > 0.70) & (shifts.ratio < 0.75))


def test_parse_isotopes_elements_and_atoms():
    water = read_modes(WATER)  # O1 H2 H3
    masses = parse_isotopes(f"h={D}, 3=3.016, O=17.9991610", water)
    np.testing.assert_allclose(masses, [17.9991610, D, 3.016])  # the atom item wins for H3
    assert parse_isotopes("2=2", water)[[0, 2]].tolist() == water.masses_da[[0, 2]].tolist()


@pytest.mark.parametrize(
    ("spec", "message"),
    [
        ("", "ELEMENT=MASS"),
        ("H", "ELEMENT=MASS"),
        ("H=heavy", "ELEMENT=MASS"),
        ("H=-2", "ELEMENT=MASS"),
        ("H=nan", "ELEMENT=MASS"),
        ("H=2,", "ELEMENT=MASS"),
        ("C=13", "no C atom"),
        ("4=2", "atom 4 out of range"),
        ("0=2", "atom 0 out of range"),
        ("H=2,h=3", "element H twice"),
        ("2=2,2=3", "atom 2 twice"),
    ],
)
def test_parse_isotopes_refuses_bad_items(spec, message):
    # contract: one clear line naming the bad item
    with pytest.raises(OptionError, match=message):
        parse_isotopes(spec, read_modes(WATER))


def test_refused_without_cartesian_derivatives():
    path = QC_OUTPUTS / "ORCA6.0.1_dvb_raman.out"
    if not path.exists():
        pytest.skip(f"{path} not present")
    with pytest.raises(VibrapolError, match="∂α/∂x"):
        isotopologue(read_modes(path), f"H={D}")


def test_table_isotopes_cli_matches_the_library(capsys):
    assert main(["table", WATER, "--isotopes", f"H={D}", "--format", "csv"]) == 0
    out = capsys.readouterr().out
    assert f"H2 1.00783 → {D:.6g}" in out  # the masses are in the file's header
    assert "masses changed" in out
    freqs = [float(r["frequency_cm1"]) for r in csv_rows(out)]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ChangedValuesWarning)
        heavy = isotopologue(read_modes(WATER), f"H={D}")
    np.testing.assert_allclose(freqs, heavy.freqs_cm1, atol=1e-6)


def test_shifts_cli_csv(tmp_path, capsys):
    out = tmp_path / "shifts.csv"
    assert main(["shifts", WATER, "--isotopes", f"2={D}", "--format", "csv", "-o", str(out)]) == 0
    text = out.read_text()
    assert "# isotopologue_masses: given: H2" in text
    rows = csv_rows(text)
    assert [r["mode"] for r in rows] == ["1", "2", "3"]
    for r in rows:
        shift = float(r["isotopologue_cm1"]) - float(r["frequency_cm1"])
        assert float(r["shift_cm1"]) == pytest.approx(shift, abs=2e-4)
        assert (
            float(r["shift_cm1"]) < 0
        )  # a heavier atom never raises a frequency (common practice)
    # HDO: one stretch is nearly a pure O–H stretch, the other O–D (common practice), so
    # each overlaps a symmetric/antisymmetric H₂O stretch only partly
    assert max(float(r["overlap"]) for r in rows[1:]) < 0.9


def test_shifts_cli_works_without_cartesian_derivatives(capsys):
    path = QC_OUTPUTS / "ORCA6.0.1_dvb_raman.out"
    if not path.exists():
        pytest.skip(f"{path} not present")
    assert main(["shifts", str(path), "--isotopes", f"H={D}", "--format", "json"]) == 0
    assert '"shift_cm1"' in capsys.readouterr().out


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["shifts", WATER], "needs --isotopes"),
        (["shifts", WATER, "--isotopes", "X=2"], "no X atom"),
        (["table", WATER, "--isotopes", "9=2"], "atom 9 out of range"),
    ],
)
def test_cli_refusals_are_one_line(argv, message, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]


def test_shift_dataframe_equals_the_csv(tmp_path):
    # contract: the DataFrame has the CSV's columns and numbers (to the CSV's digits)
    import pandas as pd

    water = read_modes(WATER)
    shifts = isotope_shifts(water, quiet_isotopologue(water, f"H={D}"))
    out = tmp_path / "s.csv"
    with pytest.warns(ChangedValuesWarning):
        assert (
            main(["shifts", WATER, "--isotopes", f"H={D}", "--format", "csv", "-o", str(out)]) == 0
        )
    from_csv = pd.read_csv(out, comment="#")
    df = shifts.to_dataframe()
    assert list(df.columns) == list(from_csv.columns)
    np.testing.assert_allclose(df.to_numpy(float), from_csv.to_numpy(float), atol=1e-4)
    assert df.attrs["isotopologue_masses"].startswith("given: H2")
