"""Cross-check against a second, independent symmetry library (molsym, test-only dependency).

molsym finds the point group with its own flowchart and builds its own character tables and
symmetry-element matrices; Γ_vib is reduced here from its matrices and atom map with its own
reduction routine.  Species whose names depend on the axis convention (the B species of C2v,
D2 and D2h) are compared as multisets of counts per parity.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from ase.data import atomic_masses_common, chemical_symbols

import symmetry_geometries as geo
from vibrapol.symmetry import find_point_group, gamma_vib
from vibrapol.units import BOHR_ANG

molsym = pytest.importorskip(
    "molsym", reason="molsym is a test-only dependency (pip install molsym)"
)

AXIS_DEPENDENT = {"C2v", "D2", "D2h"}


def molsym_gamma_vib(z, x):
    """(point group, {species: count}) from molsym; counts None for linear molecules."""
    z = np.asarray(z)
    mol = molsym.Molecule(
        [chemical_symbols[a] for a in z], np.asarray(x) / BOHR_ANG, atomic_masses_common[z]
    )
    st = molsym.Symtext.from_molecule(mol)
    if st.pg.is_linear:
        return st.pg.str, None
    atom_map = np.asarray(st.atom_map)
    chi = []
    for k, element in enumerate(st.symels):
        r = np.asarray(element.rrep, dtype=float)
        unmoved = np.sum(atom_map[:, k] == np.arange(len(z)))
        chi.append(unmoved * np.trace(r) - np.trace(r) - np.linalg.det(r) * np.trace(r))
    counts = st.reduction_coefficients(np.array(chi), by_class=False)
    names = {ir.symbol: int(c) for ir, c in zip(st.irreps, counts, strict=True) if c}
    return st.pg.str, {re.sub(r"_", "", k): v for k, v in names.items()}


def comparable(symbol, counts, group=None):
    """Species → count with the A1g/Ag spelling unified; B species pooled for axis groups."""
    out = {}
    for name, c in counts.items():
        name = group.species_name(name) if group is not None else name
        if symbol in AXIS_DEPENDENT and name.startswith("B"):
            key = "B" + name[2:]
            out.setdefault(key, []).append(c)
        else:
            out[name] = c
    return {k: sorted(v) if isinstance(v, list) else v for k, v in out.items()}


@pytest.mark.parametrize("name", sorted(set(geo.MOLECULES) - {"b12h12"}))
def test_gamma_vib_agrees_with_molsym(name):
    z, x = geo.moved(*geo.MOLECULES[name](), seed=1)
    ours = find_point_group(z, x)
    symbol, theirs = molsym_gamma_vib(z, x)
    expected_symbol = ours.symbol.replace("∞", "0")
    assert symbol == expected_symbol
    if theirs is None:
        return
    assert comparable(ours.symbol, theirs, ours) == comparable(ours.symbol, gamma_vib(ours))


@pytest.mark.slow
def test_icosahedral_gamma_vib_agrees_with_molsym():
    z, x = geo.b12h12()
    ours = find_point_group(z, x)
    symbol, theirs = molsym_gamma_vib(z, x)
    assert symbol == "Ih"
    assert {ours.species_name(k): v for k, v in theirs.items()} == gamma_vib(ours)
