"""Symmetry of real quantum-chemistry outputs: trans-1,4-divinylbenzene (C2h, 54 modes).

The files are read with cclib directly (coordinates, frequencies, printed displacements,
printed Raman activities and IR intensities); the outputs themselves are the outside reference:
their own symmetry labels (Gaussian), and their printed activities, which vanish for the modes
symmetry forbids (rule of mutual exclusion for centrosymmetric molecules, fact of the trade).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pytest

from vibrapol.errors import AccuracyWarning
from vibrapol.modeset import ModeSet, Provenance, default_masses
from vibrapol.symmetry import mode_symmetry
from vibrapol.vibrations import modes_from_displacements

QC = Path(__file__).resolve().parents[1] / ".." / "shared" / "qc-outputs"
FILES = [
    "Gaussian16-A.03_dvb_raman.out",
    "Gaussian09-D.01_dvb_raman.out",
    "Gaussian16-A.03_dvb_raman.fchk",
    "ORCA5.0.0_dvb_raman.out",
    "QChem5.4.1_dvb_raman.out",
    "Firefly8.0.1_dvb_raman.out",
    "GAMESS-UK8.0_dvb_raman.out",
    "DALTON2015_dvb_raman.out",
]


def read(name):
    if not (QC / name).exists():
        pytest.skip(f"{QC / name} not found (the shared QC outputs are not next to this clone)")
    cclib = pytest.importorskip("cclib")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        data = cclib.io.ccread(str(QC / name))
    z = np.asarray(data.atomnos)
    masses = np.asarray(getattr(data, "atommasses", default_masses(z)))
    modes = ModeSet(
        atomic_numbers=z,
        coordinates_ang=data.atomcoords[-1],
        freqs_cm1=data.vibfreqs,
        modes=modes_from_displacements(data.vibdisps, masses),
        masses_da=masses,
        provenance=Provenance(source_file=name),
    )
    return data, modes


@pytest.mark.parametrize("name", FILES)
def test_dvb_is_c2h_with_mutual_exclusion(name):
    data, modes = read(name)
    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        sym = mode_symmetry(modes)
    assert sym.group.symbol == "C2h"
    # planar C10H10: 2N − 3 = 37 in-plane modes (Ag + Bu), N − 3 = 17 out of plane (Au + Bg)
    assert sym.counts() == {"Ag": 19, "Bg": 8, "Au": 9, "Bu": 18}
    assert np.min(sym.set_quality) > 0.99  # printed to 2–5 decimals
    gerade = np.array([s.endswith("g") for s in sym.irreps])
    np.testing.assert_array_equal(sym.raman_active, gerade)
    np.testing.assert_array_equal(sym.ir_active, ~gerade)
    # The program's own printed numbers: Raman activity of every u mode and IR intensity of
    # every g mode are zero to print precision (ORCA's numerical derivatives: 1e-5 of the
    # largest); every g mode has a visible activity.
    raman = np.asarray(data.vibramans, dtype=float)
    assert np.max(raman[~gerade]) <= 1e-5 * raman.max()
    assert np.min(raman[gerade]) > 1e-4 * raman.max()
    if getattr(data, "vibirs", None) is not None:
        ir = np.asarray(data.vibirs, dtype=float)
        assert np.max(ir[gerade]) <= 1e-5 * ir.max()


@pytest.mark.parametrize("name", ["Gaussian16-A.03_dvb_raman.out", "Gaussian09-D.01_dvb_raman.out"])
def test_dvb_labels_agree_with_gaussian(name):
    # Gaussian prints AG, BG, AU, BU for each mode; C2h labels need no axis convention
    data, modes = read(name)
    sym = mode_symmetry(modes)
    printed = [sym.group.species_name(s) for s in data.vibsyms]
    assert printed == list(sym.irreps)
