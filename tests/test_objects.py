"""Mode sets from objects: ASE's VibrationsData (both ways), cclib's ccData, file objects, bytes.

Reference library: ASE (``VibrationsData.get_frequencies``, ``get_energies``,
``with_new_masses``; an EMT Hessian computed by ``ase.vibrations.Vibrations``).  Contracts:
round trips (ModeSet → VibrationsData → ModeSet; a file, its text, its bytes and its ccData give
the same ModeSet) and the error texts of what cannot be read.
"""

from __future__ import annotations

import dataclasses
import io
import warnings

import numpy as np
import pytest

from _paths import FIXTURES, PROJECT_ROOT, qc_output
from vibrapol import ModeSet, read_modes
from vibrapol.errors import InputFormatError, VibrapolError
from vibrapol.sources.cclib_generic import CCDATA_NOTE

WATER = PROJECT_ROOT / "examples" / "water.modes.json"
#: Masses of ¹⁶O and ²H in Da (AME2020; values from memory, also ASE's isotope table).
O16, D2 = 15.99491462, 2.01410178


def _same_modes(a: ModeSet, b: ModeSet, *, provenance: bool = True) -> None:
    """Every array field equal (bit for bit), and the provenance unless told otherwise."""
    for f in dataclasses.fields(ModeSet):
        x, y = getattr(a, f.name), getattr(b, f.name)
        if f.name == "provenance":
            if provenance:
                assert x == y
            continue
        if isinstance(x, np.ndarray) or isinstance(y, np.ndarray):
            assert x is not None and y is not None, f.name
            assert np.array_equal(x, y), f.name
        else:
            assert x == y, f.name


# -- ASE VibrationsData -----------------------------------------------------------------------


def test_modeset_to_vibrationsdata_gives_ases_frequencies():
    """Reference library: ASE diagonalises the Hessian we hand it (eV/Å², its masses)."""
    from ase import units

    modes = read_modes(WATER)
    vib = modes.to_ase_vibrations()
    freqs = vib.get_frequencies()
    # six rigid-body eigenvalues near zero, then the three vibrations
    assert np.all(np.abs(freqs[:6]) < 0.01)
    np.testing.assert_allclose(freqs[6:].real, modes.freqs_cm1, rtol=1e-7)
    np.testing.assert_allclose(
        vib.get_energies()[6:].real, modes.freqs_cm1 * units.invcm, rtol=1e-7
    )
    assert np.array_equal(vib.get_atoms().get_masses(), modes.masses_da)


def test_round_trip_through_ase_keeps_frequencies_and_modes():
    """Contract: ModeSet → VibrationsData → ModeSet gives the same vibrations back."""
    modes = read_modes(WATER)
    back = ModeSet.from_ase_vibrations(modes.to_ase_vibrations(), dalpha_dx=modes.dalpha_dx)
    np.testing.assert_allclose(back.freqs_cm1, modes.freqs_cm1, rtol=1e-10)
    overlap = np.abs(np.einsum("ij,ij->i", back.modes, modes.modes))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-8)  # same modes up to sign
    np.testing.assert_allclose(np.abs(back.dalpha_dq), np.abs(modes.dalpha_dq), atol=1e-8)
    assert back.provenance.masses == "as set on the ase.Atoms"
    assert back.provenance.source_kind == "ase-vibrations"


@pytest.fixture(scope="module")
def emt_water(tmp_path_factory):
    """ASE's own finite-difference Hessian of water with its EMT test potential."""
    from ase.build import molecule
    from ase.calculators.emt import EMT
    from ase.optimize import BFGS
    from ase.vibrations import Vibrations

    atoms = molecule("H2O")
    atoms.calc = EMT()
    BFGS(atoms, logfile=None).run(fmax=1e-5)
    vib = Vibrations(atoms, name=str(tmp_path_factory.mktemp("vib") / "water"))
    vib.run()
    return vib.get_vibrations()


