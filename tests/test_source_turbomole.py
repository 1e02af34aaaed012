"""The TURBOMOLE aoforce reader, on fixtures of our own (no real TURBOMOLE output is at hand).

Fixtures (tests/fixtures/turbomole_h2co_raman.out, turbomole_h2co_ir.out, written by
tests/fixtures/generators/make_orca_turbomole_fixtures.py): formaldehyde, frequencies and modes
from a PySCF RHF/STO-3G Hessian (orca_turbomole_hessians.json beside the generator), invented
IR intensities and invented a², γ² turned into Raman rows.

The layout is from memory and from the layout cclib's TURBOMOLE parser expects (block title,
``mode``/``frequency``/``symmetry``/``intensity (km/mol)`` rows, the four Raman rows, atom rows,
``reduced mass``).  Uncertain, and so not relied on by the reader beyond what is said: the
wording of the Raman heading (the reader only looks for a number with cm**(-1) or nm and one
with K in it), the print precision of the Raman rows (2 decimals for %, 4 for the ratio
assumed), whether the rows share one normalisation or each has its own (both are recognised),
and which normalisation aoforce uses for the printed modes (the reader finds out from the
numbers; one fixture has Cartesian displacements, the other mass-weighted vectors).
"""

from __future__ import annotations

import json
import re
import warnings

import numpy as np
import pytest

from _paths import FIXTURES
from _source_contract import table_rows
from vibrapol import invariants as inv
from vibrapol.cli import main
from vibrapol.errors import AccuracyWarning, InputFormatError, PrintedValueMismatch
from vibrapol.sources import sniff
from vibrapol.sources.modes_json import modeset_from_dict, modeset_to_dict
from vibrapol.sources.registry import sniff_text
from vibrapol.sources.turbomole import parse_turbomole, sniff_turbomole

RAMAN = FIXTURES / "turbomole_h2co_raman.out"
IR_ONLY = FIXTURES / "turbomole_h2co_ir.out"
PYSCF = json.loads((FIXTURES / "generators" / "orca_turbomole_hessians.json").read_text())["h2co"]
#: The invented invariants behind the fixture's Raman rows (Å⁴/amu; generator).
A2 = np.array([0.0, 0.0, 0.25, 0.60, 2.10, 0.0])
GAMMA2 = np.array([0.35, 0.80, 0.90, 1.70, 3.30, 4.10])
#: hc/k in cm K (CODATA 2018 second radiation constant, common practice).
C2_CM_K = 1.438776877


def _read(text: str, where: str = "t.out"):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AccuracyWarning)
        return parse_turbomole(text, where)


def printed_rows(a2, gamma2, freqs, laser_cm1, temperature_k, per_row=False):
    """Our own derivation of the rows a program prints for 90° scattering (test's copy).

    dσ/dΩ ∝ (ν₀−ν)⁴/(ν[1−exp(−hcν/kT)]) · ⟨|e_s·α′·e_i|²⟩ (P. L. Polavarapu, J. Phys. Chem. 94,
    8106 (1990)); 45⟨…⟩ = 45a² + 4γ² for parallel, 3γ² for perpendicular polarizations (D. A.
    Long, The Raman Effect, 2002, ch. 5).  At 90°: (ort,ort) = 45a² + 4γ², (ort,unpol) =
    45a² + 7γ², (par,par) = 3γ²; ratio = (par,par)/(ort,ort).  Rounded as printed.
    """
    g = (laser_cm1 - freqs) ** 4 / freqs
    if temperature_k > 0:
        g /= 1 - np.exp(-C2_CM_K * freqs / temperature_k)
    raw = {
        "(par,par)": g * 3 * gamma2,
        "(ort,ort)": g * (45 * a2 + 4 * gamma2),
        "(ort,unpol)": g * (45 * a2 + 7 * gamma2),
    }
    top = raw["(ort,unpol)"].max()
    out = {k: np.round(100 * v / (v.max() if per_row else top), 2) for k, v in raw.items()}
    out["depol. ratio"] = np.round(raw["(par,par)"] / raw["(ort,ort)"], 4)
    return out


