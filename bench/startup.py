"""Start-up time of the command line: ``vibrapol --help``, ``vibrapol table --help`` and
``vibrapol table`` on Gaussian outputs, each run as a fresh process several times.

    PYTHONPATH=src python bench/startup.py             # 7 runs per command
    PYTHONPATH=src python bench/startup.py --runs 15

Targets (issue 16): ``--help`` under 0.15 s and ``table`` on a Gaussian output under 0.4 s on a
quiet machine.  Wall times of a shared machine vary with its load, so the best of N (closest to
a quiet machine) and the median are printed with the load average before and after.  Prints a
table and one JSON line.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GAUSSIAN_OUTPUTS = (
    ROOT / "tests" / "fixtures" / "gaussian_hood_raman.log",
    ROOT.parent / "shared" / "qc-outputs" / "Gaussian16-A.03_dvb_raman.out",
)
TARGETS_S = {"--help": 0.15, "table --help": None, "table": 0.4}


def commands() -> list[tuple[str, str, list[str]]]:
    """(label, target key, arguments) of every command timed; absent outputs are skipped."""
    found = [("vibrapol --help", "--help", ["--help"])]
    found.append(("vibrapol table --help", "table --help", ["table", "--help"]))
    for path in GAUSSIAN_OUTPUTS:
        if path.is_file():
            found.append((f"vibrapol table {path.name}", "table", ["table", str(path)]))
    return found


def time_once(args: list[str]) -> float:
    """Wall time of one ``python -m vibrapol ARGS`` in a fresh interpreter (output discarded)."""
    env = {**os.environ, "PYTHONPATH": str(ROOT / "src")}
    start = time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "vibrapol", *args],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        env=env,
        check=True,
    )
    return time.perf_counter() - start


def time_once_python() -> float:
    """Wall time of a bare ``python -c pass``: the floor no command can go below."""
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", "pass"], check=True)
    return time.perf_counter() - start


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7, help="runs per command (default 7)")
    args = parser.parse_args()
    load_before = os.getloadavg()
    baseline = min(time_once_python() for _ in range(max(3, args.runs // 2)))
    rows = []
    for label, key, argv in commands():
        time_once(argv)  # warm the file cache; not counted
        times = [time_once(argv) for _ in range(args.runs)]
        rows.append(
            {
                "command": label,
                "best_s": round(min(times), 3),
                "median_s": round(statistics.median(times), 3),
                "target_s": TARGETS_S[key],
            }
        )
    load_after = os.getloadavg()

    width = max(len(r["command"]) for r in rows)
    print(f"{'command':<{width}}  {'best s':>7}  {'median s':>8}  {'target s':>8}")
    for r in rows:
        target = f"< {r['target_s']}" if r["target_s"] else "-"
        print(f"{r['command']:<{width}}  {r['best_s']:>7.3f}  {r['median_s']:>8.3f}  {target:>8}")
    print(f"python -c pass (interpreter alone): {baseline:.3f} s")
    print(
        f"{args.runs} runs each; load average before {' '.join(f'{v:.2f}' for v in load_before)}, "
        f"after {' '.join(f'{v:.2f}' for v in load_after)} on {os.cpu_count()} cores (shared "
        "machine: the best of N is the figure closest to a quiet machine)"
    )
    print(
        json.dumps(
            {
                "bench": "startup",
                "python": platform.python_version(),
                "cores": os.cpu_count(),
                "runs": args.runs,
                "loadavg_before": [round(v, 2) for v in load_before],
                "loadavg_after": [round(v, 2) for v in load_after],
                "interpreter_s": round(baseline, 3),
                "results": rows,
            }
        )
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
