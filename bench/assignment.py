"""Benchmark of the assignment: speed, growth with size, robustness, and the cost weights.

    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/assignment.py            # everything
    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/assignment.py --quick    # fewer realizations

1. Speed: invented problems of n computed bands against n/2 measured bands (n = 100 … 1000),
   including the joint scale search, the per-band confidences and the spectral similarity;
   median of ``--repeats`` runs, and the growth exponent of time against n.
2. Robustness: CHCl3 computed with the engine (HF/6-31G*, and HF/3-21G as a harder case)
   against invented VV/VH pairs built from the published fundamentals (tests/compare_helpers.py),
   each with noise, a sloping baseline, spikes, one band missing and one extra band, run
   through the whole measured chain (spikes, baseline, band fit, ρ) and the assignment.
3. Weights: the robustness rate when each default weight or width is switched off, halved or
   doubled (same realizations), which is the evidence for the defaults.

Prints tables and, last, one JSON line with every figure.  Times are wall-clock seconds on
this machine; on shared cores they vary from run to run.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from compare_helpers import (  # noqa: E402
    FIXTURES,
    clean_measured,
    random_problem,
    random_realization,
    realization_correct,
)
from vibrapol.compare import DEFAULT_MODEL, assign, candidate_from_modes  # noqa: E402
from vibrapol.sources import read_modes  # noqa: E402

LEVELS = {"HF/6-31G*": "chcl3_hf_631gd", "HF/3-21G": "chcl3_hf_321g"}


def speed(sizes: list[int], repeats: int) -> list[dict]:
    rows = []
    for n in sizes:
        rng = np.random.default_rng(n)
        sticks, bands, truth = random_problem(n, n // 2, rng)
        times = []
        for _ in range(repeats):
            t = time.perf_counter()
            result = assign(sticks, bands)
            times.append(time.perf_counter() - t)
        got = np.array([b.stick for b in result.bands])
        t0 = time.perf_counter()
        assign(sticks, bands, confidence=False, similarity=False)
        t_core = time.perf_counter() - t0
        rows.append(
            {
                "n_modes": n,
                "n_bands": n // 2,
                "seconds": float(np.median(times)),
                "seconds_without_confidence_similarity": t_core,
                "factor": result.scale.factor,
                "true_pairs_recovered": float(np.mean(got[truth >= 0] == truth[truth >= 0])),
                "extra_left_unassigned": float(np.mean(got[truth < 0] == -1)),
            }
        )
    return rows


def realizations(n: int, seed: int) -> list:
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n):
        real = random_realization(rng)
        pair, bands = clean_measured(real.pair)
        out.append((real, pair, bands))
    return out


def rate(candidate, reals, model) -> float:
    ok = 0
    for real, pair, bands in reals:
        result = assign(candidate, bands, pair=pair, model=model, similarity=False)
        ok += realization_correct(result, real)
    return ok / len(reals)


def dense_rate(model, seeds=range(5)) -> float:
    """Share of true pairs recovered on invented dense problems (200 computed, 100 measured)."""
    got = []
    for seed in seeds:
        sticks, bands, truth = random_problem(200, 100, np.random.default_rng(1000 + seed))
        res = assign(sticks, bands, model=model, confidence=False, similarity=False)
        picked = np.array([b.stick for b in res.bands])
        got.append(np.mean(picked[truth >= 0] == truth[truth >= 0]))
    return float(np.mean(got))


def variants() -> list[tuple[str, object]]:
    d = DEFAULT_MODEL
    r = dataclasses.replace
    out: list[tuple[str, object]] = [("defaults", d)]
    out += [
        ("intensity weight 0", r(d, weight_intensity=0.0)),
        ("intensity weight x0.5", r(d, weight_intensity=0.5)),
        ("intensity weight x2", r(d, weight_intensity=2.0)),
        ("polarization weight 0", r(d, weight_polarization=0.0)),
        ("polarization weight x0.5", r(d, weight_polarization=0.5)),
        ("polarization weight x2", r(d, weight_polarization=2.0)),
        ("position sigma x0.5", r(d, sigma_cm1=d.sigma_cm1 / 2, sigma_rel=d.sigma_rel / 2)),
        ("position sigma x2", r(d, sigma_cm1=d.sigma_cm1 * 2, sigma_rel=d.sigma_rel * 2)),
        ("position sigma_rel 0.03", r(d, sigma_rel=0.03)),
        ("unassigned costs x0.5", r(d, unassigned_band=4.5, unassigned_mode=4.5)),
        ("unassigned costs x2", r(d, unassigned_band=18.0, unassigned_mode=18.0)),
        ("position only", r(d, weight_intensity=0.0, weight_polarization=0.0)),
    ]
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--realizations", type=int, default=100)
    parser.add_argument("--sizes", default="100,200,500,1000")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--seed", type=int, default=2024)
    parser.add_argument("--quick", action="store_true", help="20 realizations, no weight study")
    args = parser.parse_args()
    n_real = 20 if args.quick else args.realizations

    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores visible, "
        f"OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS', 'unset')}"
    )
    print("\n1. speed (assign incl. scale search, confidences, similarity)")
    rows = speed([int(s) for s in args.sizes.split(",")], args.repeats)
    print(
        f"{'modes':>6} {'bands':>6} {'time/s':>8} {'core/s':>8} {'factor':>7} "
        f"{'pairs ok':>9} {'extra ok':>9}"
    )
    for r in rows:
        print(
            f"{r['n_modes']:>6} {r['n_bands']:>6} {r['seconds']:>8.3f} "
            f"{r['seconds_without_confidence_similarity']:>8.3f} {r['factor']:>7.4f} "
            f"{r['true_pairs_recovered']:>9.3f} {r['extra_left_unassigned']:>9.3f}"
        )
    n = np.array([r["n_modes"] for r in rows], float)
    t = np.array([r["seconds"] for r in rows], float)
    growth = float(np.polyfit(np.log(n), np.log(t), 1)[0]) if len(rows) > 1 else float("nan")
    print(f"growth: time ∝ n^{growth:.2f} from {int(n[0])} to {int(n[-1])} modes")

    print(f"\n2. robustness over {n_real} invented realizations (CHCl3)")
    reals = realizations(n_real, args.seed)
    robustness = {}
    candidates = {}
    for level, name in LEVELS.items():
        path = FIXTURES / f"{name}.modes.json"
        if not path.is_file():
            print(f"{level}: fixture {path.name} missing, skipped")
            continue
        candidates[level] = candidate_from_modes(read_modes(path), label=f"CHCl3 {level}")
        robustness[level] = rate(candidates[level], reals, DEFAULT_MODEL)
        print(
            f"{level:>10}: correct in {robustness[level] * n_real:.0f} of {n_real} "
            f"({robustness[level]:.0%})"
        )

    study: dict[str, dict[str, float]] = {}
    if not args.quick:
        print("\n3. robustness rate by cost model (same realizations)")
        print("(CHCl3 columns: share of realizations assigned exactly right; dense: share of")
        print(" true pairs recovered on invented 200 x 100 problems, 5 seeds)")
        print(f"{'model':<28}" + "".join(f"{lv:>12}" for lv in candidates) + f"{'dense':>12}")
        for name, model in variants():
            study[name] = {lv: rate(c, reals, model) for lv, c in candidates.items()}
            study[name]["dense"] = dense_rate(model)
            cols = [*candidates, "dense"]
            print(f"{name:<28}" + "".join(f"{study[name][lv]:>12.2f}" for lv in cols))

    print(json.dumps({
        "benchmark": "assignment",
        "omp_num_threads": os.environ.get("OMP_NUM_THREADS"),
        "speed": rows,
        "growth_exponent": growth,
        "realizations": n_real,
        "robustness": robustness,
        "weight_study": study,
    }))  # fmt: skip


if __name__ == "__main__":
    main()