def with_rows(text, rows, heading=None):
    """The fixture text with its Raman rows (vibrations only) and heading replaced."""
    lines = text.splitlines()
    block = 0
    for i, line in enumerate(lines):
        if line.split()[:1] == ["mode"]:
            block = int(line.split()[1]) // 6  # 0: rigid modes, 1: the six vibrations
        key = next((k for k in rows if line.strip().startswith(k)), None)
        if key and block == 1:
            fmt = "{:.4f}" if key == "depol. ratio" else "{:.2f}"
            lines[i] = f"   {key:<15s}" + "".join(f"{fmt.format(v):>9s}" for v in rows[key])
    out = "\n".join(lines)
    if heading is not None:
        start = out.index(" differential RAMAN")
        out = out[:start] + heading + out[out.index("\n\n", start) :]
    return out


# -- sniffing (by the blocks) -------------------------------------------------------------
def test_sniffing():
    assert sniff(RAMAN) == "turbomole" and sniff(IR_ONLY) == "turbomole"
    # without its banner, the normal-mode block with its reduced-mass rows still decides
    text = RAMAN.read_text().replace("a o f o r c e - program", "")
    assert sniff_text(text) == "turbomole"
    for other in ("orca5_co2.out", "qchem54_co2.out", "firefly_water_raman.out"):
        assert not sniff_turbomole((FIXTURES / other).read_text(), "")


# -- what is read ------------------------------------------------------------------------
def test_frequencies_species_ir_as_printed():
    ms = _read(RAMAN.read_text())
    # fixture rows 'frequency', 'symmetry', 'intensity (km/mol)' of modes 7-12
    np.testing.assert_array_equal(ms.freqs_cm1, [1271.16, 1410.00, 1764.95, 2131.83, 3506.90,
                                                 3661.52])  # fmt: skip
    assert ms.program_irreps == ("b1", "b2", "a1", "a1", "a1", "b2")
    np.testing.assert_array_equal(ms.ir_intensity_km_mol, [4.12, 10.54, 1.35, 80.11, 65.43, 120.98])
    np.testing.assert_array_equal(ms.masses_da, [12.0, 15.99491, 1.00783, 1.00783])
    # coordinates printed in bohr; the C=O distance of the geometry is 1.21 Å (generator)
    assert np.linalg.norm(ms.coordinates_ang[1] - ms.coordinates_ang[0]) == pytest.approx(
        1.21, abs=1e-7
    )
    assert ms.provenance.program == "TURBOMOLE" and ms.provenance.program_version == "7.5.1"


@pytest.mark.parametrize(("path", "kind"), [(RAMAN, "Cartesian"), (IR_ONLY, "mass-weighted")])
def test_modes_match_pyscf(path, kind):
    ms = _read(path.read_text())
    # reference: PySCF's Hessian modes behind the fixture (orthonormal mass-weighted vectors)
    overlap = np.abs(np.sum(ms.modes * np.array(PYSCF["L"]), axis=1))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-5)  # 7 printed decimals
    assert any(kind in note for note in ms.provenance.notes)


def test_ir_only_output_has_no_raman_and_no_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ms = parse_turbomole(IR_ONLY.read_text(), "ir.out")
    assert not ms.has_raman and ms.provenance.raman_scale == "absolute"
    assert ms.ir_intensity_km_mol is not None


# -- the Raman rows: relative invariants -------------------------------------------------
def test_fixture_gives_relative_invariants_with_a_warning():
    with pytest.warns(AccuracyWarning, match="relative .* not Å⁴/amu"):
        ms = parse_turbomole(RAMAN.read_text(), "f.out")
    assert ms.provenance.raman_scale == "relative"
    assert any("RELATIVE" in n for n in ms.provenance.notes)
    s = inv.activity(ms.a2, ms.gamma2)
    true = 45 * A2 + 7 * GAMMA2
    # percentages printed to 2 decimals (smallest 4.26 %): relative error ≲ 2e-3
    np.testing.assert_allclose(s, 100 * true / true.max(), rtol=2e-3)
    # ρ = 3γ²/(45a² + 4γ²), 3/4 for the non-totally-symmetric B modes (common practice)
    np.testing.assert_allclose(inv.rho_linear(ms.a2, ms.gamma2)[[0, 1, 5]], 0.75, atol=1e-4)


