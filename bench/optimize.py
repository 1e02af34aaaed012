"""Optimiser benchmark: geomeTRIC (internal coordinates) against ASE's Cartesian BFGS.

Molecules (HF/3-21G by default): water, trans-butane, methyl ethyl ether, benzene and acetone.
Each starts from ASE's G2 geometry (``ase.collections.g2``: a reasonable structure, not our own
minimum) with every atom moved by 0.05 Å in a random direction (seeded, ``--seed``): a
deliberately poor start, as from a drawing or a force field.  Every run stops on the engine's
criterion (largest atomic force ≤ 1e-5 hartree/bohr with tight SCF).  Three runs per molecule:

* ``internal``: geomeTRIC with loose SCF on the early steps (the engine's default);
* ``internal-tight``: geomeTRIC with tight SCF at every step (the effect of the loose SCF);
* ``cartesian-bfgs``: ASE BFGS, the engine's optimiser before.

``cycles`` counts the SCF iterations of the internal optimiser's evaluations (the measure of
what the loose early steps save, independent of the machine's load).

Also printed: the largest change of the nuclear gradient between loose and tight SCF at the
start geometry (the cost of the loose steps in accuracy), and, for symmetric molecules
(water, benzene, CCl4) started from their exact G2 geometry, the shift the engine's
symmetrization applies after each optimiser, the point group it finds, and the largest force
before and after the symmetrization.

    PYTHONPATH=src python bench/optimize.py
    PYTHONPATH=src python bench/optimize.py --molecules water benzene --basis sto-3g
    PYTHONPATH=src python bench/optimize.py --runs internal internal-tight --no-symmetry

Prints tables and one JSON line.  Wall times depend on the machine and its load.
"""

from __future__ import annotations

import argparse
import json
import platform
from time import perf_counter

import numpy as np

#: Name in the table → ASE G2 name.
MOLECULES = {
    "water": "H2O",
    "trans-butane": "trans-butane",
    "methyl-ethyl-ether": "CH3CH2OCH3",
    "benzene": "C6H6",
    "acetone": "CH3COCH3",
}
SYMMETRIC = {"water": "H2O", "benzene": "C6H6", "ccl4": "CCl4"}
RUNS = (("internal", "internal", True), ("internal-tight", "internal", False))
RUNS += (("cartesian-bfgs", "cartesian-bfgs", True),)
NOISE_ANG = 0.05


