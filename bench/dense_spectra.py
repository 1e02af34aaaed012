"""Benchmark of ``vibrapol match`` on dense measured VV/VH pairs: time and memory against points.

    PYTHONPATH=src python bench/dense_spectra.py                      # all sizes, both families
    PYTHONPATH=src python bench/dense_spectra.py --sizes 3000 100000 --family resampled

Two families of invented VV/VH pairs (INVENTED data, not measurements), each written as a
three-column text file and matched against examples/solvent-check/dichloromethane.modes.json
by the real command line, one fresh process per run:

``resampled``
    the bundled invented dichloromethane spectrum (3,150 points, 1 cm⁻¹ apart) linearly
    interpolated onto N evenly spaced points, as exports of stitched spectra are: the noise
    becomes correlated over several points;
``synthetic``
    the same invented bands, baseline and spike built afresh on N points by
    vibrapol.measured.synthetic with white noise of the same standard deviation per point.

For each run: wall time, peak resident memory of the process (``os.wait4``), the exit status,
and whether the assignment (which computed band each measured band got) and the measured ρ
agree with the run of the same family at the smallest size (largest |Δρ| among the bands
matched by position within 2 cm⁻¹).  Prints a table and, last, one JSON line.  Times are
wall-clock seconds on this machine; on shared cores they vary from run to run.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
BUNDLED = ROOT / "src" / "vibrapol" / "data" / "dichloromethane_liquid_vv_vh_INVENTED.txt"
MODES = ROOT / "examples" / "solvent-check" / "dichloromethane.modes.json"
SIZES = (3_000, 10_000, 31_748, 100_000, 1_000_000)
HEADER = "# INVENTED DATA - NOT A MEASUREMENT (bench/dense_spectra.py, {family}, {n} points)\n"


def resampled(n: int) -> np.ndarray:
    """Bundled invented pair linearly interpolated onto n points: columns x, VV, VH."""
    d = np.loadtxt(BUNDLED, comments="#", skiprows=10)
    x = np.linspace(d[0, 0], d[-1, 0], n)
    return np.column_stack([x, np.interp(x, d[:, 0], d[:, 1]), np.interp(x, d[:, 0], d[:, 2])])


def synthetic(n: int) -> np.ndarray:
    """The bundled pair's invented bands made afresh on n points (white noise)."""
    sys.path.insert(0, str(ROOT / "examples" / "solvent-check"))
    import make_demo_data as demo

    demo.AXIS_CM1 = np.linspace(150.0, 3299.0, n)
    pair = demo.invented_pair()
    return np.column_stack([pair.vv.shift_cm1, pair.vv.intensity, pair.vh.intensity])


def write(table: np.ndarray, path: Path, family: str) -> None:
    with path.open("w", encoding="utf-8") as f:
        f.write(HEADER.format(family=family, n=len(table)))
        f.write("shift_cm1 VV VH\n")
        np.savetxt(f, table, fmt=["%.5f", "%.6f", "%.6f"])


def run_match_rusage(path: Path, out: Path, timeout: float) -> dict:
    """Run ``vibrapol match`` in a fresh process: wall time, its own peak RSS (``os.wait4``)."""
    cmd = [sys.executable, "-m", "vibrapol", "match", str(MODES), "--vv", str(path)]
    cmd += ["-o", str(out), "--force"]
    t0 = time.perf_counter()
    with tempfile.TemporaryFile() as err:
        proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=err)
        deadline = t0 + timeout
        while True:
            pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
            if pid:
                break
            if time.perf_counter() > deadline:
                proc.kill()
                _, _, usage = os.wait4(proc.pid, 0)
                return {
                    "seconds": None,
                    "peak_mb": usage.ru_maxrss / 1024.0,  # kB on Linux: peak until stopped
                    "status": f"stopped after {timeout:g} s",
                }
            time.sleep(0.05)
        seconds = time.perf_counter() - t0
        code = os.waitstatus_to_exitcode(status)
        err.seek(0)
        lines = err.read().decode("utf-8", "replace").strip().splitlines()
    return {
        "seconds": seconds,
        "peak_mb": usage.ru_maxrss / 1024.0,  # kB on Linux
        "status": "ok" if code == 0 else f"exit {code}",
        "stderr_last": lines[-1] if lines else "",
    }


