"""Which computed mode is each measured band, and which candidate structure fits the measurement?

    python examples/match_and_rank.py --vv VV.txt [--vh VH.txt] CANDIDATE [CANDIDATE ...]
        [--laser-nm 532] [--range-cm1 LOW:HIGH] [--figure match.svg]

Each CANDIDATE is a quantum-chemistry output or ``*.modes.json`` (isomers, conformers, levels
of theory).  The measured pair is cleaned (spikes, baseline), its bands fitted jointly in VV
and VH (a depolarization ratio per band), and every candidate is assigned to the same bands;
the best one's assignment is printed band by band, then the ranking.  Without arguments it
uses the demo's scenario: the INVENTED VV/VH pair of liquid dichloromethane shipped with
vibrapol against dichloromethane and chloroform computed at HF/6-31G*
(``examples/solvent-check/*.modes.json``, written by ``vibrapol demo``).

Laser safety: recording the spectra means working with a laser, which can injure eyes and
skin; follow your institution's laser safety rules and local regulations.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from vibrapol import measured, read_modes
from vibrapol.compare import candidate_from_modes, rank
from vibrapol.demo import SAMPLE_SPECTRUM, data_path
from vibrapol.output.assignments import ranking_text

HERE = Path(__file__).resolve().parent / "solvent-check"
DEFAULT_CANDIDATES = [HERE / "dichloromethane.modes.json", HERE / "chloroform.modes.json"]


def parse_range(text: str) -> tuple[float, float]:
    lo, hi = (float(t) for t in text.split(":"))
    return lo, hi


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("candidates", nargs="*", help="QC outputs or *.modes.json")
    parser.add_argument("--vv", help="VV file, or one file with VV and VH columns")
    parser.add_argument("--vh", help="VH file")
    parser.add_argument("--laser-nm", type=float, default=532.0)
    parser.add_argument("--range-cm1", help="use only LOW:HIGH of the measured spectra")
    parser.add_argument("--figure", help="match figure of the best candidate (.svg/.png/.pdf)")
    args = parser.parse_args(argv)

    sources = [Path(c) for c in args.candidates] or DEFAULT_CANDIDATES
    vv = args.vv or data_path(SAMPLE_SPECTRUM)
    pair = measured.read_pair(vv, args.vh, laser_nm=args.laser_nm)
    if args.range_cm1:
        lo, hi = parse_range(args.range_cm1)
        pair = measured.PolarizedPair(pair.vv.crop(lo, hi), pair.vh and pair.vh.crop(lo, hi))
    pair, _, _ = measured.clean_pair(pair)
    bands = measured.measure_bands(pair)
    if "INVENTED" in Path(vv).name:
        print(f"measured: {Path(vv).name} (INVENTED data, see its header)")
    print(f"{len(bands.bands)} measured bands")

    candidates = [
        candidate_from_modes(read_modes(s), label=s.name, laser_nm=args.laser_nm) for s in sources
    ]
    ranking = rank(candidates, bands, pair=pair)
    best = ranking.best
    print(f"\nbest candidate: {best.label}; {best.scale.describe()}")
    print(f"{'band':>7} {'rho':>6}  {'mode':>5} {'species':<7} {'scaled':>7} {'conf':>5}")
    for b in best.bands:
        if b.assigned:
            print(
                f"{b.band_cm1:>7.1f} {b.band_rho:>6.2f}  {b.mode:>5} {b.irrep:<7} "
                f"{b.mode_cm1_scaled:>7.1f} {b.confidence:>5.2f}"
            )
        else:
            print(f"{b.band_cm1:>7.1f} {b.band_rho:>6.2f}  {'-':>5} unassigned")
    print()
    print(ranking_text(ranking), end="")
    if args.figure:
        from vibrapol.plotting import save_figure
        from vibrapol.plotting.match import match_figure

        print(f"wrote {save_figure(match_figure(best, pair), args.figure)}")


if __name__ == "__main__":
    main()
