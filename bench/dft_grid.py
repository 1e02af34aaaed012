"""DFT integration grid level per stage: error against a fine grid and CPU per stage.

PySCF's ``grids.level`` (0–9, default 3) sets the radial and angular points of the Becke
grid.  For one molecule at one functional, three series against the reference, every stage at
``--ref-level`` (default 7):

* ``all``: every stage (optimisation, reference SCF/Hessian/α, field tasks) at level L;
* ``opt``: the optimisation at level L, the rest at the engine's level 3 (what a cheaper
  optimisation grid would give);
* ``hess+field``: the optimisation at level 3, the Hessian, α and field tasks at level L
  (at the level-3 geometry).

Errors: largest |Δν| (cm⁻¹), relative activity error and |Δρ| over groups of bands (as in
``bench/density_fit.py``), and the SCF energy difference.  Times are CPU seconds of this
process per stage (``time.perf_counter`` replaced by ``time.process_time``; run with
OMP_NUM_THREADS=1).

    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/dft_grid.py --system water --levels 1,2,3,4,5

Prints a table and, last, one JSON line with every figure.
"""

from __future__ import annotations

import argparse
import json
import platform
import time

ENGINE_LEVEL = 3


def main() -> None:
    time.perf_counter = time.process_time  # before the engine's modules bind it (see above)
    from ase.build import molecule
    from bench_density_fit import compare  # noqa: I001 - sibling script (see __main__ below)
    from pyscf.dft import gen_grid

    from vibrapol.engine.compute import run_engine
    from vibrapol.engine.optimize import optimize_geometry
    from vibrapol.engine.scf import EngineConvergenceError, MethodSpec

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--system", default="H2O", help="ASE molecule name")
    parser.add_argument("--method", default="b3lyp")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--levels", default="1,2,3,4,5")
    parser.add_argument("--ref-level", type=int, default=7)
    parser.add_argument("--series", default="all,opt,hess+field")
    args = parser.parse_args()
    start = molecule(args.system)
    spec = MethodSpec(args.method, args.basis)

    def at_level(level: int):  # noqa: ANN202
        gen_grid.Grids.level = level  # class default: every SCF of this process
        return level

    def engine(coords, optimize: bool, level: int):  # noqa: ANN001, ANN202
        at_level(level)
        c0 = time.process_time()
        run = run_engine(
            (start.numbers, coords), args.method, args.basis, route="field", optimize=optimize
        )
        return run, time.process_time() - c0

    def optimised(level: int):  # noqa: ANN202
        at_level(level)
        c0 = time.process_time()
        opt = optimize_geometry(start.numbers, start.positions, spec)
        return opt, time.process_time() - c0

    ref, _ = engine(start.positions, True, args.ref_level)
    opt3, _ = optimised(ENGINE_LEVEL)
    rows, failed = [], []
    for series in args.series.split(","):
        for level in (int(v) for v in args.levels.split(",")):
            try:
                if series == "all":
                    run, cpu = engine(start.positions, True, level)
                elif series == "opt":
                    opt, cpu_opt = optimised(level)
                    run, cpu = engine(opt.coordinates_ang, False, ENGINE_LEVEL)
                    cpu += cpu_opt
                else:
                    run, cpu = engine(opt3.coordinates_ang, False, level)
            except EngineConvergenceError as exc:
                print(json.dumps({"series": series, "level": level, "failed": str(exc)}))
                failed.append(f"{series} level {level}: {exc}")
                continue
            row = {"series": series, "level": level, "cpu_s": round(cpu, 2)}
            row.update(
                {
                    "s_optimize": round(run.seconds_optimize, 2),
                    "s_scf": round(run.seconds_scf, 2),
                    "s_hessian": round(run.seconds_hessian, 2),
                    "s_alpha": round(run.seconds_alpha, 2),
                    "s_field_tasks": round(run.tasks.seconds_tasks, 2),
                    "dE_hartree": run.modes.energy_hartree - ref.modes.energy_hartree,
                }
            )
            if series == "opt":
                row["s_optimize"] = round(cpu_opt, 2)
            row.update(compare(ref.modes, run.modes))
            rows.append(row)
            print(json.dumps(row), flush=True)
    print(f"{spec.label()} {args.system}; reference: all stages at level {args.ref_level}")
    print(
        f"{'series':11}{'level':>6}{'opt':>8}{'SCF':>8}{'Hess':>8}{'alpha':>8}{'field':>8}"
        f"{'ΔE/Eh':>10}{'max|Δν|':>9}{'ΔS/S':>9}{'Δρ':>9}"
    )
    for r in rows:
        print(
            f"{r['series']:11}{r['level']:>6}{r['s_optimize']:>8.2f}{r['s_scf']:>8.2f}"
            f"{r['s_hessian']:>8.2f}{r['s_alpha']:>8.2f}{r['s_field_tasks']:>8.2f}"
            f"{r['dE_hartree']:>10.1e}{r['max_dnu_cm1']:>9.3f}{r['max_rel_activity']:>9.1e}"
            f"{r['max_drho']:>9.1e}"
        )
    for line in failed:
        print("failed:", line)
    print(
        json.dumps(
            {"machine": platform.node(), "spec": spec.label(), "rows": rows, "failed": failed}
        )
    )


if __name__ == "__main__":
    import importlib.util
    import sys
    from pathlib import Path

    here = Path(__file__).with_name("density_fit.py")
    loader = importlib.util.spec_from_file_location("bench_density_fit", here)
    assert loader is not None and loader.loader is not None
    sys.modules["bench_density_fit"] = module = importlib.util.module_from_spec(loader)
    loader.loader.exec_module(module)
    main()