def assignment(out: Path) -> list[tuple[float, float, float, str]]:
    """(band_cm1, band_rho, band_rho_err, mode) per row of an assignment CSV."""
    text = out.read_text(encoding="utf-8")
    rows = csv.DictReader(io.StringIO("".join(ln for ln in text.splitlines(True) if ln[0] != "#")))
    return [
        (float(r["band_cm1"]), float(r["band_rho"] or "nan"), float(r["band_rho_err"] or "nan"),
         r["mode"])
        for r in rows
    ]  # fmt: skip


def compare(ref: list, got: list) -> tuple[bool, float, float]:
    """Same modes for the bands matched by position; largest |Δρ| and |Δρ|/σ among them.

    σ = √(σ₁² + σ₂²) from the two runs' standard errors (independent noise in the
    ``synthetic`` family; in the ``resampled`` family the noise is the same, so |Δρ| ≪ σ).
    """
    same, worst, worst_z = len(ref) == len(got), 0.0, 0.0
    for pos, rho, err, mode in ref:
        near = [g for g in got if abs(g[0] - pos) < 2.0]
        if not near:
            same = False
            continue
        g = min(near, key=lambda g: abs(g[0] - pos))
        same &= g[3] == mode
        if np.isfinite(rho) and np.isfinite(g[1]):
            worst = max(worst, abs(g[1] - rho))
            worst_z = max(worst_z, abs(g[1] - rho) / float(np.hypot(err, g[2])))
    return same, worst, worst_z


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=list(SIZES))
    parser.add_argument("--family", choices=("resampled", "synthetic", "both"), default="both")
    parser.add_argument("--timeout", type=float, default=600.0, help="seconds per run")
    args = parser.parse_args()
    families = ("resampled", "synthetic") if args.family == "both" else (args.family,)
    build = {"resampled": resampled, "synthetic": synthetic}
    rows = []
    print("command: vibrapol match dichloromethane.modes.json --vv FILE -o OUT.csv --force")
    with tempfile.TemporaryDirectory() as tmp:
        for family in families:
            ref = None
            for n in sorted(args.sizes):
                path, out = Path(tmp) / f"{family}_{n}.txt", Path(tmp) / f"{family}_{n}.csv"
                write(build[family](n), path, family)
                load = os.getloadavg()[0]
                row = {"family": family, "points": n, "load_before": load}
                row.update(run_match_rusage(path, out, args.timeout))
                if row["status"] == "ok":
                    got = assignment(out)
                    ref = ref or got
                    same, dr, dz = compare(ref, got)
                    row.update(same_assignment=same, max_abs_delta_rho=dr, max_delta_rho_sigma=dz)
                rows.append(row)
                print(_line(row), flush=True)
    print()
    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores visible, load average "
        f"{' '.join(f'{v:.2f}' for v in os.getloadavg())} (shared), python "
        f"{platform.python_version()}"
    )
    print(json.dumps({"bench": "dense_spectra", "cores": os.cpu_count(), "runs": rows}))


def _line(row: dict) -> str:
    sec = "-" if row["seconds"] is None else f"{row['seconds']:.2f}"
    mb = "-" if row["peak_mb"] is None else f"{row['peak_mb']:.0f}"
    same = row.get("same_assignment")
    rho, z = row.get("max_abs_delta_rho"), row.get("max_delta_rho_sigma")
    return (
        f"{row['family']:<10} {row['points']:>9} pts  {sec:>8} s  {mb:>6} MB peak  "
        f"{row['status']:<22} same assignment: {'-' if same is None else same}  "
        f"max |Δρ|: {'-' if rho is None else f'{rho:.4f} ({z:.1f} σ)'}  "
        f"(load {row['load_before']:.2f})"
    )


if __name__ == "__main__":
    main()
