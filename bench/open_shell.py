"""Cost of an open-shell (UHF/UKS) engine run relative to the closed-shell run of the same atoms.

    PYTHONPATH=src python bench/open_shell.py                 # HF and B3LYP, 6-31G*
    PYTHONPATH=src python bench/open_shell.py --methods hf    # HF only

Each pair keeps the geometry and the basis and changes only the electron count: the methyl
radical CH3 (doublet, UHF/UKS) against the methyl cation CH3+ (singlet, RHF/RKS), and the water
cation H2O+ (doublet) against water.  Both members of a pair run the same route on the same
symmetrized, not optimised, geometry with one worker: the reference stages (SCF, analytic
Hessian, CPHF α, gradient) and the tasks of the Cartesian and field routes.  Geometries are our
own model structures.

Prints a table and, last, one JSON line with every figure.  Wall-clock seconds on this machine;
on shared cores they vary from run to run (±20 %).
"""

from __future__ import annotations

import argparse
import json
import platform
import time
import warnings

import numpy as np

from vibrapol.engine.compute import run_engine
from vibrapol.errors import OpenShellWarning

_S = 1.08 * np.sqrt(3.0) / 2.0
PAIRS = {
    "CH3": (
        np.array([6, 1, 1, 1]),
        np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 1.08], [_S, 0.0, -0.54], [-_S, 0.0, -0.54]]),
        ((1, 1, "CH3+"), (0, 2, "CH3")),
    ),
    "H2O": (
        np.array([8, 1, 1]),
        np.array([[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]]),
        ((0, 1, "H2O"), (1, 2, "H2O+")),
    ),
}


def one_run(z, coords, method, charge, multiplicity, route) -> dict:  # noqa: ANN001
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OpenShellWarning)
        t0 = time.perf_counter()
        run = run_engine(
            (z, coords),
            method,
            "6-31g*",
            charge=charge,
            multiplicity=multiplicity,
            route=route,
            optimize=False,
            workers=1,
        )
        wall = time.perf_counter() - t0
    t = run.tasks
    return {
        "scf_s": run.seconds_scf,
        "hessian_s": run.seconds_hessian,
        "alpha_s": run.seconds_alpha,
        "gradient_s": run.seconds_gradient,
        "tasks": t.n_tasks,
        "wall_s": wall,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--methods", nargs="+", default=["hf", "b3lyp"])
    parser.add_argument("--routes", nargs="+", default=["cartesian", "field"])
    args = parser.parse_args()
    rows = []
    for name, (z, coords, members) in PAIRS.items():
        for method in args.methods:
            for route in args.routes:
                for charge, mult, label in members:
                    r = one_run(z, coords, method, charge, mult, route)
                    rows.append({"pair": name, "species": label, "method": method,
                                 "route": route, "multiplicity": mult, **r})  # fmt: skip
    head = (
        f"{'species':8} {'method':6} {'route':9} {'M':>2} {'SCF/s':>7} {'Hess/s':>7} "
        f"{'alpha/s':>7} {'grad/s':>7} {'tasks':>5} {'wall/s':>7} {'wall/closed':>11}"
    )
    print(head)
    print("-" * len(head))
    for row in rows:
        closed = next(
            r
            for r in rows
            if r["pair"] == row["pair"]
            and r["method"] == row["method"]
            and r["route"] == row["route"]
            and r["multiplicity"] == 1
        )
        row["wall_ratio"] = row["wall_s"] / closed["wall_s"]
        print(
            f"{row['species']:8} {row['method']:6} {row['route']:9} {row['multiplicity']:>2} "
            f"{row['scf_s']:7.2f} {row['hessian_s']:7.2f} {row['alpha_s']:7.2f} "
            f"{row['gradient_s']:7.2f} {row['tasks']:5d} {row['wall_s']:7.2f} "
            f"{row['wall_ratio']:11.2f}"
        )
    print(json.dumps({"bench": "open_shell", "machine": platform.node(), "rows": rows}))


if __name__ == "__main__":
    main()
