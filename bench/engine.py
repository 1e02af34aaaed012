"""Benchmark of the embedded engine: stage times, QC evaluations, memory, overhead, speed-up.

Each configuration runs in a fresh Python process so that its peak memory is its own.

    PYTHONPATH=src python bench/engine.py                      # water, CCl4; HF; 1 and 2 workers
    PYTHONPATH=src python bench/engine.py --methods hf,b3lyp --systems water

Prints a table and, last, one JSON line with every figure.  Times are wall-clock seconds on
this machine; on shared cores they are contended and vary from run to run.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
from pathlib import Path

SYSTEMS = {"water": "H2O", "ccl4": "CCl4", "methane": "CH4", "ch2cl2": "CH2Cl2"}


def run_one(system: str, method: str, basis: str, workers: int, route: str, optimize: bool) -> dict:
    import tempfile

    from ase.build import molecule

    from vibrapol.engine.compute import run_engine

    with tempfile.TemporaryDirectory() as tmp:  # with a checkpoint, as the command line runs
        run = run_engine(
            molecule(SYSTEMS[system]),
            method,
            basis,
            workers=workers,
            route=route,
            optimize=optimize,
            progress=False,
            checkpoint=Path(tmp) / "bench.checkpoint.sqlite",
        )
    stages = run.seconds_optimize + run.seconds_scf + run.seconds_hessian + run.seconds_alpha
    wall = run.seconds_wall
    t = run.tasks
    # Time in PySCF calls as seen from this process: the single-shot stages plus, for the
    # displacements, the tasks' own times (serial) or the stage's wall time (parallel, where
    # the tasks overlap).  What remains is vibrapol's own work: setup, hashing, the checkpoint
    # writes, harmonic analysis, pool start-up and result transport.
    in_pyscf = stages + (t.seconds_tasks if run.workers == 1 else t.seconds_wall)
    self_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {
        "system": system,
        "method": method,
        "basis": basis,
        "route": route,
        "workers": run.workers,
        "backend": run.backend,
        "n_atoms": int(run.modes.n_atoms),
        "optimize_steps": None if run.optimization is None else run.optimization.n_steps,
        "optimize_gradients": None if run.optimization is None else run.optimization.n_gradients,
        "qc_evaluations": run.n_qc_evaluations,
        "seconds_optimize": round(run.seconds_optimize, 2),
        "seconds_scf": round(run.seconds_scf, 2),
        "seconds_hessian": round(run.seconds_hessian, 2),
        "seconds_alpha": round(run.seconds_alpha, 3),
        "seconds_displacements": round(t.seconds_wall, 2),
        "seconds_tasks_sum": round(t.seconds_tasks, 2),
        "seconds_wall": round(wall, 2),
        "overhead_fraction": round(max(0.0, wall - in_pyscf) / wall, 4),
        "peak_mb_main": round(self_kb / 1024, 1),
        "peak_mb_worker": round(t.peak_mb_worker, 1),
    }


def _child(args: argparse.Namespace, system: str, method: str, workers: int) -> dict:
    cmd = [
        sys.executable,
        str(Path(__file__).resolve()),
        "--one",
        system,
        method,
        str(workers),
        "--basis",
        args.basis,
        "--route",
        args.route,
    ]
    if not args.optimize:
        cmd.append("--no-optimize")
    proc = subprocess.run(cmd, capture_output=True, text=True, check=False)
    if proc.returncode != 0:
        tail = proc.stderr.strip().splitlines()[-1:] or ["(no message)"]
        return {"system": system, "method": method, "workers": workers, "error": tail[0]}
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _table(rows: list[dict]) -> str:
    head = (
        f"{'system':<7} {'method':<6} {'basis':<7} {'route':<11} {'wk':>2} {'QC':>4} "
        f"{'opt/s':>6} {'SCF/s':>6} {'Hess/s':>7} {'disp/s':>7} {'wall/s':>7} {'ovh%':>5} "
        f"{'MB main':>8} {'MB wkr':>7}"
    )
    lines = [head, "-" * len(head)]
    for r in rows:
        if "error" in r:
            lines.append(
                f"{r['system']:<7} {r['method']:<6} workers={r['workers']}: error: {r['error']}"
            )
            continue
        lines.append(
            f"{r['system']:<7} {r['method']:<6} {r['basis']:<7} {r['route']:<11} {r['workers']:>2} "
            f"{r['qc_evaluations']:>4} {r['seconds_optimize']:>6.1f} {r['seconds_scf']:>6.2f} "
            f"{r['seconds_hessian']:>7.1f} {r['seconds_displacements']:>7.1f} "
            f"{r['seconds_wall']:>7.1f} {100 * r['overhead_fraction']:>5.1f} "
            f"{r['peak_mb_main']:>8.0f} {r['peak_mb_worker']:>7.0f}"
        )
    return "\n".join(lines)


def _speedups(rows: list[dict]) -> list[dict]:
    out = []
    ok = [r for r in rows if "error" not in r]
    for r in ok:
        if r["workers"] == 1:
            for q in ok:
                same = all(q[k] == r[k] for k in ("system", "method", "basis", "route"))
                if same and q["workers"] > 1:
                    out.append(
                        {
                            "system": r["system"],
                            "method": r["method"],
                            "workers": q["workers"],
                            "speedup_wall": round(r["seconds_wall"] / q["seconds_wall"], 2),
                            "speedup_displacements": round(
                                r["seconds_displacements"] / q["seconds_displacements"], 2
                            ),
                        }
                    )
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", default="water,ccl4")
    parser.add_argument("--methods", default="hf")
    parser.add_argument("--workers", default="1,2")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--route", default="cartesian", choices=("cartesian", "normal-mode"))
    parser.add_argument("--optimize", action=argparse.BooleanOptionalAction, default=True)
    parser.add_argument(
        "--one", nargs=3, metavar=("SYSTEM", "METHOD", "WORKERS"), help=argparse.SUPPRESS
    )
    args = parser.parse_args()
    if args.one:
        system, method, workers = args.one
        print(
            json.dumps(run_one(system, method, args.basis, int(workers), args.route, args.optimize))
        )
        return
    rows = []
    for system in args.systems.split(","):
        for method in args.methods.split(","):
            for workers in (int(w) for w in args.workers.split(",")):
                rows.append(_child(args, system, method, workers))
                print(_table(rows[-1:]).splitlines()[-1], file=sys.stderr, flush=True)
    print(_table(rows))
    speedups = _speedups(rows)
    for s in speedups:
        print(
            f"speed-up {s['system']} {s['method']} with {s['workers']} workers: "
            f"{s['speedup_wall']}x wall, {s['speedup_displacements']}x displacements"
        )
    machine = {
        "cores": os.cpu_count(),
        "python": platform.python_version(),
        "platform": platform.platform(),
    }
    try:
        import pyscf

        machine["pyscf"] = pyscf.__version__
    except ImportError:  # pragma: no cover
        pass
    print(
        json.dumps({"bench": "engine", "machine": machine, "results": rows, "speedups": speedups})
    )


if __name__ == "__main__":
    main()
