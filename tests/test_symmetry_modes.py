"""Species of normal modes from PySCF Hessians (HF/STO-3G), degenerate sets, symmetrization."""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from ase.data import chemical_symbols
from pyscf import gto

import symmetry_geometries as geo
from vibrapol.engine import compute_modes
from vibrapol.errors import AccuracyWarning, ChangedValuesWarning, VibrapolError
from vibrapol.modeset import ModeSet, default_masses
from vibrapol.ramantable import raman_table
from vibrapol.symmetry import (
    analyse_modes,
    find_point_group,
    gamma_vib,
    mode_symmetry,
    symmetrize_hessian,
)
from vibrapol.symmetry.modes import apply_operation, cartesian_operator
from vibrapol.vibrations import harmonic_analysis


def hf_sto3g_hessian(z, x):
    """Cartesian Hessian (3N, 3N) in hartree/bohr² from PySCF RHF/STO-3G."""
    mol = gto.M(
        atom=[(chemical_symbols[int(a)], tuple(p)) for a, p in zip(z, x, strict=True)],
        basis="sto-3g",
        unit="Angstrom",
        verbose=0,
    )
    mf = mol.RHF().run(conv_tol=1e-10)
    h = mf.Hessian().kernel()
    n = len(z)
    return h.transpose(0, 2, 1, 3).reshape(3 * n, 3 * n)


def modeset(z, x, hessian):
    masses = default_masses(z)
    harmonic = harmonic_analysis(hessian, masses, x)
    return ModeSet(
        atomic_numbers=z,
        coordinates_ang=x,
        freqs_cm1=harmonic.freqs_cm1,
        modes=harmonic.modes,
        masses_da=masses,
    )


_CACHE: dict = {}


def computed(name, seed=0, noise_ang=0.0):
    """(z, x, Hessian) of a test molecule, rotated (and noisy), computed once per session."""
    key = (name, seed, noise_ang)
    if key not in _CACHE:
        z, x = geo.moved(*geo.MOLECULES[name](), seed=seed, noise_ang=noise_ang)
        _CACHE[key] = (np.array(z), x, hf_sto3g_hessian(z, x))
    return _CACHE[key]


@pytest.mark.parametrize(
    "name", ["water", "methane", pytest.param("benzene", marks=pytest.mark.slow)]
)
def test_mode_species_equal_gamma_vib(name):
    # The multiset of the modes' species is Γ_vib of the structure (both computed here, the
    # latter checked against Herzberg in test_symmetry_structures), and each degenerate set has
    # the dimension of its species: 2 for E, 3 for T (fact of the trade).
    z, x, h = computed(name, seed=2)
    modes = modeset(z, x, h)
    sym = mode_symmetry(modes, symmetrize=False)
    assert sym.counts() == gamma_vib(sym.group)
    dims = dict(zip(sym.group.irreps, sym.group.dims, strict=True))
    for s, irrep in zip(sym.sets, sym.set_irreps, strict=True):
        assert len(s) == dims[irrep]
        assert np.ptp(modes.freqs_cm1[list(s)]) < 1e-3  # degenerate within the SCF noise
    assert np.min(sym.set_quality) > 1 - 1e-6
    assert not sym.symmetrized


def test_water_modes_in_order():
    # HF/STO-3G water: bend and symmetric stretch A1, antisymmetric stretch B2, in ascending
    # frequency (Herzberg 1945 ordering of ν2 < ν1 < ν3, fact of the trade)
    z, x, h = computed("water", seed=2)
    sym = mode_symmetry(modeset(z, x, h))
    assert sym.irreps == ("A1", "A1", "B2")
    assert list(sym.ir_active) == [True, True, True]
    assert list(sym.totally_symmetric) == [True, True, False]


