"""Where a solvated run spends its time: each engine stage in vacuum and in a continuum.

Times the stages of the reference geometry (SCF, gradient, analytic Hessian, coupled-perturbed
α with the optical response) of small molecules in three models: vacuum, PySCF's IEF-PCM as
it ships (``mf.PCM()``), and the engine's :class:`vibrapol.engine.pcm_cached.CachedPCM`; checks
that the two continuum objects give the same numbers; prints a table and one JSON line.

    PYTHONPATH=src OMP_NUM_THREADS=1 python bench/solvent_cost.py            # HF/6-31G*
    PYTHONPATH=src OMP_NUM_THREADS=1 python bench/solvent_cost.py --basis sto-3g

Times are wall-clock seconds (best of ``--repeat``) on this machine; on shared cores they vary.
"""

from __future__ import annotations

import argparse
import json
import platform
import time

import numpy as np

# Our own start geometries (Å), not optimised: the stages' cost does not depend on it.
MOLECULES = {
    "water": (
        [8, 1, 1],
        [[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]],
    ),
    "ethylene": (
        [6, 6, 1, 1, 1, 1],
        [
            [0.0, 0.0, 0.667],
            [0.0, 0.0, -0.667],
            [0.0, 0.923, 1.238],
            [0.0, -0.923, 1.238],
            [0.0, 0.923, -1.238],
            [0.0, -0.923, -1.238],
        ],
    ),
}


def _scf(name: str, model: str, method: str, basis: str):  # noqa: ANN202
    from vibrapol.engine.scf import MethodSpec, build_molecule, build_scf
    from vibrapol.engine.solvent import PCM_METHOD, solvent_model

    z, xyz = MOLECULES[name]
    solvent = None if model == "vacuum" else solvent_model("water")
    gas = MethodSpec(method, basis)
    mol = build_molecule(np.array(z), np.array(xyz), gas)
    if model == "cached":
        return build_scf(mol, MethodSpec(method, basis, solvent=solvent))
    mf = build_scf(mol, gas)
    if model == "pyscf":  # PySCF's PCM as it ships, set up as the engine sets up its own
        mf = mf.PCM()
        mf.with_solvent.method = PCM_METHOD
        mf.with_solvent.eps = solvent.epsilon
        mf.with_solvent.verbose = 0
        mf.with_solvent._vibrapol_eps_optical = solvent.epsilon_optical
    return mf


def _stages(name: str, model: str, method: str, basis: str) -> tuple[dict, dict]:
    import pyscf.grad  # noqa: F401  (registers Gradients)
    import pyscf.hessian  # noqa: F401  (registers Hessian)

    from vibrapol.engine.polarizability import cphf_polarizability
    from vibrapol.engine.scf import converge

    seconds, values = {}, {}
    t0 = time.perf_counter()
    mf = converge(_scf(name, model, method, basis))
    seconds["scf"] = time.perf_counter() - t0
    values["energy"] = mf.e_tot
    steps = {
        "gradient": lambda: mf.Gradients().kernel(),
        "hessian": lambda: mf.Hessian().kernel(),
        "alpha": lambda: cphf_polarizability(mf),
    }
    for stage, run in steps.items():
        t0 = time.perf_counter()
        values[stage] = run()
        seconds[stage] = time.perf_counter() - t0
    return seconds, values


def main(argv: list[str] | None = None) -> int:
    """Time every stage of every molecule and model; print the table and the JSON line."""
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--method", default="hf")
    p.add_argument("--basis", default="6-31g*")
    p.add_argument("--molecules", default="water,ethylene")
    p.add_argument("--repeat", type=int, default=2)
    args = p.parse_args(argv)
    _stages("water", "cached", "hf", "sto-3g")  # warm-up: imports and first-call costs
    models = ("vacuum", "pyscf", "cached")
    record = {"bench": "solvent_cost", "method": args.method, "basis": args.basis}
    print(f"{args.method.upper()}/{args.basis}, water (IEF-PCM) against vacuum; seconds")
    print("| molecule | stage | vacuum | PySCF PCM | cached PCM | PySCF/vac | cached/vac |")
    print("|---|---|---:|---:|---:|---:|---:|")
    for name in args.molecules.split(","):
        best: dict[str, dict] = {}
        values: dict[str, dict] = {}
        for model in models:
            for _ in range(args.repeat):
                s, values[model] = _stages(name, model, args.method, args.basis)
                old = best.get(model, s)
                best[model] = {k: min(s[k], old[k]) for k in s}
        diff = {
            k: float(np.max(np.abs(np.asarray(values["pyscf"][k]) - values["cached"][k])))
            for k in values["cached"]
        }
        for stage in ("scf", "gradient", "hessian", "alpha"):
            v, py, ca = (best[m][stage] for m in models)
            print(
                f"| {name} | {stage} | {v:.2f} | {py:.2f} | {ca:.2f} "
                f"| {py / v:.1f} | {ca / v:.1f} |"
            )
        record[name] = {"seconds": best, "max_abs_difference_pyscf_cached": diff}
    record["machine"] = platform.machine()
    print(json.dumps(record))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
