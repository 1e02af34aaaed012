"""Cost of the analytic ∂α/∂x (closed-shell RHF/RKS) against PySCF's analytic Hessian.

    PYTHONPATH=src python bench/analytic.py                       # benzene HF/6-31G*
    PYTHONPATH=src python bench/analytic.py --method b3lyp        # benzene B3LYP/6-31G*
    PYTHONPATH=src python bench/analytic.py --systems water,benzene --basis 6-31g*
    PYTHONPATH=src python bench/analytic.py --field-route         # also the 12-field route
    PYTHONPATH=src python bench/analytic.py --systems butan-2-ol --field-route   # C1, 15 atoms

One process, one molecule after the other, all threads of the process: the SCF (converged to
the field route's tolerance), PySCF's own analytic Hessian (``hessian_pyscf``), the engine's
(``hessian``: PySCF's terms, the nuclear equations solved by vibrapol's block solver, the
responses kept), the reference stage's α and ∂D/∂F (``alpha``, block solver, as the engine),
then the analytic ∂α/∂x by the 2n+1 rule split into its two stages (the 3 first-order field
responses, started from that ∂D/∂F as in the route; the derivative contractions).  With
``--second-order`` also ∂α/∂x with the six second-order field equations solved (the route's
task when the Hessian comes from a checkpoint); with ``--field-route`` the field route without
symmetry (12 field SCFs + gradients, serial).  The ratios are to the engine's Hessian.
Geometries are ASE's, or built here without symmetry (``butan-2-ol``, 15 atoms, from ASE's
trans-butane; ``hexan-2-ol``, 21 atoms, a built zigzag chain; ``naphthalene``, the model of
``bench/engine.py``); not optimised: the costs do not need a stationary point.

Prints a table and, last, one JSON line with every figure.  Wall times on shared cores are
contended; the CPU time of the process is printed beside them and is less sensitive to load.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import time


def _clock() -> tuple[float, float]:
    return time.perf_counter(), time.process_time()


def _since(start: tuple[float, float]) -> tuple[float, float]:
    wall, cpu = _clock()
    return wall - start[0], cpu - start[1]


def butan_2_ol():
    """Butan-2-ol (C1, 15 atoms), built from ASE's trans-butane.

    The out-of-plane H at +z on the second carbon becomes O (C–O 1.43 Å along the old C–H
    bond); the hydroxyl H sits 0.96 Å from O with C–O–H 108° (rounded typical values, from
    memory).  The carbon then carries H, OH, CH3 and C2H5: a stereocentre, so no symmetry.
    """
    import numpy as np
    from ase import Atoms
    from ase.build import molecule

    butane = molecule("trans-butane")
    symbols, pos = butane.get_chemical_symbols(), butane.positions.copy()
    carbon, hydrogen = 1, 11  # the second carbon and its H at +z (ASE's atom order)
    u = pos[hydrogen] - pos[carbon]
    u /= np.linalg.norm(u)
    oxygen = pos[carbon] + 1.43 * u
    v = np.cross(u, [1.0, 0.0, 0.0])
    v /= np.linalg.norm(v)
    angle = np.deg2rad(180.0 - 108.0)
    hydroxyl = oxygen + 0.96 * (np.cos(angle) * u + np.sin(angle) * v)
    symbols[hydrogen] = "O"
    pos[hydrogen] = oxygen
    return Atoms([*symbols, "H"], positions=np.vstack([pos, hydroxyl]))


def alkan_2_ol(n_carbons: int):
    """CnH(2n+1)OH with the OH on the second carbon (C1), built as an all-trans zigzag chain.

    Rounded typical values, from memory: C–C 1.53 Å, C–H 1.09 Å, C–O 1.43 Å, O–H 0.96 Å,
    tetrahedral angles, C–O–H 108°.  Not optimised (the costs do not need a minimum).
    """
    import numpy as np
    from ase import Atoms

    cc, ch, half = 1.53, 1.09, np.deg2rad(111.5) / 2
    tet = np.deg2rad(109.47)
    z = np.array([0.0, 0.0, 1.0])
    carbons = np.array(
        [[i * cc * np.sin(half), (i % 2) * cc * np.cos(half), 0.0] for i in range(n_carbons)]
    )
    symbols, pos = ["C"] * n_carbons, list(carbons)
    hydrogens = []  # (carbon index, position)
    for i, c in enumerate(carbons):
        bonds = [carbons[j] - c for j in (i - 1, i + 1) if 0 <= j < n_carbons]
        units = [b / np.linalg.norm(b) for b in bonds]
        if len(units) == 2:
            away = -(units[0] + units[1])
            away /= np.linalg.norm(away)
            for sign in (1, -1):
                h = np.cos(tet / 2) * away + sign * np.sin(tet / 2) * z
                hydrogens.append((i, c + ch * h))
        else:
            u = -units[0]
            p = np.cross(z, u)
            # in-plane H anti to the carbon two along the chain (the zigzag continued)
            p = p if np.dot(p, [0.0, 1.0, 0.0]) * (-1 if i % 2 else 1) > 0 else -p
            a = np.pi - tet
            hydrogens.append((i, c + ch * (np.cos(a) * u + np.sin(a) * p)))
            for sign in (1, -1):
                h = np.cos(a) * u - np.sin(a) * (0.5 * p - sign * np.sqrt(0.75) * z)
                hydrogens.append((i, c + ch * h))
    replaced = next(k for k, (i, x) in enumerate(hydrogens) if i == 1 and x[2] > 0)
    for k, (_, x) in enumerate(hydrogens):
        if k != replaced:
            symbols.append("H")
            pos.append(x)
    u = hydrogens[replaced][1] - carbons[1]
    u /= np.linalg.norm(u)
    oxygen = carbons[1] + 1.43 * u
    v = np.cross(u, [1.0, 0.0, 0.0])
    v /= np.linalg.norm(v)
    angle = np.deg2rad(180.0 - 108.0)
    hydroxyl = oxygen + 0.96 * (np.cos(angle) * u + np.sin(angle) * v)
    return Atoms([*symbols, "O", "H"], positions=np.vstack([pos, oxygen, hydroxyl]))


def naphthalene():
    """Naphthalene (D2h, 18 atoms): the engine benchmark's own model (``bench/engine.py``)."""
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from engine import _atoms as model

    return model("naphthalene")


