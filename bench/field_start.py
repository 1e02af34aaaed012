"""Start density of the field tasks: D(0) against D(0) + Σ F_a ∂D/∂F_a (and the wrong sign).

For one molecule (ASE's geometry, not optimised: the start matters, not the minimum) the
reference SCF is converged to the field route's tolerance, its CPHF gives α and ∂D/∂F, and
then each field of the field route's C1 plan (or the first ``--fields`` of them) is run with
one thread from three starts:

* ``D0``: the reference density (the engine's start before the response was kept);
* ``D0+F·dD``: the density extrapolated with the CPHF response (the engine's start now);
* ``D0-F·dD``: the same with the opposite sign (the sign check: it should be slower).

It reports SCF cycles (to convergence, and to an orbital gradient of 3e-9, below which the
SCFs wander at their noise floor), task CPU seconds (SCF + gradient, ``time.process_time``)
and the largest gradient difference from the ``D0`` start.

    PYTHONPATH=src python bench/field_start.py --system benzene --method hf --basis 6-31g*
    PYTHONPATH=src python bench/field_start.py --system water --density-fit

Prints a table and, last, one JSON line with every figure.
"""

from __future__ import annotations

import argparse
import json
import platform
import time

import numpy as np

STARTS = ("D0", "D0+F·dD", "D0-F·dD")


def main() -> None:
    from ase.build import molecule
    from pyscf import lib

    from vibrapol.engine.fieldgrad import (
        field_gradient,
        field_scf,
        field_start_density,
        tighten_scf,
    )
    from vibrapol.engine.fieldplan import DEFAULT_FIELD_AU, field_plan
    from vibrapol.engine.polarizability import cphf_polarizability_response
    from vibrapol.engine.scf import MethodSpec, build_molecule, run_scf

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--system", default="benzene", help="ASE molecule name (e.g. C6H6, H2O)")
    parser.add_argument("--method", default="hf")
    parser.add_argument("--basis", default="6-31g*")
    parser.add_argument("--fields", type=int, default=12, help="how many fields of the plan")
    parser.add_argument("--density-fit", action="store_true")
    args = parser.parse_args()
    name = {"benzene": "C6H6", "water": "H2O"}.get(args.system, args.system)
    atoms = molecule(name)
    spec = MethodSpec(args.method, args.basis, density_fit=args.density_fit)
    z, xyz = atoms.get_atomic_numbers(), atoms.get_positions()
    mol = build_molecule(z, xyz, spec)
    lib.num_threads(1)
    mf = tighten_scf(run_scf(mol, spec), spec)
    d0 = np.asarray(mf.make_rdm1())
    _, response = cphf_polarizability_response(mf)
    plan = field_plan(DEFAULT_FIELD_AU, n_atoms=len(z))
    fields = plan.task_fields_au[: args.fields]
    rows = []
    for k, f in enumerate(fields):
        grads = {}
        for start in STARTS:
            sign = {"D0": 0.0, "D0+F·dD": 1.0, "D0-F·dD": -1.0}[start]
            dm0 = field_start_density(d0, sign * response, f) if sign else d0
            c0 = time.process_time()
            norms: list[float] = []
            fmf = field_scf(
                mol, spec, f, dm0=dm0, callback=lambda env, out=norms: out.append(env["norm_gorb"])
            )
            g = field_gradient(fmf, f)
            cpu = time.process_time() - c0
            grads[start] = g
            rows.append(
                {
                    "field": k,
                    "field_au": np.round(f, 6).tolist(),
                    "start": start,
                    "cycles": int(fmf.cycles),
                    "cycles_3e-9": next((i + 1 for i, g in enumerate(norms) if g < 3e-9), -1),
                    "cpu_s": round(cpu, 3),
                    "max_dgrad": float(np.abs(g - grads["D0"]).max()),
                }
            )
    print(f"{spec.label()} {name}, {len(fields)} fields, 1 thread, {platform.node()}")
    print(f"{'field':>5} {'start':>9} {'cycles':>6} {'to 3e-9':>7} {'CPU/s':>7} {'max|Δg|':>9}")
    for r in rows:
        print(
            f"{r['field']:>5} {r['start']:>9} {r['cycles']:>6} {r['cycles_3e-9']:>7} "
            f"{r['cpu_s']:>7.2f} {r['max_dgrad']:>9.1e}"
        )
    summary = {}
    for start in STARTS:
        sel = [r for r in rows if r["start"] == start]
        summary[start] = {
            "mean_cycles": float(np.mean([r["cycles"] for r in sel])),
            "mean_cycles_3e-9": float(np.mean([r["cycles_3e-9"] for r in sel])),
            "cpu_s": float(sum(r["cpu_s"] for r in sel)),
            "max_dgrad": float(max(r["max_dgrad"] for r in sel)),
        }
        s = summary[start]
        print(
            f"{start:>9}: mean cycles {s['mean_cycles']:.1f} (to 3e-9: "
            f"{s['mean_cycles_3e-9']:.1f}), CPU {s['cpu_s']:.1f} s, "
            f"max |Δg| {s['max_dgrad']:.1e} hartree/bohr"
        )
    print(json.dumps({"system": name, "spec": spec.label(), "rows": rows, "summary": summary}))


if __name__ == "__main__":
    main()