def test_modes_from_an_ase_hessian_agree_with_ases_frequencies(emt_water):
    """Reference library: ASE's get_frequencies on its own Hessian (no projection there)."""
    modes = ModeSet.from_ase_vibrations(emt_water)
    ase_freqs = emt_water.get_frequencies()[-3:].real
    np.testing.assert_allclose(modes.freqs_cm1, ase_freqs, atol=0.01)
    # ASE's default masses are standard atomic weights, and the provenance says so
    assert "standard atomic weights" in modes.provenance.masses
    assert np.array_equal(modes.masses_da, emt_water.get_atoms().get_masses())
    assert "largest difference from ASE's get_frequencies" in modes.provenance.notes[0]


def test_isotopes_agree_with_ases_with_new_masses(emt_water):
    """Reference library: ASE's VibrationsData.with_new_masses (D₂O from H₂O)."""
    modes = ModeSet.from_ase_vibrations(emt_water)
    heavy = [O16, D2, D2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ChangedValuesWarning: announced, expected here
        ours = modes.with_masses(heavy).freqs_cm1
    theirs = emt_water.with_new_masses(heavy).get_frequencies()[-3:].real
    # ASE does not project the rigid-body motions; ours does: a hundredth of a cm-1 apart
    np.testing.assert_allclose(ours, theirs, atol=0.05)


def test_partial_hessian_and_incomplete_modes_are_refused(emt_water):
    from ase.vibrations import VibrationsData

    partial = VibrationsData(
        emt_water.get_atoms(), emt_water.get_hessian()[:2, :, :2, :], indices=[0, 1]
    )
    with pytest.raises(VibrapolError, match="covers 2 of 3 atoms"):
        ModeSet.from_ase_vibrations(partial)
    with pytest.raises(VibrapolError, match="needs all 3 vibrations"):
        read_modes(WATER).subset([0, 2]).to_ase_vibrations()


# -- cclib ccData -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "path",
    [FIXTURES / "orca5_co2.out", FIXTURES / "qchem54_co2.out"],
    ids=["orca5_co2", "qchem54_co2"],
)
def test_ccdata_gives_the_generic_readers_numbers(path):
    """Contract: one code path: a file read with kind="cclib" and its ccData agree."""
    import cclib

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the generic reader announces what it loses
        from_file = read_modes(path, kind="cclib")
        data = cclib.io.ccread(str(path))
    from_data = ModeSet.from_ccdata(data)
    _same_modes(from_file, from_data, provenance=False)
    assert CCDATA_NOTE in from_data.provenance.notes
    assert from_data.provenance.program == from_file.provenance.program
    assert repr(read_modes(data)) == repr(from_data)  # read_modes takes the object too


def test_real_gaussian_ccdata():
    import cclib

    path = qc_output("Gaussian16-A.03_dvb_raman.out")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        data = cclib.io.ccread(str(path))
        from_file = read_modes(path, kind="cclib")
    _same_modes(from_file, ModeSet.from_ccdata(data, source=str(path)), provenance=False)
    assert from_file.n_modes == 54  # divinylbenzene, 20 atoms: 3·20 − 6


# -- file objects and bytes -------------------------------------------------------------------


REAL = ["Gaussian16-A.03_dvb_raman.out", "ORCA5.0.0_dvb_raman.out", "Gaussian09_dvb_raman.fchk"]


@pytest.mark.parametrize("name", REAL)
def test_file_object_and_bytes_read_like_the_path(name):
    """Contract: the same readers, the same numbers, from a path, its text and its bytes."""
    path = qc_output(name)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        on_disk = read_modes(path)
        with open(path, encoding="utf-8", errors="surrogateescape") as fh:
            from_text = read_modes(fh)
        with open(path, "rb") as fh:
            from_binary = read_modes(fh)
        from_bytes = read_modes(path.read_bytes())
    _same_modes(on_disk, from_text)  # an open file is named by its path: same provenance
    _same_modes(on_disk, from_binary)
    _same_modes(on_disk, from_bytes, provenance=False)
    assert from_bytes.provenance.source_file == "<bytes>"
    assert from_bytes.provenance.notes == on_disk.provenance.notes


