"""Benchmark: a batch of molecules whose every stage is a job on the one backend.

Runs one batch (``vibrapol.engine.run_batch``) of small molecules from ASE's geometries
(optimisation, reference SCF, Hessian, derivative tasks for each) with 1 and with 2 local
workers, and prints per run the batch's wall time and, per molecule, the time of each stage.
With stages as jobs, the optimisations and Hessians of different molecules overlap on a pool;
with one worker everything runs one after the other in this process.

    PYTHONPATH=src python bench/stages.py                         # water, ammonia, methane
    PYTHONPATH=src python bench/stages.py --basis 6-31g* --workers 1,2

Uses only the public batch API, so the same script times an earlier vibrapol too. Prints a
table and, last, one JSON line.  Times are wall-clock seconds on this machine; on shared cores
they are contended and vary from run to run.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import sys
from time import perf_counter

MOLECULES = {"water": "H2O", "ammonia": "NH3", "methane": "CH4", "formaldehyde": "H2CO"}


def run(names: list[str], method: str, basis: str, route: str, workers: int) -> dict:
    from ase.build import molecule

    from vibrapol.engine.compute import BatchItem, engine_settings, run_batch

    settings = engine_settings(method, basis, route=route)
    items = [BatchItem(molecule(MOLECULES[n]), n) for n in names]
    t0 = perf_counter()
    outcomes = run_batch(items, settings, workers=workers, progress=False)
    wall = perf_counter() - t0
    rows = []
    for o in outcomes:
        r = o.run
        rows.append(
            {
                "molecule": o.name,
                "error": o.error,
                "seconds_optimize": None if r is None else round(r.seconds_optimize, 2),
                "seconds_scf": None if r is None else round(r.seconds_scf, 2),
                "seconds_hessian": None if r is None else round(r.seconds_hessian, 2),
                "tasks": None if r is None else r.tasks.n_tasks,
                "seconds_tasks_sum": None if r is None else round(r.tasks.seconds_tasks, 2),
            }
        )
    return {"workers": workers, "seconds_wall": round(wall, 2), "molecules": rows}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--molecules", default="water,ammonia,methane")
    parser.add_argument("--method", default="hf")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--route", default="cartesian")
    parser.add_argument("--workers", default="1,2")
    args = parser.parse_args()
    names = args.molecules.split(",")
    runs = [
        run(names, args.method, args.basis, args.route, int(w)) for w in args.workers.split(",")
    ]
    print(f"{'workers':>7} {'wall/s':>7}  molecule      opt/s   scf/s  hess/s  tasks  sum/s")
    for r in runs:
        for i, m in enumerate(r["molecules"]):
            head = f"{r['workers']:>7} {r['seconds_wall']:>7.1f}" if i == 0 else " " * 15
            print(
                f"{head}  {m['molecule']:<12} {m['seconds_optimize']:>6} {m['seconds_scf']:>7} "
                f"{m['seconds_hessian']:>7} {m['tasks']:>6} {m['seconds_tasks_sum']:>6}"
            )
    machine = {
        "python": sys.version.split()[0],
        "platform": platform.platform(),
        "cores": os.cpu_count(),
        "load_average": os.getloadavg(),
    }
    figures = {"machine": machine, "method": args.method, "basis": args.basis, "runs": runs}
    print(json.dumps(figures))


if __name__ == "__main__":
    main()
