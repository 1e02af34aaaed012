"""Make the data files that ``vibrapol demo`` ships in ``src/vibrapol/data/``.

    PYTHONPATH=src python examples/solvent-check/make_demo_data.py spectra      # a second
    PYTHONPATH=src python examples/solvent-check/make_demo_data.py structures   # a few minutes

``spectra`` writes ``dichloromethane_liquid_vv_vh_INVENTED.txt``: an INVENTED parallel (VV) and
crossed (VH) Raman spectrum of liquid dichloromethane.  Nothing in it was measured.  Only the
band positions come from the literature (below); areas, widths, the ratios of the totally
symmetric bands, the noise, the baseline and the spike are invented so that the file looks like
a routine measurement and exercises the whole measured chain (spike removal, baseline, band
fit, depolarization ratios).

``structures`` writes the demo's starting structures ``dichloromethane.xyz`` and
``chloroform.xyz``: ASE's G2 structures (``ase.build.molecule``) optimised with vibrapol's engine
at HF/6-31G* and rounded to 6 decimals, so that the demo's own optimisation takes a step or
two instead of eight.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from vibrapol.measured.synthetic import TrueBand, synthetic_pair

DATA = Path(__file__).resolve().parents[2] / "src" / "vibrapol" / "data"
SPECTRA_FILE = "dichloromethane_liquid_vv_vh_INVENTED.txt"


@dataclass(frozen=True)
class LiquidBand:
    """A band of the invented spectrum: published position, invented everything else."""

    name: str
    species: str  # C2v species in the table's axis choice (b1: CH2 asym. stretch and rock)
    position_cm1: float
    fwhm_cm1: float  # invented
    area: float  # invented relative VV area
    rho: float  # 3/4 for non-totally-symmetric species (common practice); invented for a1


# Dichloromethane fundamentals, liquid-phase values: T. Shimanouchi, Tables of Molecular
# Vibrational Frequencies, Consolidated Volume I, NSRDS-NBS 39 (1972), CH2Cl2 entry (gas values
# there: 2999, 1467, 717, 282, 1153, 3040, 898, 1268, 758).  All positions and species are
# written FROM MEMORY; confirm them against the table before reusing them.  The a1 band at
# 1422 cm-1 (CH2 scissors) is given a ratio near 3/4 on purpose: a totally symmetric band may
# be almost depolarized when its mean polarizability derivative is small (the engine finds
# a² ≈ 0 for it at HF/6-31G*).
BANDS = (
    LiquidBand("nu4 CCl2 scissors", "a1", 283.0, 7.0, 45.0, 0.42),
    LiquidBand("nu3 CCl2 sym. stretch", "a1", 702.0, 6.0, 100.0, 0.08),
    LiquidBand("nu9 CCl2 asym. stretch", "b2", 737.0, 8.0, 28.0, 0.75),
    LiquidBand("nu7 CH2 rock", "b1", 898.0, 9.0, 3.0, 0.75),
    LiquidBand("nu5 CH2 twist", "a2", 1155.0, 9.0, 4.0, 0.75),
    LiquidBand("nu8 CH2 wag", "b2", 1265.0, 9.0, 8.0, 0.75),
    LiquidBand("nu2 CH2 scissors", "a1", 1422.0, 10.0, 7.0, 0.70),
    LiquidBand("nu1 CH2 sym. stretch", "a1", 2985.0, 12.0, 60.0, 0.05),
    LiquidBand("nu6 CH2 asym. stretch", "b1", 3047.0, 14.0, 14.0, 0.75),
)
#: Invented weak polarized band near 2ν2 (overtone of the scissors, below 2 × 1422 as
#: anharmonicity makes overtones): it has no fundamental and should stay unassigned.
OVERTONE = LiquidBand("2nu2 overtone", "a1", 2830.0, 14.0, 4.0, 0.30)

AXIS_CM1 = np.arange(150.0, 3300.0, 1.0)
LASER_NM = 532.0
RANDOM_STATE = 2072  # numpy default_rng argument

HEADER = """\
# INVENTED DATA - NOT A MEASUREMENT.
# Parallel (VV) and crossed (VH) Raman spectrum of liquid dichloromethane, made up for the
# vibrapol demo by examples/solvent-check/make_demo_data.py (numpy default_rng({state})).
# Band positions: liquid-phase fundamentals of CH2Cl2 from T. Shimanouchi, Tables of Molecular
# Vibrational Frequencies, Consolidated Volume I, NSRDS-NBS 39 (1972), written from memory.
# Invented: band areas, widths, the ratios of the totally symmetric bands, one weak overtone
# band near 2830 cm-1, noise, a sloping baseline and one cosmic-ray spike in VV.
# Pretended conditions: {laser:g} nm excitation, 90 degree scattering, 298 K.
# Columns: Raman shift (cm-1), VV intensity, VH intensity (arbitrary units).
"""


def invented_pair():
    """The invented VV/VH pair (a :class:`~vibrapol.measured.PolarizedPair`)."""
    rng = np.random.default_rng(RANDOM_STATE)
    bands = [TrueBand(b.position_cm1, b.fwhm_cm1, b.area, b.rho) for b in (*BANDS, OVERTONE)]
    tallest = max(b.area * 2.0 / (np.pi * b.fwhm_cm1) for b in bands)  # Lorentzian peak
    t = (AXIS_CM1 - AXIS_CM1[0]) / (AXIS_CM1[-1] - AXIS_CM1[0])
    baseline = tallest * (0.04 + 0.06 * t + 0.03 * t * t)
    spike_index = int(np.searchsorted(AXIS_CM1, 1873.0))
    return synthetic_pair(
        AXIS_CM1,
        bands,
        noise_sigma=0.004 * tallest,
        baseline=baseline,
        spikes=[(spike_index, 0.8 * tallest)],
        rng=rng,
    )


def write_spectra(out_dir: Path = DATA) -> Path:
    pair = invented_pair()
    lines = [HEADER.format(state=RANDOM_STATE, laser=LASER_NM) + "shift_cm1 VV VH"]
    for x, vv, vh in zip(pair.vv.shift_cm1, pair.vv.intensity, pair.vh.intensity, strict=True):
        lines.append(f"{x:.1f} {vv:.5f} {vh:.5f}")
    path = out_dir / SPECTRA_FILE
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def write_structures(out_dir: Path = DATA) -> list[Path]:
    from ase.build import molecule

    from vibrapol.engine.optimize import optimize_geometry
    from vibrapol.engine.scf import MethodSpec

    spec = MethodSpec("hf", "6-31g*", 0, 1, False)
    paths = []
    for name, g2, formula in (
        ("dichloromethane", "H2CCl2", "CH2Cl2"),
        ("chloroform", "HCCl3", "CHCl3"),
    ):
        atoms = molecule(g2)
        opt = optimize_geometry(atoms.get_atomic_numbers(), atoms.get_positions(), spec)
        comment = (
            f"{name} {formula}: ASE G2 structure optimised by vibrapol's engine at HF/6-31G* "
            f"({opt.n_steps} steps), rounded to 6 decimals "
            "(examples/solvent-check/make_demo_data.py)"
        )
        rows = [
            f"{sym:<2} {x:14.6f} {y:14.6f} {z:14.6f}"
            for sym, (x, y, z) in zip(
                atoms.get_chemical_symbols(), opt.coordinates_ang, strict=True
            )
        ]
        path = out_dir / f"{name}.xyz"
        path.write_text(f"{len(rows)}\n{comment}\n" + "\n".join(rows) + "\n", encoding="utf-8")
        paths.append(path)
    return paths


if __name__ == "__main__":
    what = sys.argv[1:] or ["spectra"]
    if "spectra" in what:
        print(write_spectra())
    if "structures" in what:
        print(*write_structures(), sep="\n")
