"""Gas phase against solution, and the cost of the engine's solvent and dispersion models.

Runs one small molecule through ``compute_modes`` in vacuum, in a continuum solvent (IEF-PCM)
and with a dispersion correction, each from the same start geometry (optimised at its own
level), and prints band positions, activities and depolarization ratios of each model, then the
wall time of each run relative to the vacuum run, then one JSON line with every figure.

    PYTHONPATH=src python bench/solvent_models.py                       # water, HF/6-31G*
    PYTHONPATH=src python bench/solvent_models.py --method b3lyp --solvent acetonitrile

Times are wall-clock seconds on this machine; on shared cores they vary from run to run.

Measured 2026-12-05, water HF/6-31G*, one thread, before and after the engine's cached PCM
(vibrapol.engine.pcm_cached; same printed numbers): vacuum 1.6 s / water 33.9 s (21x) before,
vacuum 1.3 s / water 9.4 s (7.4x) after, HF-D3BJ 1.6 s.  Per stage: bench/solvent_cost.py.
"""

from __future__ import annotations

import argparse
import json
import platform
import sys
import time

import numpy as np

# Water near its HF/6-31G* minimum (our own start geometry, Å); optimised by each run.
WATER = (
    np.array([8, 1, 1]),
    np.array([[0.0, 0.0, 0.1173], [0.0, 0.7572, -0.4692], [0.0, -0.7572, -0.4692]]),
)


def _run(method: str, basis: str, **options) -> tuple[dict, float]:
    from vibrapol.engine.compute import compute_modes

    t0 = time.perf_counter()
    modes = compute_modes(WATER, method, basis, route="cartesian", **options)
    seconds = time.perf_counter() - t0
    a2, gamma2 = modes.raman_invariants()
    activity = 45.0 * a2 + 7.0 * gamma2
    rho = 3.0 * gamma2 / (45.0 * a2 + 4.0 * gamma2)
    keep = modes.freqs_cm1 > 10.0
    return {
        "freqs_cm1": np.round(modes.freqs_cm1[keep], 1).tolist(),
        "activity_ang4_da": np.round(activity[keep], 3).tolist(),
        "rho": np.round(rho[keep], 4).tolist(),
        "alpha_iso_ang3": round(float(np.trace(modes.polarizability_ang3)) / 3.0, 4),
    }, seconds


def main(argv: list[str] | None = None) -> int:
    """Run the three models and print the table and the JSON line."""
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--method", default="hf")
    p.add_argument("--basis", default="6-31g*")
    p.add_argument("--solvent", default="water")
    p.add_argument("--dispersion", default="d3bj", help="suffix added to --method")
    args = p.parse_args(argv)
    runs = {
        "vacuum": {},
        f"{args.solvent} (IEF-PCM)": {"solvent": args.solvent},
        f"{args.method}-{args.dispersion}": {"method": f"{args.method}-{args.dispersion}"},
    }
    results, times = {}, {}
    _run("hf", "sto-3g", optimize=False)  # warm-up: imports and first-call costs not timed
    for name, extra in runs.items():
        method = extra.pop("method", args.method)
        results[name], times[name] = _run(method, args.basis, **extra)
        print(f"{name}: {times[name]:.1f} s", file=sys.stderr)
    print(f"water, {args.method.upper()}/{args.basis}, optimised at each level, Cartesian route")
    print("| model | α_iso / Å³ | ν̃ / cm⁻¹ | S / Å⁴ Da⁻¹ | ρ | time / vacuum |")
    print("|---|---:|---|---|---|---:|")
    base = times["vacuum"]
    for name, r in results.items():
        print(
            f"| {name} | {r['alpha_iso_ang3']:.3f} | "
            + ", ".join(f"{v:.1f}" for v in r["freqs_cm1"])
            + " | "
            + ", ".join(f"{v:.2f}" for v in r["activity_ang4_da"])
            + " | "
            + ", ".join(f"{v:.3f}" for v in r["rho"])
            + f" | {times[name] / base:.1f} |"
        )
    record = {
        "bench": "solvent_models",
        "method": args.method,
        "basis": args.basis,
        "results": results,
        "seconds": times,
        "machine": platform.machine(),
    }
    print(json.dumps(record))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
