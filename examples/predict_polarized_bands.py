"""Before a measurement: which Raman bands of a molecule will be polarized, and where?

From the structure alone, group theory says how many fundamentals of each symmetry species
there are and which are polarized (only totally symmetric ones; every other Raman-active band
has ρ = 3/4).  A computed result — a quantum-chemistry output or ``*.modes.json`` given with
``--modes``, or one computed here with ``--compute METHOD/BASIS`` on the embedded engine — adds
where the bands are and their depolarization ratios, scaled by the published factor of the
method when vibrapol knows one.

    python examples/predict_polarized_bands.py examples/solvent-check/dichloromethane.xyz
    python examples/predict_polarized_bands.py examples/solvent-check/dichloromethane.xyz \\
        --modes docs/figures/ch2cl2_b3lyp_631gd.modes.json --scale-for B3LYP/6-31G*
    python examples/predict_polarized_bands.py my_molecule.xyz --compute hf/6-31g*

Laser safety: the measurement this plans uses a laser, which can injure eyes and skin; follow
your institution's laser safety rules and local regulations, and handle samples per their
safety data sheets.
"""

from __future__ import annotations

import argparse

import ase.io
import numpy as np

from vibrapol import raman_table, read_modes
from vibrapol.compare import published_scale
from vibrapol.spectrum.scaling import NO_SCALE, FrequencyScale
from vibrapol.symmetry import (
    band_counts,
    find_point_group,
    format_representation,
    gamma_vib,
    mode_symmetry,
    species_rules,
)


def from_structure(path: str) -> str:
    """Point group, Γ_vib and the expected band of every species, from coordinates only."""
    atoms = ase.io.read(path)
    group = find_point_group(atoms.get_atomic_numbers(), atoms.get_positions(), where=path)
    counts = gamma_vib(group)
    lines = [
        f"{path}: point group {group.symbol}, Γ_vib = {format_representation(counts)}",
        f"{'species':<8} {'bands':>5}  {'IR':<3} {'Raman':<6} expected Raman band",
    ]
    for rule in species_rules(group):
        n = counts.get(rule.irrep, 0)
        if not n:
            continue
        band = {
            "polarized": "polarized (rho < 3/4)",
            "depolarized": "depolarized (rho = 3/4)",
            "inactive": "absent",
        }[rule.polarization]
        ir = "yes" if rule.ir_active else "no"
        ra = "yes" if rule.raman_active else "no"
        lines.append(f"{rule.irrep:<8} {n:>5}  {ir:<3} {ra:<6} {band}")
    c = band_counts(group)
    lines.append(
        f"{c.fundamentals} fundamentals: {c.raman_active} Raman-active, of which {c.polarized} "
        f"polarized; {c.silent} silent"
    )
    return "\n".join(lines)


def from_modes(modes, scale_for: str | None = None) -> str:  # noqa: ANN001
    """Position, species and ρ of every Raman band of a computed result, polarized first."""
    sym = mode_symmetry(modes)
    table = raman_table(sym.modes, symmetry=sym)
    if scale_for:
        scale = FrequencyScale.published(scale_for)
    else:
        scale = published_scale(modes) or NO_SCALE
    p = modes.provenance
    head = f"computed: {p.program or '?'} {p.method}/{p.basis}; " + (
        scale.describe() if scale.factor != 1.0 else "unscaled (no published factor known)"
    )
    lines = [head, f"{'cm-1':>7} {'species':<8} {'rho':>6}  band"]
    sets = [s for s in table.sets() if np.isfinite(table.rho_linear[s[0]])]
    sets.sort(key=lambda s: (not table.polarized[s[0]], table.freqs_cm1[s[0]]))
    for s in sets:
        k = s[0]
        kind = {  # the rule of vibrapol.polarization
            "polarized": "polarized",
            "unresolved": "totally symmetric, but rho too close to 3/4 to tell",
        }.get(table.polarization[k], "depolarized")
        deg = f" ({len(s)}-fold)" if len(s) > 1 else ""
        freq = scale.apply(np.array([table.freqs_cm1[k]]))[0]
        lines.append(f"{freq:>7.0f} {table.irreps[k]:<8} {table.rho_linear[k]:>6.3f}  {kind}{deg}")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("structure", help="structure file (any format ASE reads)")
    got = parser.add_mutually_exclusive_group()
    got.add_argument("--modes", help="computed result for this structure (QC output, *.modes.json)")
    got.add_argument("--compute", metavar="METHOD/BASIS", help="compute it now with the engine")
    parser.add_argument(
        "--scale-for", metavar="METHOD/BASIS", help="scale by this published factor instead"
    )
    args = parser.parse_args(argv)
    print(from_structure(args.structure))
    if args.modes:
        modes = read_modes(args.modes)
    elif args.compute:
        from vibrapol.engine import compute_modes

        method, _, basis = args.compute.partition("/")
        modes = compute_modes(ase.io.read(args.structure), method, basis or "6-31g*")
    else:
        return
    print()
    print(from_modes(modes, args.scale_for))


if __name__ == "__main__":
    main()