def test_bytes_of_our_own_json_and_a_stream_without_a_name():
    modes = read_modes(WATER)
    text = WATER.read_text(encoding="utf-8")
    _same_modes(modes, read_modes(io.StringIO(text)), provenance=False)
    assert read_modes(io.StringIO(text)).provenance.source_file == "<file object>"
    _same_modes(modes, read_modes(text.encode("utf-16")), provenance=False)  # decoded as files


def test_unknown_text_asks_for_the_kind():
    with pytest.raises(InputFormatError, match=r"could not be told .* pass kind="):
        read_modes(io.StringIO("nothing a program printed\n"))
    with pytest.raises(InputFormatError, match="is empty"):
        read_modes(b"  \n")
    with pytest.raises(InputFormatError, match="structure \\(XYZ\\)"):
        read_modes(b"3\nwater\nO 0 0 0\nH 0 0.76 0.58\nH 0 -0.76 0.58\n")
    with pytest.raises(InputFormatError, match="unknown input kind"):
        read_modes(b"x", kind="nope")


def test_forced_kind_reads_text_the_sniffer_would_not_guess():
    """ORCA text with its banner cut off is not recognised, yet reads with kind='orca'."""
    path = FIXTURES / "orca5_co2.out"
    text = path.read_text()
    start = text.index("CARTESIAN COORDINATES (ANGSTROEM)")
    cut = text[start:].encode()
    with pytest.raises(InputFormatError, match="pass kind="):
        read_modes(cut)
    np.testing.assert_array_equal(
        read_modes(cut, kind="orca").freqs_cm1, read_modes(path).freqs_cm1
    )


def test_an_ase_atoms_is_a_structure_not_modes():
    from ase.build import molecule

    with pytest.raises(VibrapolError, match="structure but no vibrations.*compute_modes"):
        read_modes(molecule("H2O"))
    with pytest.raises(VibrapolError, match="not int"):
        read_modes(3)


# -- structures as ase.Atoms ------------------------------------------------------------------


def test_find_point_group_takes_an_ase_atoms():
    """Facts of the trade (common practice): CH₄ is Td, H₂O C2v, HOD Cs."""
    from ase.build import molecule

    from vibrapol.symmetry import find_point_group

    methane = molecule("CH4")
    assert find_point_group(methane).symbol == "Td"
    water = molecule("H2O")
    plain = find_point_group(water.get_atomic_numbers(), water.get_positions())
    assert find_point_group(water).symbol == plain.symbol == "C2v"
    water.set_masses([O16, D2, 1.00782503])  # HOD: masses set on the Atoms are used
    assert find_point_group(water).symbol == "Cs"


def test_compute_modes_keeps_masses_set_on_an_ase_atoms():
    """Bug: masses set on an ase.Atoms (D₂O) were replaced by the default isotopes, unsaid.

    Contract: the engine's D₂O is the H₂O Hessian analysed with the new masses.
    """
    from ase import Atoms

    from vibrapol.engine import compute_modes

    xyz = [[0.0, 0.0, 0.12], [0.0, 0.76, -0.47], [0.0, -0.76, -0.47]]  # Å, optimised first
    heavy = Atoms("OH2", positions=xyz)
    heavy.set_masses([O16, D2, D2])
    light = compute_modes(Atoms("OH2", positions=xyz), "hf", "sto-3g")
    deuterated = compute_modes(heavy, "hf", "sto-3g")
    assert np.array_equal(deuterated.masses_da, [O16, D2, D2])
    assert deuterated.provenance.masses == "given by the caller"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        expected = light.with_masses([O16, D2, D2]).freqs_cm1
    np.testing.assert_allclose(deuterated.freqs_cm1, expected, atol=0.05)
