"""Benchmark of the embedded engine: stage times, QC evaluations, memory, overhead, speed-up.

Each configuration runs in a fresh Python process so that its peak memory is its own.

    PYTHONPATH=src python bench/engine.py                      # water, CCl4; HF; 1 and 2 workers
    PYTHONPATH=src python bench/engine.py --methods hf,b3lyp --systems water
    PYTHONPATH=src python bench/engine.py --compare-routes --systems water,ccl4,benzene

``--compare-routes`` runs every route on each molecule at one optimised, symmetrized
geometry (the reference stage and its Hessian computed once and reused from a checkpoint):
QC evaluations, wall time of the tasks, their ratio to the analytic-Hessian time, and the
accuracy against the symmetry-reduced Cartesian route at h = 0.002 Å (which equals the full
6N route to 1e-6 with HF, tests/test_engine_fast.py and tests/test_symdisplace.py; DFT runs
use the grid-preserving subgroup, docs/engine-routes.md).

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

SYSTEMS = {
    "water": "H2O",
    "ccl4": "CCl4",
    "methane": "CH4",
    "ch2cl2": "CH2Cl2",
    "benzene": "C6H6",
    "naphthalene": "C10H8",
}

#: Route variants of --compare-routes: (name, route, symmetry).
ROUTE_VARIANTS = {
    "cartesian": ("cartesian", True),
    "cartesian-full": ("cartesian", False),
    "normal-mode": ("normal-mode", True),
    "field": ("field", True),
    "field-c1": ("field", False),
    "displacement": ("displacement", True),
    "displacement-c1": ("displacement", False),
    "auto": ("auto", True),
}


def _atoms(system: str):  # noqa: ANN202
    from ase.build import molecule

    if system == "naphthalene":
        from ase import Atoms

        # Planar D2h naphthalene from ideal hexagons (C–C 1.40 Å, C–H 1.09 Å); our own model
        # geometry, optimised by the engine before use.
        c, h = 1.40, 1.09
        s3 = 3**0.5 / 2
        carbons = [
            (0, 0.7),
            (0, -0.7),
            (1.2124, 1.4),
            (1.2124, -1.4),
            (2.4249, 0.7),
            (2.4249, -0.7),
            (-1.2124, 1.4),
            (-1.2124, -1.4),
            (-2.4249, 0.7),
            (-2.4249, -0.7),
        ]
        hyd = [
            (1.2124, 1.4 + h),
            (1.2124, -1.4 - h),
            (2.4249 + h * s3, 0.7 + h / 2),
            (2.4249 + h * s3, -0.7 - h / 2),
            (-1.2124, 1.4 + h),
            (-1.2124, -1.4 - h),
            (-2.4249 - h * s3, 0.7 + h / 2),
            (-2.4249 - h * s3, -0.7 - h / 2),
        ]
        del c
        pos = [(x, y, 0.0) for x, y in carbons + hyd]
        return Atoms("C10H8", positions=pos)
    return molecule(SYSTEMS[system])


def _accuracy(ref_modes, modes) -> tuple[float, float]:
    from vibrapol.ramantable import raman_table

    t_ref, t = raman_table(ref_modes), raman_table(modes)
    seen = t_ref.activity > 1e-3 * t_ref.activity.max()
    act = float((abs(t.activity[seen] / t_ref.activity[seen] - 1.0)).max())
    rho = float((abs(t.rho_linear[seen] - t_ref.rho_linear[seen])).max())
    return act, rho


def compare_routes(system: str, method: str, basis: str, workers: int, variants: list) -> dict:
    import tempfile

    from vibrapol.engine.compute import run_engine

    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        ck = Path(tmp) / "bench.checkpoint.sqlite"
        common = {"workers": workers, "progress": False, "checkpoint": ck}
        ref = run_engine(_atoms(system), method, basis, step_ang=0.002, **common)
        geometry = (ref.modes.atomic_numbers, ref.modes.coordinates_ang)
        by_route = {}
        for name in variants:
            route, symmetry = ROUTE_VARIANTS[name]
            run = run_engine(
                geometry, method, basis, optimize=False, route=route, symmetry=symmetry, **common
            )
            act, rho = _accuracy(ref.modes, run.modes)
            row = {
                "system": system,
                "method": method,
                "basis": basis,
                "variant": name,
                "route": run.route,
                "point_group": run.point_group,
                "n_atoms": int(run.modes.n_atoms),
                "workers": run.workers,
                "qc_evaluations": run.n_qc_evaluations,
                "tasks_computed": run.tasks.n_computed,
                "seconds_tasks_wall": round(run.tasks.seconds_wall, 2),
                "seconds_tasks_sum": round(run.tasks.seconds_tasks, 2),
                "seconds_hessian": round(ref.seconds_hessian, 2),
                "seconds_scf": round(ref.seconds_scf, 2),
                "seconds_alpha": round(ref.seconds_alpha, 3),
                "seconds_gradient": round(ref.seconds_gradient, 3),
                "max_rel_activity_error": act,
                "max_abs_rho_error": rho,
            }
            if name == "auto":
                same = by_route.get((run.route, True))
                row["reason"] = run.route_reason
                if same is not None:  # its tasks came from the checkpoint: use that route's time
                    row["seconds_tasks_wall"] = same["seconds_tasks_wall"]
                    row["seconds_tasks_sum"] = same["seconds_tasks_sum"]
            else:
                by_route[(run.route, symmetry)] = row
            row["ratio_to_hessian"] = round(row["seconds_tasks_wall"] / ref.seconds_hessian, 3)
            rows.append(row)
            print(_route_line(row), file=sys.stderr, flush=True)
    return {"rows": rows}


def _route_line(r: dict) -> str:
    if "error" in r:
        return f"{r['system']:<11} {r['method']:<6} error: {r['error']}"
    return (
        f"{r['system']:<11} {r['method']:<6} {r['variant']:<14} {r['route']:<11} "
        f"{r['point_group']:<4} {r['qc_evaluations']:>4} {r['seconds_tasks_wall']:>8.1f} "
        f"{r['seconds_hessian']:>7.1f} {r['ratio_to_hessian']:>6.2f} "
        f"{r['max_rel_activity_error']:>9.1e} {r['max_abs_rho_error']:>9.1e}"
    )


ROUTE_HEAD = (
    f"{'system':<11} {'method':<6} {'variant':<14} {'route':<11} {'PG':<4} {'QC':>4} "
    f"{'tasks/s':>8} {'Hess/s':>7} {'ratio':>6} {'max dS/S':>9} {'max drho':>9}"
)


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
    parser.add_argument("--compare-routes", action="store_true", help="every route per molecule")
    parser.add_argument(
        "--variants",
        default=",".join(ROUTE_VARIANTS),
        help=f"route variants for --compare-routes ({', '.join(ROUTE_VARIANTS)})",
    )
    args = parser.parse_args()
    if args.compare_routes:
        _main_routes(args)
        return
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


def _main_routes(args: argparse.Namespace) -> None:
    workers = int(args.workers.split(",")[-1])
    variants = args.variants.split(",")
    if args.one:
        system, method, _ = args.one
        result = compare_routes(system, method, args.basis, workers, variants)
        print(json.dumps(result))
        return
    print(ROUTE_HEAD, file=sys.stderr, flush=True)
    rows = []
    for system in args.systems.split(","):
        for method in args.methods.split(","):
            cmd = [
                sys.executable,
                str(Path(__file__).resolve()),
                "--compare-routes",
                "--one",
                system,
                method,
                str(workers),
                "--basis",
                args.basis,
                "--variants",
                args.variants,
                "--workers",
                str(workers),
            ]
            proc = subprocess.run(cmd, capture_output=True, text=True, check=False)
            sys.stderr.write("".join(proc.stderr.splitlines(keepends=True)[-len(variants) :]))
            if proc.returncode != 0:
                tail = proc.stderr.strip().splitlines()[-1:] or ["(no message)"]
                rows.append({"system": system, "method": method, "error": tail[0]})
                continue
            rows += json.loads(proc.stdout.strip().splitlines()[-1])["rows"]
    print(ROUTE_HEAD)
    print("\n".join(_route_line(r) for r in rows))
    machine = {
        "cores": os.cpu_count(),
        "python": platform.python_version(),
        "load_average_1min": os.getloadavg()[0],
    }
    print(json.dumps({"bench": "engine-routes", "machine": machine, "results": rows}))


if __name__ == "__main__":
    main()
