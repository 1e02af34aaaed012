"""Figures and a table for a paper, from a frequency job that has already run.

    python examples/paper_figures.py [SOURCE] [--output-dir DIR] [--laser-nm 785] [--force]

SOURCE is any quantum-chemistry output vibrapol reads (Gaussian, ORCA, Q-Chem, ...) or a
``*.modes.json``.  Default: the Gaussian 16 Raman job on divinylbenzene in
``../shared/qc-outputs/`` when that folder is present, else ``examples/water.modes.json``.

Writes into DIR (default ``paper-figures``):

- ``spectrum.pdf`` and ``spectrum.png``: VV over VH in two stacked panels, double column width,
  the strongest bands labelled with wavenumber, species and (polarized bands) ρ;
- ``rho.pdf``: depolarization ratio of every band against the 3/4 limit;
- ``modes.tex``: a booktabs table of the Raman-active bands (wavenumber, species, activity, ρ,
  p/dp), from :func:`vibrapol.output.tables.table_latex`;
- ``modes.csv``: the full per-mode table.

Wavenumbers are scaled by the method's published factor when vibrapol knows one.  Laser
safety: the laser line is only a number here; the real one can injure eyes and skin — follow
your institution's laser safety rules and local regulations.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np

from vibrapol import plotting, raman_table, read_modes
from vibrapol.compare import published_scale
from vibrapol.fileio import check_writable, write_atomic
from vibrapol.output.tables import table_csv, table_latex
from vibrapol.spectrum import broaden, stick_spectrum
from vibrapol.spectrum.lineshapes import LineShape
from vibrapol.spectrum.scaling import NO_SCALE
from vibrapol.symmetry import mode_symmetry

ROOT = Path(__file__).resolve().parents[1]
SHARED_GAUSSIAN = ROOT.parent / "shared" / "qc-outputs" / "Gaussian16-A.03_dvb_raman.out"
WATER = ROOT / "examples" / "water.modes.json"


def default_source() -> Path:
    return SHARED_GAUSSIAN if SHARED_GAUSSIAN.is_file() else WATER


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("source", nargs="?", help="QC output or *.modes.json (see above)")
    parser.add_argument("--output-dir", default="paper-figures")
    parser.add_argument("--laser-nm", type=float, default=532.0)
    parser.add_argument("--temperature-k", type=float, default=298.15)
    parser.add_argument("--fwhm-cm1", type=float, default=10.0)
    parser.add_argument("--force", action="store_true", help="overwrite earlier files")
    args = parser.parse_args(argv)

    source = Path(args.source) if args.source else default_source()
    out = Path(args.output_dir)
    out.mkdir(parents=True, exist_ok=True)
    names = ["spectrum.pdf", "spectrum.png", "rho.pdf", "modes.tex", "modes.csv"]
    for name in names:  # refuse before any work, not halfway
        check_writable(out / name, args.force)

    modes = read_modes(source)
    sym = mode_symmetry(modes)
    table = raman_table(sym.modes, symmetry=sym)
    scale = published_scale(modes) or NO_SCALE
    sticks = stick_spectrum(
        sym.modes,
        quantity="intensity",
        laser_nm=args.laser_nm,
        temperature_k=args.temperature_k,
        scale=scale,
        table=table,
    )
    top = float(np.max(sticks.positions_cm1)) + 100.0
    span = (100.0, float(np.ceil(top / 100.0) * 100.0))
    grid = broaden(sticks, LineShape("lorentzian", args.fwhm_cm1), range_cm1=span)
    spectrum = plotting.spectrum_figure(grid, layout="stacked", width="double", label_count=8)
    rho = plotting.depolarization_figure(sticks, width="single", xlim_cm1=span)
    files = {
        "spectrum.pdf": plotting.figure_bytes(spectrum, "pdf"),
        "spectrum.png": plotting.figure_bytes(spectrum, "png"),
        "rho.pdf": plotting.figure_bytes(rho, "pdf"),
        "modes.tex": table_latex(table, scale),
        "modes.csv": table_csv(table),
    }
    for name, data in files.items():
        write_atomic(out / name, data, force=args.force)
    print(f"{source.name}: {table.n_modes} modes, point group {table.point_group}")
    print("wrote " + ", ".join(str(out / n) for n in names))


if __name__ == "__main__":
    main()