@pytest.mark.parametrize(
    ("laser", "temperature", "per_row", "heading"),
    [
        (18796.99, 298.15, False, None),
        (18796.99, 298.15, True, None),
        (9398.50, 77.0, False, " Raman: excitation 9398.50 cm**(-1), temperature 77.00 K"),
        (15797.8, 0.0, True, " RAMAN cross sections, laser 633.0 nm, at 0 K"),
    ],
)
def test_round_trip_through_printed_rows(laser, temperature, per_row, heading):
    # contract: rows synthesized from known a², γ² with our own derivation read back to them
    freqs = np.array(PYSCF["f"]).round(2)
    rows = printed_rows(A2, GAMMA2, freqs, laser, temperature, per_row)
    text = with_rows(RAMAN.read_text(), rows, heading)
    ms = _read(text)
    true_s = 45 * A2 + 7 * GAMMA2
    scale = 100 / true_s.max()
    np.testing.assert_allclose(inv.activity(ms.a2, ms.gamma2), true_s * scale, rtol=3e-3)
    np.testing.assert_allclose(ms.gamma2, GAMMA2 * scale, rtol=3e-3)
    np.testing.assert_allclose(ms.a2, A2 * scale, rtol=3e-3, atol=1e-3)
    how = "its own largest" if per_row else "largest (ort,unpol)"
    assert any(how in n for n in ms.provenance.notes)


def test_ratio_rows_that_disagree_are_reported():
    freqs = np.array(PYSCF["f"]).round(2)
    rows = printed_rows(A2, GAMMA2, freqs, 18796.99, 298.15)
    rows["(par,par)"] = rows["(par,par)"] * np.array([1, 1, 1.3, 1, 1, 1])
    with pytest.warns(PrintedValueMismatch, match=r"\(par,par\) row recomputed"):
        _read(with_rows(RAMAN.read_text(), rows), "bad.out")


def test_ratio_above_three_quarters_is_refused():
    rows = printed_rows(A2, GAMMA2, np.array(PYSCF["f"]).round(2), 18796.99, 298.15)
    rows["depol. ratio"] = np.where(rows["depol. ratio"] == 0.75, 0.8571, rows["depol. ratio"])
    with pytest.raises(InputFormatError, match="above 3/4"):
        _read(with_rows(RAMAN.read_text(), rows))


def test_heading_without_laser_is_an_unrecognised_layout():
    text = RAMAN.read_text().replace(" excitation wavenumber:    18796.99 cm**(-1)\n", "")
    with pytest.raises(
        InputFormatError, match="unrecognised layout of the TURBOMOLE Raman heading"
    ):
        _read(text)


def test_imaginary_frequency_is_negative():
    text = RAMAN.read_text().replace("  1271.16", " i1271.16", 1)
    ms = _read(text)
    assert ms.freqs_cm1[0] == -1271.16  # printed "i1271.16"
    assert any("0.00 dropped" in n for n in ms.provenance.notes)


# -- errors: truncated versus unrecognised --------------------------------------------------
def test_cut_inside_a_block_is_truncated():
    lines = RAMAN.read_text().splitlines()
    k = next(i for i, line in enumerate(lines) if line.strip().startswith("2   o")) + 40
    with pytest.raises(InputFormatError, match="looks truncated") as err:
        _read("\n".join(lines[:k]) + "\n" + lines[k][:20])
    assert "\n" not in str(err.value)


def test_unknown_row_layout_is_not_called_truncated():
    text = RAMAN.read_text()
    z_row = re.search(r"\n( +z)( +-?\d\.\d{7}){6}\n", text[text.index("mode               7") :])
    assert z_row
    bad = text.replace(z_row.group(0), "\n                  z  (not printed)\n", 1)
    with pytest.raises(InputFormatError, match="unrecognised layout of the TURBOMOLE normal-mode"):
        _read(bad)


# -- through the rest of vibrapol ------------------------------------------------------------
def test_modes_json_keeps_labels_and_scale():
    ms = _read(RAMAN.read_text())
    back = modeset_from_dict(json.loads(json.dumps(modeset_to_dict(ms))))
    assert back.program_irreps == ms.program_irreps
    assert back.provenance.raman_scale == "relative"
    np.testing.assert_array_equal(back.a2, ms.a2)


def test_table_says_relative(capsys):
    with pytest.warns(AccuracyWarning):
        assert main(["table", str(RAMAN)]) == 0
    out = capsys.readouterr().out
    assert "RELATIVE (largest activity 100, not Å⁴/amu)" in out
    with pytest.warns(AccuracyWarning):
        rows = table_rows(capsys, str(RAMAN))
    assert max(float(r["activity"]) for r in rows) == pytest.approx(100.0)