def test_noisy_methane_keeps_its_sets():
    # ±0.001 Å noise splits the T2 and E sets by up to ~15 cm⁻¹, yet the sets found from
    # symmetry are the right ones and nearly pure (no symmetrization needed)
    z, x, h = computed("methane", seed=4, noise_ang=0.001)
    modes = modeset(z, x, h)
    sym = mode_symmetry(modes)
    assert sym.group.symbol == "Td" and not sym.symmetrized
    assert sym.counts() == {"A1": 1, "E": 1, "T2": 2}
    assert np.min(sym.set_quality) > 0.99
    assert max(np.ptp(modes.freqs_cm1[list(s)]) for s in sym.sets) > 1.0  # the sets are split


@pytest.mark.slow
def test_noisy_benzene_is_symmetrized():
    # With ±0.001 Å noise the C–H stretches of benzene mix (purity < 0.95); averaging the
    # Hessian over D6h makes every set pure and exactly degenerate again, moving frequencies by
    # only a few cm⁻¹ and the atoms by less than the noise.
    z, x, h = computed("benzene", seed=2, noise_ang=0.001)
    modes = modeset(z, x, h)
    with pytest.warns(AccuracyWarning, match="not pure species of D6h"):
        raw = analyse_modes(modes, find_point_group(z, x), symmetrize=False)
    assert np.min(raw.set_quality) < 0.95
    # not by default: the modes are the source's, and the mixed ones are named
    assert not mode_symmetry(modes).symmetrized
    with warnings.catch_warnings():
        warnings.simplefilter("error", AccuracyWarning)
        sym = mode_symmetry(modes, symmetrize=True)
    assert sym.symmetrized and sym.counts() == gamma_vib(sym.group)
    assert np.min(sym.set_quality) > 1 - 1e-9
    new = sym.modes
    for s in sym.sets:
        assert np.ptp(new.freqs_cm1[list(s)]) < 1e-6
    assert np.max(np.linalg.norm(new.coordinates_ang - x, axis=1)) < 0.0018
    assert "symmetrized over D6h" in new.provenance.notes[-1]
    # Reference: PySCF at the ideal structure (same orientation, no noise).  The averaged
    # Hessian brings the frequencies at least twice as close to it as the noisy ones were.
    z0, x0, h0 = computed("benzene", seed=2)
    ideal = modeset(z0, x0, h0).freqs_cm1
    before = np.max(np.abs(modes.freqs_cm1 - ideal))
    after = np.max(np.abs(new.freqs_cm1 - ideal))
    assert after < 0.5 * before


def test_symmetrized_hessian_commutes_with_the_group():
    z, x, h = computed("methane", seed=4, noise_ang=0.001)
    group = find_point_group(z, x)
    hs = symmetrize_hessian(h, group)
    # D(R) H_s D(R)ᵀ = H_s for every operation, and averaging twice changes nothing
    for k in range(group.order):
        d = cartesian_operator(group, k)
        np.testing.assert_allclose(d @ hs @ d.T, hs, atol=1e-12)
    np.testing.assert_allclose(symmetrize_hessian(hs, group), hs, atol=1e-12)
    # D(R) is orthogonal and apply_operation is its action on row vectors
    d = cartesian_operator(group, 5)
    np.testing.assert_allclose(d @ d.T, np.eye(len(d)), atol=1e-12)
    v = np.random.default_rng(0).normal(size=(2, len(d)))
    np.testing.assert_allclose(apply_operation(group, 5, v), v @ d.T, atol=1e-12)


def test_raman_table_takes_sets_from_symmetry():
    # With symmetry the degenerate sets are the species' sets even where the noise splits
    # them by more than the frequency tolerance; without it the split T2 falls apart.
    z, x, h = computed("methane", seed=4, noise_ang=0.001)
    modes = modeset(z, x, h)
    rng = np.random.default_rng(3)
    tensors = rng.normal(size=(3 * len(z), 3, 3))
    modes = dataclasses.replace(modes, dalpha_dx=tensors)
    sym = mode_symmetry(modes, symmetrize=False)
    table = raman_table(modes, symmetry=sym)
    assert table.point_group == "Td"
    assert sorted(len(s) for s in table.sets()) == [1, 2, 3, 3]
    assert table.irreps == sym.irreps
    assert list(table.raman_active) == [True] * 9 and table.ir_active.sum() == 6
    plain = raman_table(modes, degeneracy_tol_cm1=1.0)
    assert sorted(len(s) for s in plain.sets()) != [1, 2, 3, 3]
    with pytest.raises(ValueError, match="not both"):
        raman_table(modes, symmetry=sym, point_group="Td")


