"""Activities at the laser line: dynamic α(−ω; ω) against the static run of the same molecule.

For each molecule and method: optimise once, then at that geometry run the Cartesian route
static (``auto`` would take the field route for larger molecules) and with ``--laser-nm NM
--dynamic``, serially, and report the wall times of the α-dependent parts, their ratio, the
lowest excitation energy and the change of every visible activity and ρ.

    PYTHONPATH=src python bench/dynamic.py                          # water, HF and B3LYP/6-31G*
    PYTHONPATH=src python bench/dynamic.py --systems water ch4 --laser-nm 532 785

Prints a table and one JSON line.
"""

from __future__ import annotations

import argparse
import json
import sys
from time import perf_counter

import numpy as np

SYSTEMS = {"water": "H2O", "ch4": "CH4", "h2co": "H2CO", "ccl4": "CCl4"}


def study(system: str, method: str, basis: str, laser_nm: float) -> dict:
    """One molecule: static and dynamic runs at the same optimised geometry."""
    from ase.build import molecule

    from vibrapol.engine.compute import run_engine
    from vibrapol.ramantable import raman_table

    opt = run_engine(molecule(SYSTEMS[system]), method, basis, progress=False)
    geometry = (opt.modes.atomic_numbers, opt.modes.coordinates_ang)
    common = dict(optimize=False, route="cartesian", progress=False, workers=1)
    t0 = perf_counter()
    static = run_engine(geometry, method, basis, **common)
    t1 = perf_counter()
    dynamic = run_engine(geometry, method, basis, laser_nm=laser_nm, dynamic=True, **common)
    t2 = perf_counter()
    s, d = raman_table(static.modes), raman_table(dynamic.modes)
    visible = s.activity > 1e-3 * s.activity.max()
    change = d.activity[visible] / s.activity[visible] - 1.0
    first = next(n for n in dynamic.modes.provenance.notes if n.startswith("lowest singlet"))
    return {
        "system": system,
        "method": method,
        "basis": basis,
        "laser_nm": laser_nm,
        "static_s": round(t1 - t0, 2),
        "dynamic_s": round(t2 - t1, 2),
        "ratio": round((t2 - t1) / (t1 - t0), 2),
        "tasks": dynamic.tasks.n_tasks,
        "first_excitation": first.split(": ", 1)[1].split(",")[0],
        "activity_change_min": round(float(change.min()), 4),
        "activity_change_max": round(float(change.max()), 4),
        "max_abs_delta_rho": round(float(np.abs(d.rho_linear - s.rho_linear)[visible].max()), 4),
    }


def main() -> None:
    """Run the study and print the table and the JSON line."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", nargs="+", default=["water"], choices=sorted(SYSTEMS))
    parser.add_argument("--methods", nargs="+", default=["hf", "b3lyp"])
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--laser-nm", nargs="+", type=float, default=[532.0])
    args = parser.parse_args()
    rows = []
    for system in args.systems:
        for method in args.methods:
            for nm in args.laser_nm:
                rows.append(study(system, method, args.basis, nm))
                print(json.dumps(rows[-1]), file=sys.stderr, flush=True)  # progress
    head = "| molecule | method | laser/nm | first excitation | static/s | dynamic/s | ratio "
    head += "| ΔS/S min | ΔS/S max | max Δρ |"
    print(head)
    print("|---|---|---:|---|---:|---:|---:|---:|---:|---:|")
    for r in rows:
        print(
            f"| {r['system']} | {r['method']}/{r['basis']} | {r['laser_nm']:g} | "
            f"{r['first_excitation']} | {r['static_s']} | {r['dynamic_s']} | {r['ratio']} | "
            f"{r['activity_change_min']:+.2%} | {r['activity_change_max']:+.2%} | "
            f"{r['max_abs_delta_rho']} |"
        )
    print(json.dumps({"bench": "dynamic", "rows": rows}))


if __name__ == "__main__":
    main()