def test_species_compared_with_ours(capsys):
    # formaldehyde is C2v, 3A1 + B1 + 2B2 with x perpendicular to the plane (common practice)
    assert main(["symmetry", str(IR_ONLY)]) == 0
    assert "agree with vibrapol's for all 6 modes" in capsys.readouterr().out
    text = IR_ONLY.read_text()
    row = next(line for line in text.splitlines() if "b1" in line and "symmetry" in line)
    swapped = row.replace("b1", "bX").replace("b2", "b1").replace("bX", "b2")
    ms = _read(text.replace(row, swapped))
    from vibrapol.symmetry import mode_symmetry

    sym = mode_symmetry(ms, symmetrize=False)
    assert any("up to the choice of axes (printed B2 = B1, B1 = B2)" in n for n in sym.notes)


def test_blank_species_cells_are_placed_by_column():
    # an imaginary mode printed before the rigid-body ones, which have no species: the one
    # label must go to its own column (the first), not to the last
    lines = IR_ONLY.read_text().splitlines()
    i = next(k for k, line in enumerate(lines) if line.strip().startswith("frequency"))
    cells = lines[i].split()[1:]
    lines[i] = lines[i].replace("frequency    " + "     0.00", "frequency    " + "   i88.00", 1)
    j = next(k for k, line in enumerate(lines) if line.strip().startswith("symmetry"))
    lines[j] = "     symmetry           a2"
    assert cells == ["0.00"] * 6
    from vibrapol.sources.turbomole import mode_blocks

    title = next(k for k, line in enumerate(lines) if "NORMAL MODES and" in line)
    table = mode_blocks(lines, title, 4, "t.out")
    assert table.freqs_cm1[0] == -88.0
    assert table.symmetry[:6] == ("a2", "", "", "", "", "")


def test_no_absolute_cross_sections_from_relative_data():
    from vibrapol.errors import VibrapolError
    from vibrapol.spectrum import stick_spectrum

    ms = _read(RAMAN.read_text(), "rel.out")
    with pytest.raises(VibrapolError, match="only relative Raman intensities"):
        stick_spectrum(ms, quantity="cross-section")
    assert stick_spectrum(ms, quantity="intensity").heights.max() > 0


@pytest.mark.parametrize(
    ("heading", "laser_cm1"),
    [
        # 532 nm ↔ 18796.99 cm⁻¹ (10⁷/λ); 2.33 eV ↔ 18792.7 cm⁻¹ and 0.0856 hartree ↔
        # 18787.0 cm⁻¹ (CODATA: 1 eV = 8065.544 cm⁻¹, 1 hartree = 219474.63 cm⁻¹)
        (" RAMAN intensities for a laser line of 532 nm at 298.15 K", 1e7 / 532),
        (" RAMAN cross sections, excitation 2.33 eV, T = 298.15 K", 2.33 * 8065.544),
        (" RAMAN, frequency 0.0856 a.u., temperature 298.15 K", 0.0856 * 219474.63),
    ],
)
def test_excitation_in_other_units(heading, laser_cm1):
    from vibrapol.sources.turbomole import raman_conditions

    lines = with_rows(RAMAN.read_text(), {}, heading).splitlines()
    title = next(k for k, line in enumerate(lines) if "NORMAL MODES and" in line)
    first = next(k for k, line in enumerate(lines) if line.split()[:1] == ["mode"])
    laser, temperature = raman_conditions(lines, title, first, "t.out")
    assert laser == pytest.approx(laser_cm1, rel=2e-6) and temperature == 298.15


@pytest.mark.parametrize("path", [RAMAN, IR_ONLY])
def test_fixture_layout_is_the_one_cclib_expects(path):
    # reference library: cclib's TURBOMOLE parser (written from real aoforce outputs) reads the
    # fixtures' frequencies, IR intensities and species as we do, Raman rows included
    import io

    import cclib

    data = cclib.parser.Turbomole(io.StringIO(path.read_text())).parse()
    ms = _read(path.read_text())
    np.testing.assert_array_equal(data.vibfreqs, ms.freqs_cm1)
    np.testing.assert_array_equal(data.vibirs, ms.ir_intensity_km_mol)
    assert [s.lower() for s in data.vibsyms] == list(ms.program_irreps)