def test_linear_co2_modes():
    # CO2: bend Πu (a degenerate pair), symmetric stretch Σg⁺ (Raman, polarized), antisymmetric
    # stretch Σu⁺ (IR) — Herzberg (1945), fact of the trade; 3N − 5 = 4 modes.
    z, x, h = computed("co2", seed=6)
    sym = mode_symmetry(modeset(z, x, h))
    assert sym.group.symbol == "D∞h" and sym.group.linear
    assert sym.irreps == ("Πu", "Πu", "Σg⁺", "Σu⁺")
    assert sym.sets == ((0, 1), (2,), (3,))
    assert list(sym.raman_active) == [False, False, True, False]
    assert list(sym.ir_active) == [True, True, False, True]
    assert np.min(sym.set_quality) > 1 - 1e-6


def test_labels_do_not_depend_on_mode_signs():
    # Contract: the sign of a normal mode is arbitrary; flipping some changes nothing
    z, x, h = computed("methane", seed=4, noise_ang=0.001)
    modes = modeset(z, x, h)
    flipped = dataclasses.replace(
        modes, modes=modes.modes * np.array([1, -1, 1, -1, -1, 1, 1, -1, 1])[:, None]
    )
    a, b = mode_symmetry(modes), mode_symmetry(flipped)
    assert a.irreps == b.irreps and a.sets == b.sets
    np.testing.assert_allclose(a.set_quality, b.set_quality, atol=1e-12)


def test_symmetrizing_sources_without_cartesian_derivatives():
    # The same noisy methane as three sources: with ∂α/∂x, with ∂α/∂Q only, and with a² and γ²
    # only (what activity-only outputs give).  Averaging over Td gives the same tensors from
    # ∂α/∂Q as from ∂α/∂x (reference: the ∂α/∂x route).  Invariants of mixed modes cannot be
    # un-mixed (signs and cross terms are lost), so symmetrizing them is refused (contract:
    # the error names the reason); without symmetrizing, the table keeps the source's numbers.
    z, x = geo.moved(*geo.methane(), seed=9, noise_ang=0.001)
    full = compute_modes((z, x), "hf", "sto-3g", optimize=False, progress=False)
    only_dq = dataclasses.replace(full, dalpha_dx=None)
    a2, g2 = full.raman_invariants()
    only_inv = dataclasses.replace(full, dalpha_dx=None, dalpha_dq=None, a2=a2, gamma2=g2)

    def set_sums(source, symmetrize):
        sym = mode_symmetry(source, symmetrize=symmetrize)
        table = raman_table(sym.modes, symmetry=sym)
        return np.array(
            [table.a2[list(s)].sum() for s in sym.sets]
            + [table.gamma2[list(s)].sum() for s in sym.sets]
        )

    with pytest.warns(ChangedValuesWarning, match="symmetrized over Td"):
        reference = set_sums(full, True)
    np.testing.assert_allclose(set_sums(only_dq, True), reference, rtol=1e-6, atol=1e-9)
    with pytest.raises(VibrapolError, match="cannot be un-mixed"):
        mode_symmetry(only_inv, symmetrize=True)
    activity_only = dataclasses.replace(only_inv, a2=None, gamma2=None, activity=45 * a2 + 7 * g2)
    with pytest.raises(VibrapolError, match="cannot be un-mixed"):
        mode_symmetry(activity_only, symmetrize=True)
    sym = mode_symmetry(only_inv)
    table = raman_table(sym.modes, symmetry=sym)
    assert sym.modes is only_inv and not sym.symmetrized
    np.testing.assert_array_equal(table.a2, a2)
    np.testing.assert_array_equal(table.gamma2, g2)
