"""Analytic-Hessian cost over the reference stage's measured times (the ``auto`` route model).

``--route auto`` must know what the analytic Hessian will cost before computing it, since the
displacement route does without it.  This script runs the reference stage (tight SCF, CPHF α,
analytic gradient, all threads) and the analytic Hessian on a few molecules of different
sizes at HF and B3LYP, and prints the ratio

    T_hessian / (T_scf + T_alpha + T_gradient)

against the number of atoms; :data:`vibrapol.engine.disproute.HESSIAN_FACTOR_PER_ATOM` is
taken from it.  Geometries: ASE's molecule database (not optimised; the cost does not depend
on it).

    PYTHONPATH=src python bench/hessian_cost.py --systems H2O,CH3OH,CH3CH2OH --methods hf,b3lyp

Prints a table and, last, one JSON line.  Times are wall-clock seconds on this machine; on
shared cores they are contended and vary from run to run.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
from time import perf_counter


def _measure(system: str, method: str, basis: str) -> dict:
    from ase.build import molecule

    from vibrapol.engine.scf import MethodSpec
    from vibrapol.engine.stages import HessianJob, ScfJob

    atoms = molecule(system)
    z, xyz = atoms.get_atomic_numbers(), atoms.get_positions()
    spec = MethodSpec(method, basis)
    scf = ScfJob(z, xyz, spec).run()  # the engine's reference stage
    ref = scf.reference
    t0 = perf_counter()
    HessianJob.after(scf, z, xyz, spec).run()  # and its Hessian stage
    hessian = perf_counter() - t0
    point = ref.seconds_scf + ref.seconds_alpha + ref.seconds_gradient
    return {
        "system": system,
        "n_atoms": len(z),
        "method": method,
        "basis": basis,
        "seconds_scf": round(ref.seconds_scf, 3),
        "seconds_alpha": round(ref.seconds_alpha, 3),
        "seconds_gradient": round(ref.seconds_gradient, 3),
        "seconds_hessian": round(hessian, 3),
        "ratio": round(hessian / point, 2),
        "ratio_per_atom": round(hessian / point / len(z), 3),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--systems", default="H2O,CH3OH,CH3CH2OH")
    parser.add_argument("--methods", default="hf,b3lyp")
    parser.add_argument("--basis", default="6-31g*")
    args = parser.parse_args()
    rows = []
    print(
        f"{'system':<10} {'N':>3} {'method':<6} {'SCF':>7} {'α':>7} {'grad':>7} "
        f"{'Hessian':>8} {'ratio':>6} {'/atom':>6}"
    )
    for method in args.methods.split(","):
        for system in args.systems.split(","):
            r = _measure(system, method, args.basis)
            rows.append(r)
            print(
                f"{r['system']:<10} {r['n_atoms']:>3} {r['method']:<6} {r['seconds_scf']:>7.2f} "
                f"{r['seconds_alpha']:>7.2f} {r['seconds_gradient']:>7.2f} "
                f"{r['seconds_hessian']:>8.2f} {r['ratio']:>6.1f} {r['ratio_per_atom']:>6.2f}",
                flush=True,
            )
    machine = {"platform": platform.platform(), "cores": os.cpu_count()}
    print(json.dumps({"bench": "hessian_cost", "machine": machine, "results": rows}))


if __name__ == "__main__":
    main()
