"""Cost of the analytic ∂α/∂x (closed-shell RHF/RKS) against PySCF's analytic Hessian.

    PYTHONPATH=src python bench/analytic.py                       # benzene HF/6-31G*
    PYTHONPATH=src python bench/analytic.py --method b3lyp        # benzene B3LYP/6-31G*
    PYTHONPATH=src python bench/analytic.py --systems water,benzene --basis 6-31g*
    PYTHONPATH=src python bench/analytic.py --field-route         # also the 12-field route

One process, one molecule after the other, all threads of the process: the SCF (converged to
the field route's tolerance), PySCF's analytic Hessian, then the analytic ∂α/∂x split into its
two stages (the 3 + 6 field responses; the derivative-integral contractions).  With
``--field-route`` also the field route without symmetry (12 field SCFs + gradients, serial).
Geometries are ASE's (not optimised: the costs do not need a stationary point).

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


def run_system(name: str, basis: str, field_route: bool, method: str = "hf") -> dict:
    """Times (wall, CPU) of SCF, Hessian, analytic ∂α/∂x (and the field route) for one molecule."""
    import numpy as np
    from ase.build import molecule

    from vibrapol.engine.analytic import derivative_terms, field_density_derivatives
    from vibrapol.engine.fieldgrad import tighten_scf
    from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf

    atoms = molecule(name)
    spec = MethodSpec(method, basis)
    mol = build_molecule(atoms.numbers, atoms.positions, spec)
    row: dict = {"system": name, "method": method, "basis": basis, "atoms": mol.natm}
    row["nao"] = mol.nao
    t = _clock()
    mf = tighten_scf(run_scf(mol, spec), spec)
    row["scf"] = _since(t)
    t = _clock()
    hess = mf.Hessian()
    hess.verbose = 0
    hess.kernel()
    row["hessian"] = _since(t)
    t = _clock()
    dens = field_density_derivatives(mf)
    row["responses"] = _since(t)
    t = _clock()
    derivative_terms(mf, dens)
    row["contractions"] = _since(t)
    row["analytic"] = tuple(
        a + b for a, b in zip(row["responses"], row["contractions"], strict=True)
    )
    if field_route:
        from vibrapol.engine.fieldgrad import field_gradient, field_scf
        from vibrapol.engine.fieldplan import field_plan

        t = _clock()
        for field in field_plan(n_atoms=mol.natm).task_fields_au:
            field_gradient(field_scf(mol, spec, np.asarray(field), mf.make_rdm1()), field)
        row["field_route"] = _since(t)
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
    args = parser.parse_args()
    rows = [
        run_system(s, args.basis, args.field_route, args.method) for s in args.systems.split(",")
    ]
    cols = ["scf", "hessian", "responses", "contractions", "analytic"]
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
    machine = {"cpus": os.cpu_count(), "load_1min": load, "python": platform.python_version()}
    print(json.dumps({"bench": "analytic", "machine": machine, "rows": rows}))


if __name__ == "__main__":
    main()
