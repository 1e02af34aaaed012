"""Field SCFs: start density D(0) or D(0) + Σ F_a ∂D/∂F_a, PySCF's DIIS or the scaled one.

For one molecule (ASE's geometry, not optimised: the start matters, not the minimum) the
reference SCF is converged to the field route's tolerance, its CPHF gives α and ∂D/∂F, and
then each field of the field route's C1 plan (or the first ``--fields`` of them) is run with
one thread from three starts:

* ``D0``: the reference density (the engine's start before the response was kept);
* ``D0+F·dD``: the density extrapolated with the CPHF response (the engine's start now);
* ``D0-F·dD``: the same with the opposite sign (the sign check: it should be slower);

each with PySCF's DIIS (``pyscf``) and with the scale-invariant one the engine uses now
(``scaled``, :func:`vibrapol.engine.fieldgrad.scaled_cdiis_class`).

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
VARIANTS = [(d, s) for d in ("pyscf", "scaled") for s in STARTS]


def main() -> None:
    from ase.build import molecule
    from pyscf import lib
    from pyscf.scf.diis import CDIIS

    from vibrapol.engine import fieldgrad
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
    scaled = fieldgrad.scaled_cdiis_class
    mf = tighten_scf(run_scf(mol, spec), spec)
    d0 = np.asarray(mf.make_rdm1())
    _, response = cphf_polarizability_response(mf)
    plan = field_plan(DEFAULT_FIELD_AU, n_atoms=len(z))
    fields = plan.task_fields_au[: args.fields]
    rows = []
    for k, f in enumerate(fields):
        reference_gradient = None
        for diis, start in VARIANTS:
            fieldgrad.scaled_cdiis_class = (lambda: CDIIS) if diis == "pyscf" else scaled
            sign = {"D0": 0.0, "D0+F·dD": 1.0, "D0-F·dD": -1.0}[start]
            dm0 = field_start_density(d0, sign * response, f) if sign else d0
            c0 = time.process_time()
            norms: list[float] = []
            fmf = field_scf(
                mol, spec, f, dm0=dm0, callback=lambda env, out=norms: out.append(env["norm_gorb"])
            )
            g = field_gradient(fmf, f)
            cpu = time.process_time() - c0
            if reference_gradient is None:
                reference_gradient = g  # PySCF's DIIS from D0: the engine's earlier setting
            rows.append(
                {
                    "field": k,
                    "field_au": np.round(f, 6).tolist(),
                    "diis": diis,
                    "start": start,
                    "cycles": int(fmf.cycles),
                    "cycles_3e-9": next((i + 1 for i, n in enumerate(norms) if n < 3e-9), -1),
                    "cpu_s": round(cpu, 3),
                    "max_dgrad": float(np.abs(g - reference_gradient).max()),
                }
            )
    fieldgrad.scaled_cdiis_class = scaled
    print(f"{spec.label()} {name}, {len(fields)} fields, 1 thread, {platform.node()}")
    print(
        f"{'field':>5} {'DIIS':>6} {'start':>9} {'cycles':>6} {'to 3e-9':>7} {'CPU/s':>7} "
        f"{'max|Δg|':>9}"
    )
    for r in rows:
        print(
            f"{r['field']:>5} {r['diis']:>6} {r['start']:>9} {r['cycles']:>6} "
            f"{r['cycles_3e-9']:>7} {r['cpu_s']:>7.2f} {r['max_dgrad']:>9.1e}"
        )
    summary = {}
    for diis, start in VARIANTS:
        sel = [r for r in rows if r["start"] == start and r["diis"] == diis]
        summary[f"{diis} {start}"] = s = {
            "mean_cycles": float(np.mean([r["cycles"] for r in sel])),
            "mean_cycles_3e-9": float(np.mean([r["cycles_3e-9"] for r in sel])),
            "cpu_s": float(sum(r["cpu_s"] for r in sel)),
            "max_dgrad": float(max(r["max_dgrad"] for r in sel)),
        }
        print(
            f"{diis:>6} {start:>9}: mean cycles {s['mean_cycles']:.1f} (to 3e-9: "
            f"{s['mean_cycles_3e-9']:.1f}), CPU {s['cpu_s']:.2f} s, "
            f"max |Δg| {s['max_dgrad']:.1e} hartree/bohr"
        )
    print(json.dumps({"system": name, "spec": spec.label(), "rows": rows, "summary": summary}))


if __name__ == "__main__":
    main()