BUILT = {
    "butan-2-ol": butan_2_ol,
    "hexan-2-ol": lambda: alkan_2_ol(6),
    "naphthalene": naphthalene,
}


def run_system(
    name: str,
    basis: str,
    field_route: bool,
    method: str = "hf",
    second_order: bool = False,
    pyscf_hessian: bool = True,
) -> dict:
    """Times (wall, CPU) of SCF, Hessians, analytic ∂α/∂x (and the field route), one molecule."""
    import numpy as np
    from ase.build import molecule

    from vibrapol.engine.analytic import derivative_terms, field_density_derivatives
    from vibrapol.engine.fieldgrad import tighten_scf
    from vibrapol.engine.hessian import analytic_hessian_parts
    from vibrapol.engine.polarizability import cphf_polarizability_response
    from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf

    atoms = BUILT[name]() if name in BUILT else molecule(name)
    spec = MethodSpec(method, basis)
    mol = build_molecule(atoms.numbers, atoms.positions, spec)
    row: dict = {"system": name, "method": method, "basis": basis, "atoms": mol.natm}
    row["nao"] = mol.nao
    t = _clock()
    mf = tighten_scf(run_scf(mol, spec), spec)
    row["scf"] = _since(t)
    if pyscf_hessian:
        t = _clock()
        hess = mf.Hessian()
        hess.verbose = 0
        hess.kernel()
        row["hessian_pyscf"] = _since(t)
    t = _clock()
    _, nuclear = analytic_hessian_parts(mf)
    row["hessian"] = _since(t)
    t = _clock()
    _, start = cphf_polarizability_response(mf, solver="block")
    row["alpha"] = _since(t)
    t = _clock()
    dens = field_density_derivatives(mf, start, nuclear)
    row["responses"] = _since(t)
    t = _clock()
    derivative_terms(mf, dens)
    row["contractions"] = _since(t)
    row["analytic"] = tuple(
        a + b for a, b in zip(row["responses"], row["contractions"], strict=True)
    )
    if second_order:
        t = _clock()
        derivative_terms(mf, field_density_derivatives(mf))
        row["second_order"] = _since(t)
    if field_route:
        from vibrapol.engine.fieldgrad import field_gradient, field_scf
        from vibrapol.engine.fieldplan import field_plan

        t = _clock()
        for field in field_plan(n_atoms=mol.natm).task_fields_au:
            field_gradient(field_scf(mol, spec, np.asarray(field), mf.make_rdm1()), field)
        row["field_route"] = _since(t)
        row["field_ratio_wall"] = row["field_route"][0] / row["hessian"][0]
        row["field_ratio_cpu"] = row["field_route"][1] / row["hessian"][1]
    row["ratio_wall"] = row["analytic"][0] / row["hessian"][0]
    row["ratio_cpu"] = row["analytic"][1] / row["hessian"][1]
    return row


def main() -> None:
    """Run the benchmark and print the table and the JSON line."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", default="C6H6", help="ASE molecule names, comma-separated")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--method", default="hf", help="hf or a functional (e.g. b3lyp)")
    parser.add_argument("--field-route", action="store_true")
    parser.add_argument(
        "--second-order",
        action="store_true",
        help="also ∂α/∂x with the six second-order field equations solved (no 2n+1)",
    )
    parser.add_argument(
        "--no-pyscf-hessian",
        action="store_true",
        help="skip PySCF's own Hessian.kernel (timed for comparison with the engine's)",
    )
    args = parser.parse_args()
    load_start = os.getloadavg()[0] if hasattr(os, "getloadavg") else None
    rows = [
        run_system(
            s,
            args.basis,
            args.field_route,
            args.method,
            args.second_order,
            not args.no_pyscf_hessian,
        )
        for s in args.systems.split(",")
    ]
    cols = ["scf", "hessian_pyscf", "hessian", "alpha", "responses", "contractions", "analytic"]
    if args.no_pyscf_hessian:
        cols.remove("hessian_pyscf")
    if args.second_order:
        cols.append("second_order")
    if args.field_route:
        cols.append("field_route")
    header = "| molecule | method | basis | nao | " + " | ".join(f"{c} / s" for c in cols)
    print(header + " | analytic / Hessian (wall) | (CPU) |")
    print("|" + "---|" * (len(cols) + 6))
    for r in rows:
        cells = " | ".join(f"{r[c][0]:.1f} ({r[c][1]:.1f} CPU)" for c in cols)
        print(
            f"| {r['system']} | {r['method']} | {r['basis']} | {r['nao']} | {cells} | "
            f"{r['ratio_wall']:.3f} | {r['ratio_cpu']:.3f} |"
        )
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else None
    machine = {
        "cpus": os.cpu_count(),
        "load_1min_start": load_start,
        "load_1min": load,
        "python": platform.python_version(),
    }
    print(json.dumps({"bench": "analytic", "machine": machine, "rows": rows}))


if __name__ == "__main__":
    main()
