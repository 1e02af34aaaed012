"""Make ``examples/water.modes.json`` with PySCF alone (no vibrapol engine needed).

How the file was made: water at the HF/6-31G* level, geometry optimised by a few Newton steps
on PySCF's analytic gradient and Hessian, analytic
Hessian, static polarizability by finite field (central difference of the dipole with ±0.001
a.u. fields added to the core Hamiltonian), and ∂α/∂x by central differences of α with a
0.005 Å Cartesian step.  Run: ``python examples/make_water_modes.py`` (about a minute on 2 cores).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from pyscf import gto, scf

from vibrapol.modeset import ModeSet, Provenance
from vibrapol.sources.modes_json import write_modes_json
from vibrapol.units import BOHR3_TO_ANG3, BOHR_ANG
from vibrapol.vibrations import harmonic_analysis

FIELD_AU = 1e-3
STEP_ANG = 0.005
BASIS = "6-31g*"


def build(coords_ang: np.ndarray) -> gto.Mole:
    atoms = [("O", coords_ang[0]), ("H", coords_ang[1]), ("H", coords_ang[2])]
    return gto.M(atom=atoms, basis=BASIS, unit="Angstrom", verbose=0)


def polarizability_bohr3(mol: gto.Mole, dm0: np.ndarray | None = None) -> np.ndarray:
    """α_ij = ∂μ_i/∂F_j by central differences of the dipole (a.u.)."""
    charges = mol.atom_charges()
    origin = charges @ mol.atom_coords() / charges.sum()
    with mol.with_common_orig(origin):
        r = mol.intor_symmetric("int1e_r", comp=3)
    alpha = np.zeros((3, 3))
    for j in range(3):
        dip = []
        for sign in (1.0, -1.0):
            mf = scf.RHF(mol)
            mf.conv_tol = 1e-12
            mf.conv_tol_grad = 1e-8
            h = mf.get_hcore() + sign * FIELD_AU * r[j]
            mf.get_hcore = lambda *args, h=h: h
            mf.kernel(dm0=dm0)
            dip.append(mf.dip_moment(unit="au", verbose=0, origin=origin))
        alpha[:, j] = (dip[0] - dip[1]) / (2 * FIELD_AU)
    # with +F·r added to H the dipole derivative is −α (engine-notes)
    return -0.5 * (alpha + alpha.T)


def optimise(coords: np.ndarray) -> tuple[np.ndarray, scf.hf.RHF]:
    for _ in range(10):
        mf = scf.RHF(build(coords)).run(conv_tol=1e-12)
        grad = mf.nuc_grad_method().kernel()
        if np.abs(grad).max() < 1e-6:
            break
        hess = mf.Hessian().kernel().transpose(0, 2, 1, 3).reshape(9, 9)
        step_bohr = -np.linalg.pinv(hess, rcond=1e-6) @ grad.ravel()
        coords = coords + step_bohr.reshape(3, 3) * BOHR_ANG
    return coords, mf


def main(out: Path) -> None:
    start = np.array([[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]])
    coords, mf = optimise(start)
    mol = mf.mol
    hessian = mf.Hessian().kernel().transpose(0, 2, 1, 3).reshape(9, 9)
    masses = np.array([15.99491461957, 1.00782503223, 1.00782503223])
    ha = harmonic_analysis(hessian, masses, coords)
    dalpha = np.zeros((9, 3, 3))
    for i in range(9):
        pair = []
        for sign in (1.0, -1.0):
            displaced = coords.copy().ravel()
            displaced[i] += sign * STEP_ANG
            pair.append(polarizability_bohr3(build(displaced.reshape(3, 3))) * BOHR3_TO_ANG3)
        dalpha[i] = (pair[0] - pair[1]) / (2 * STEP_ANG)
    modes = ModeSet(
        atomic_numbers=mol.atom_charges(),
        masses_da=masses,
        coordinates_ang=coords,
        freqs_cm1=ha.freqs_cm1,
        modes=ha.modes,
        dalpha_dx=dalpha,
        polarizability_ang3=polarizability_bohr3(mol) * BOHR3_TO_ANG3,
        energy_hartree=float(mf.e_tot),
        provenance=Provenance(
            source_file="examples/make_water_modes.py",
            source_kind="script",
            program="PySCF",
            program_version=__import__("pyscf").__version__,
            method="RHF",
            basis=BASIS,
            masses="most abundant isotopes (O-16, H-1)",
            notes=(
                "analytic Hessian; alpha by finite field ±0.001 au; "
                "dalpha/dx by central differences, 0.005 Å",
            ),
        ),
    )
    write_modes_json(modes, out, force=True)
    print(f"wrote {out}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).with_name("water.modes.json"))
