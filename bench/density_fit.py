"""Density fitting against exact integrals: error of ν, activities and ρ, and the stage times.

For each molecule and method, three whole engine runs from the same start (ASE's geometry;
optimisation, reference SCF/Hessian/α, field route with symmetry, one worker, in this process):

* ``exact``: exact four-centre integrals (the default);
* ``DF``: ``--density-fit`` with PySCF's auxiliary basis for the orbital basis;
* ``DF universal``: ``--density-fit --auxbasis def2-universal-jkfit``.

Each DF run is compared with the exact one band by band (bands grouped by frequency within
1 cm⁻¹ of the exact run, so that degenerate pairs are compared by their summed activity and
mean ρ; bands with ≥ 0.1 % of the strongest activity).  Times are CPU seconds of this
process per stage (``time.perf_counter`` is replaced by ``time.process_time`` so that the
engine's own stage timers count CPU: on 2 cores shared by several users wall time measures the
load, not the method); run with one thread (OMP_NUM_THREADS=1), so CPU ≈ quiet wall time.

    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/density_fit.py --systems water,benzene
    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/density_fit.py --methods b3lyp --systems water

Prints a table and, last, one JSON line with every figure.
"""

from __future__ import annotations

import argparse
import json
import platform
import time

import numpy as np

SYSTEMS = {"water": "H2O", "benzene": "C6H6", "methane": "CH4", "ammonia": "NH3"}
VARIANTS = {
    "exact": {},
    "DF": {"density_fit": True},
    "DF universal": {"density_fit": True, "auxbasis": "def2-universal-jkfit"},
}


def compare(ref, other) -> dict:
    """Largest |Δν| (cm⁻¹), relative activity error and |Δρ| over groups of bands."""
    from vibrapol.ramantable import raman_table

    t_ref, t = raman_table(ref), raman_table(other)
    nu_ref, nu = np.asarray(t_ref.freqs_cm1), np.asarray(t.freqs_cm1)
    groups: list[list[int]] = []
    for k in np.argsort(nu_ref):
        if groups and nu_ref[k] - nu_ref[groups[-1][-1]] < 1.0:
            groups[-1].append(int(k))
        else:
            groups.append([int(k)])
    strongest = float(np.max(t_ref.activity))
    d_act, d_rho = 0.0, 0.0
    for g in groups:
        a_ref, a = float(np.sum(t_ref.activity[g])), float(np.sum(t.activity[g]))
        if a_ref < 1e-3 * strongest:
            continue
        d_act = max(d_act, abs(a / a_ref - 1.0))
        d_rho = max(
            d_rho, abs(float(np.mean(t.rho_linear[g])) - float(np.mean(t_ref.rho_linear[g])))
        )
    return {
        "max_dnu_cm1": float(np.max(np.abs(np.sort(nu) - np.sort(nu_ref)))),
        "max_rel_activity": d_act,
        "max_drho": d_rho,
    }


def run_variant(atoms, method: str, basis: str, options: dict, optimize: bool = True) -> dict:
    from vibrapol.engine.compute import run_engine

    c0 = time.process_time()
    run = run_engine(atoms, method, basis, route="field", workers=1, optimize=optimize, **options)
    return {
        "run": run,
        "seconds": {
            "optimize": run.seconds_optimize,
            "scf": run.seconds_scf,
            "hessian": run.seconds_hessian,
            "alpha": run.seconds_alpha,
            "gradient": run.seconds_gradient,
            "field_tasks": run.tasks.seconds_tasks,
            "wall": run.seconds_wall,
            "cpu": time.process_time() - c0,
        },
        "n_field_tasks": run.tasks.n_tasks,
        "opt_gradients": run.optimization.n_gradients if run.optimization else 0,
    }


def main() -> None:
    from ase.build import molecule

    time.perf_counter = time.process_time  # stage timers count CPU (see the module notes)

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", default="water,benzene")
    parser.add_argument("--methods", default="hf")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--variants", default=",".join(VARIANTS))
    parser.add_argument(
        "--optimize",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="optimise each run with its own integrals (--no-optimize: all at ASE's geometry)",
    )
    args = parser.parse_args()
    rows = []
    for system in args.systems.split(","):
        for method in args.methods.split(","):
            runs = {}
            for name in args.variants.split(","):
                atoms = molecule(SYSTEMS.get(system, system))
                runs[name] = run_variant(atoms, method, args.basis, VARIANTS[name], args.optimize)
                row = {"system": system, "method": method, "basis": args.basis, "variant": name}
                row["optimized"] = args.optimize
                row.update({f"s_{k}": round(v, 2) for k, v in runs[name]["seconds"].items()})
                row["n_field_tasks"] = runs[name]["n_field_tasks"]
                row["opt_gradients"] = runs[name]["opt_gradients"]
                if name != "exact" and "exact" in runs:
                    row.update(compare(runs["exact"]["run"].modes, runs[name]["run"].modes))
                rows.append(row)
                print(json.dumps(row), flush=True)
    keys = ("optimize", "scf", "hessian", "alpha", "gradient", "field_tasks", "wall", "cpu")
    print(f"machine {platform.node()}, {platform.processor() or platform.machine()}")
    head = f"{'system':8} {'method':6} {'variant':13}" + "".join(f"{k:>12}" for k in keys)
    print(head + f"{'max|Δν|':>9}{'ΔS/S':>9}{'Δρ':>9}")
    for r in rows:
        line = f"{r['system']:8} {r['method']:6} {r['variant']:13}"
        line += "".join(f"{r['s_' + k]:>12.2f}" for k in keys)
        if "max_dnu_cm1" in r:
            line += f"{r['max_dnu_cm1']:>9.3f}{r['max_rel_activity']:>9.1e}{r['max_drho']:>9.1e}"
        print(line)
    print(json.dumps({"machine": platform.node(), "rows": rows}))


if __name__ == "__main__":
    main()
