"""Benchmark of the mode descriptions: time against molecule size.

    OMP_NUM_THREADS=1 PYTHONPATH=src python bench/describe.py

Describes the modes of the test fixtures (water, CH2Cl2, benzene, ethanol: engine runs) and of
divinylbenzene from a real ORCA output when ../shared/qc-outputs is present; median of three
runs of :func:`vibrapol.describe.describe_modes` each (coordinates, B matrix, force constants,
shares, words).  Prints a table and, last, one JSON line.  Wall-clock seconds on this machine;
on shared cores they vary from run to run.
"""

from __future__ import annotations

import json
import platform
import statistics
import time
import warnings
from pathlib import Path

from vibrapol.describe import describe_modes, energy_distribution
from vibrapol.sources import read_modes

ROOT = Path(__file__).resolve().parents[1]
SOURCES = {
    "water": ROOT / "tests/fixtures/describe/water_hf_sto3g.modes.json",
    "CH2Cl2": ROOT / "tests/fixtures/describe/ch2cl2_hf_sto3g.modes.json",
    "ethanol": ROOT / "tests/fixtures/compare/ethanol_trans_hf_321g.modes.json",
    "benzene": ROOT / "tests/fixtures/describe/benzene_hf_sto3g.modes.json",
    "divinylbenzene": ROOT.parent / "shared/qc-outputs/ORCA6.0.1_dvb_raman.out",
}


def main() -> None:
    rows = []
    for name, path in SOURCES.items():
        if not path.exists():
            continue
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            modes = read_modes(path)
        times = []
        for _ in range(3):
            t = time.perf_counter()
            describe_modes(modes)
            times.append(time.perf_counter() - t)
        n_coords = len(energy_distribution(modes).coordinates)
        rows.append(
            {
                "molecule": name,
                "atoms": modes.n_atoms,
                "coordinates": n_coords,
                "seconds": round(statistics.median(times), 4),
            }
        )
    print(f"{'molecule':<16} {'atoms':>5} {'coords':>6} {'seconds':>8}")
    for r in rows:
        print(f"{r['molecule']:<16} {r['atoms']:>5} {r['coordinates']:>6} {r['seconds']:>8.3f}")
    print(json.dumps({"bench": "describe", "machine": platform.machine(), "rows": rows}))


if __name__ == "__main__":
    main()