def noisy_start(name: str, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """G2 geometry with every atom moved 0.05 Å in a random direction."""
    from ase.collections import g2

    atoms = g2[MOLECULES[name]]
    rng = np.random.default_rng(seed)
    v = rng.normal(size=(len(atoms), 3))
    v *= NOISE_ANG / np.linalg.norm(v, axis=1)[:, None]
    return atoms.numbers.copy(), atoms.positions + v


def aligned_rmsd(a: np.ndarray, b: np.ndarray) -> float:
    """RMSD (Å) of b onto a after removing translation and rotation (Kabsch)."""
    a0, b0 = a - a.mean(axis=0), b - b.mean(axis=0)
    u, _, vt = np.linalg.svd(b0.T @ a0)
    d = np.sign(np.linalg.det(u @ vt))
    r = u @ np.diag([1.0, 1.0, d]) @ vt
    return float(np.sqrt(np.mean(np.sum((b0 @ r - a0) ** 2, axis=1))))


def gradient_change(z: np.ndarray, xyz: np.ndarray, spec) -> float:  # noqa: ANN001
    """Largest |g_loose − g_tight| (hartree/bohr) at ``xyz``, both SCF from the default guess."""
    from vibrapol.engine.optimize import FMAX_HARTREE_BOHR
    from vibrapol.engine.optimize_internal import Evaluator
    from vibrapol.units import BOHR_ANG

    g = {}
    for loose in (True, False):
        ev = Evaluator(z, spec, FMAX_HARTREE_BOHR, loose=loose)
        g[loose] = ev(xyz / BOHR_ANG).gradient_hartree_bohr
    return float(np.max(np.abs(g[True] - g[False])))


def _optimize_counting_cycles(z, start, spec, optimizer: str, loose: bool):  # noqa: ANN001, ANN202
    """optimize_geometry, and the SCF cycles of the internal optimiser's evaluations (else None)."""
    from vibrapol.engine import optimize_internal
    from vibrapol.engine.optimize import optimize_geometry

    made = []
    plain = optimize_internal.Evaluator

    class Counting(plain):
        def __init__(self, *args, **kwargs) -> None:  # noqa: ANN002, ANN003
            super().__init__(*args, **kwargs)
            made.append(self)

    optimize_internal.Evaluator = Counting
    try:
        r = optimize_geometry(z, start, spec, optimizer=optimizer, loose_scf=loose)
    finally:
        optimize_internal.Evaluator = plain
    return r, (sum(e.n_scf_cycles for e in made) if made else None)


def bench_molecule(name: str, spec, seed: int, runs: list[str]) -> list[dict]:  # noqa: ANN001
    z, start = noisy_start(name, seed)
    rows = []
    for label, optimizer, loose in RUNS:
        if label not in runs:
            continue
        t0 = perf_counter()
        r, cycles = _optimize_counting_cycles(z, start, spec, optimizer, loose)
        rows.append(
            {
                "molecule": name,
                "atoms": len(z),
                "run": label,
                "steps": r.n_steps,
                "gradients": r.n_gradients,
                "loose": r.n_loose,
                "seconds": perf_counter() - t0,
                "scf_cycles": cycles,
                "energy": r.energy_hartree,
                "max_force": r.max_force_hartree_bohr,
                "coords": r.coordinates_ang,
            }
        )
    ref = rows[-1]  # cartesian-bfgs when it ran, else the last run
    for row in rows:
        row["dE_vs_bfgs"] = row["energy"] - ref["energy"]
        row["rmsd_vs_bfgs"] = aligned_rmsd(ref["coords"], row["coords"])
    rows[0]["grad_change_loose"] = gradient_change(z, start, spec)
    for row in rows:
        del row["coords"]
    return rows


def symmetry_shift(name: str, spec) -> list[dict]:  # noqa: ANN001
    from ase.collections import g2

    from vibrapol.engine.optimize import FMAX_HARTREE_BOHR, optimize_geometry
    from vibrapol.engine.optimize_internal import Evaluator
    from vibrapol.engine.prepare import _impose_symmetry
    from vibrapol.engine.progress import Progress
    from vibrapol.modeset import default_masses
    from vibrapol.units import BOHR_ANG

    atoms = g2[SYMMETRIC[name]]
    z = atoms.numbers.copy()
    masses = default_masses(z)
    rows = []
    for optimizer in ("internal", "cartesian-bfgs"):
        r = optimize_geometry(z, atoms.positions, spec, optimizer=optimizer)
        group, xyz, shift = _impose_symmetry(z, r.coordinates_ang, masses, Progress(False))
        after = Evaluator(z, spec, FMAX_HARTREE_BOHR, loose=False)(xyz / BOHR_ANG).max_force
        rows.append(
            {
                "molecule": name,
                "run": optimizer,
                "gradients": r.n_gradients,
                "point_group": group.symbol,
                "shift_ang": shift,
                "max_force": r.max_force_hartree_bohr,
                "max_force_symmetrized": after,
            }
        )
    return rows


def main() -> None:
    """Run the benchmark and print the tables and a JSON line."""
    from vibrapol.engine.scf import MethodSpec

    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--molecules", nargs="+", choices=list(MOLECULES), default=list(MOLECULES))
    parser.add_argument("--method", default="hf")
    parser.add_argument("--basis", default="3-21g")
    parser.add_argument("--seed", type=int, default=16)
    parser.add_argument("--no-symmetry", action="store_true", help="skip the symmetry table")
    labels = [label for label, _, _ in RUNS]
    parser.add_argument("--runs", nargs="+", choices=labels, default=labels)
    args = parser.parse_args()
    spec = MethodSpec(args.method, args.basis)
    rows = [r for name in args.molecules for r in bench_molecule(name, spec, args.seed, args.runs)]
    print(f"{spec.label()}, start = G2 geometry + 0.05 Å per atom (seed {args.seed})")
    print(
        f"{'molecule':20s} {'run':15s} {'steps':>5s} {'grads':>5s} {'loose':>5s} "
        f"{'cycles':>6s} {'wall/s':>7s} {'E/Eh':>16s} {'dE vs BFGS':>11s} "
        f"{'RMSD/Å':>8s} {'fmax':>8s}"
    )
    for r in rows:
        print(
            f"{r['molecule']:20s} {r['run']:15s} {r['steps']:5d} {r['gradients']:5d} "
            f"{r['loose']:5d} {'-' if r['scf_cycles'] is None else r['scf_cycles']:>6} "
            f"{r['seconds']:7.1f} {r['energy']:16.10f} "
            f"{r['dE_vs_bfgs']:11.2e} {r['rmsd_vs_bfgs']:8.1e} {r['max_force']:8.1e}"
        )
    print("largest gradient change, loose vs tight SCF at the start (hartree/bohr):")
    for r in rows:
        if "grad_change_loose" in r:
            print(f"  {r['molecule']:20s} {r['grad_change_loose']:.1e}")
    sym = []
    if not args.no_symmetry:
        sym = [row for name in SYMMETRIC for row in symmetry_shift(name, spec)]
        print("symmetric starts (exact G2 geometry): symmetrization after the optimiser")
        for r in sym:
            print(
                f"  {r['molecule']:10s} {r['run']:15s} {r['gradients']:3d} gradients, "
                f"point group {r['point_group']:4s} max shift {r['shift_ang']:.1e} Å, "
                f"max force {r['max_force']:.1e} -> {r['max_force_symmetrized']:.1e} hartree/bohr"
            )
    machine = f"{platform.machine()} {platform.processor() or ''} {platform.python_version()}"
    print(
        json.dumps(
            {
                "bench": "optimize",
                "method": spec.label(),
                "seed": args.seed,
                "machine": machine.strip(),
                "results": rows,
                "symmetry": sym,
            }
        )
    )


if __name__ == "__main__":
    main()
