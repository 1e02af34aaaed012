"""Files and summary of ``vibrapol demo``: tables, spectra and figures, the printed summary.

Split from :mod:`vibrapol.demo.run`, which runs the steps; everything here turns results into
text or bytes (nothing is written here).
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.modeset import ModeSet
from vibrapol.ramantable import RamanTable, raman_table

if TYPE_CHECKING:  # pragma: no cover
    from vibrapol.compare import AssignedBand, Assignment, Ranking
    from vibrapol.demo.scenario import DemoResult, DemoScenario
    from vibrapol.symmetry import ModeSymmetry

#: Bands shown with a label in the spectrum figure.
LABELLED_BANDS = 9
#: Line width of the summary.
WIDTH = 100


def tables(modes: ModeSet, name: str) -> tuple[ModeSymmetry, RamanTable, list[tuple[str, str]]]:
    """Symmetry analysis, the Raman table, and the table as text and CSV."""
    from vibrapol.output.tables import table_csv, table_text
    from vibrapol.symmetry import mode_symmetry

    sym = mode_symmetry(modes)
    table = raman_table(sym.modes, symmetry=sym)
    return (
        sym,
        table,
        [(f"{name}_table.txt", table_text(table)), (f"{name}_table.csv", table_csv(table))],
    )


def _scale(modes: ModeSet):  # noqa: ANN202
    from vibrapol.compare import published_scale
    from vibrapol.spectrum.scaling import NO_SCALE

    return published_scale(modes) or NO_SCALE


def figures(
    sym: ModeSymmetry, table: RamanTable, scenario: DemoScenario, name: str
) -> list[tuple[str, str | bytes]]:
    """Spectrum CSV, stick CSV, VV/VH figure and ρ figure (SVG and PNG) of the sample."""
    from vibrapol import plotting
    from vibrapol.output import spectra as spectrum_io
    from vibrapol.spectrum import broaden, stick_spectrum
    from vibrapol.spectrum.lineshapes import LineShape

    scale = _scale(sym.modes)
    sticks = stick_spectrum(
        sym.modes,
        quantity="intensity",
        laser_nm=scenario.laser_nm,
        temperature_k=scenario.temperature_k,
        scale=scale,
        table=table,
        label=scenario.sample.label,
    )
    grid = broaden(sticks, LineShape("lorentzian", scenario.fwhm_cm1), range_cm1=scenario.range_cm1)
    how = f"wavenumbers × {scale.factor:.4f}" if scale.factor != 1.0 else "unscaled"
    title = f"{scenario.sample.label}, computed at {scenario.level} ({how})"
    spectrum = plotting.spectrum_figure(
        grid, width="double", label_count=LABELLED_BANDS, title=title
    )
    rho = plotting.depolarization_figure(sticks, width="double", xlim_cm1=scenario.range_cm1)
    return [
        (f"{name}_spectrum.csv", spectrum_io.grid_csv(grid)),
        (f"{name}_sticks.csv", spectrum_io.sticks_csv(sticks)),
        (f"{name}_vv_vh.svg", plotting.figure_bytes(spectrum, "svg")),
        (f"{name}_vv_vh.png", plotting.figure_bytes(spectrum, "png")),
        (f"{name}_rho.svg", plotting.figure_bytes(rho, "svg")),
        (f"{name}_rho.png", plotting.figure_bytes(rho, "png")),
    ]


def check_bands(
    assignment: Assignment,
) -> tuple[AssignedBand | None, AssignedBand | None]:
    """The strongest assigned polarized band and the strongest assigned depolarized band.

    Polarized: computed polarized and measured polarized (ρ + 2σ < 0.70, as in the scores);
    depolarized: computed ρ = 3/4 (a non-totally-symmetric species, D. A. Long, *The Raman
    Effect*, 2002, ch. 5) and a measured ρ within 2σ + 0.05 of 3/4.  None when there is none.
    """
    from vibrapol.compare import measured_polarized
    from vibrapol.polarization import POLARIZED_MARGIN, RHO_DEPOLARIZED

    pol: AssignedBand | None = None
    dep: AssignedBand | None = None
    for b in assignment.bands:
        if not b.assigned or not math.isfinite(b.band_rho):
            continue
        is_pol = bool(measured_polarized(np.array([b.band_rho]), np.array([b.band_rho_err]))[0])
        if b.mode_polarized and is_pol and (pol is None or b.band_area > pol.band_area):
            pol = b
        near = abs(b.band_rho - RHO_DEPOLARIZED) <= 2 * b.band_rho_err + POLARIZED_MARGIN
        depolarized = math.isfinite(b.mode_rho) and abs(b.mode_rho - 0.75) < 1e-3
        if depolarized and near and (dep is None or b.band_area > dep.band_area):
            dep = b
    return pol, dep


def _polarized_line(sym: ModeSymmetry, table: RamanTable) -> str:
    """Which bands are polarized, each as scaled wavenumber, species, table mode and harmonic."""
    scale = _scale(sym.modes)

    def where(sets: list[tuple[int, ...]]) -> str:
        harmonic = np.array([table.freqs_cm1[s[0]] for s in sets])
        scaled = scale.apply(harmonic)
        return ", ".join(
            f"{f:.0f} ({table.irreps[s[0]] or '?'}; mode {'+'.join(str(i + 1) for i in s)}, "
            f"harmonic {h:.1f})"
            for f, h, s in zip(scaled, harmonic, sets, strict=True)
        )

    all_sets = table.sets()
    pol = [s for s in all_sets if table.polarized[s[0]]]
    if scale.factor != 1.0:
        how = f"scaled wavenumbers, harmonic × {scale.factor:.4f}; modes as in the table"
    else:
        how = "unscaled harmonic wavenumbers; modes as in the table"
    text = f"{len(pol)} of {len(all_sets)} bands polarized" + (
        f", at {where(pol)} cm-1 ({how})" if pol else ""
    )
    quiet = [
        s
        for s in all_sets
        if not table.polarized[s[0]] and table.irreps[s[0]] == sym.group.totally_symmetric
    ]
    if quiet:
        text += f"; {where(quiet)} is totally symmetric but computed with rho close to 3/4"
    return text + "; all others have rho = 3/4"


def _ranking_line(ranking: Ranking) -> str:
    parts = [f"{k}. {a.label} {a.scores.overall:.2f}" for k, a in enumerate(ranking.assignments, 1)]
    return "   ".join(parts) + f"   -> the measurement fits {ranking.best.label} best"


def summary_text(
    result: DemoResult, scenario: DemoScenario, files: Sequence[tuple[Path, str]]
) -> str:
    """The summary printed at the end of the demo (and written to ``summary.txt``)."""
    from vibrapol.symmetry import format_representation, gamma_vib

    sample = scenario.sample
    table = result.table
    a = result.assignment
    s = a.scores
    computed = ", ".join(
        f"{m.label} {result.seconds_compute[m.name]:.0f} s"
        + (" (from the checkpoint)" if result.reused[m.name] else "")
        for m in scenario.molecules
    )
    group = result.symmetry.group
    unassigned = [b for b in a.bands if not b.assigned]
    err = f" ± {a.scale.factor_err:.4f}" if math.isfinite(a.scale.factor_err) else ""
    paragraphs = [
        f"computed with the embedded PySCF engine at {scenario.level}: {computed}",
        f"{sample.label}: point group {table.point_group or '?'}, "
        f"Γ_vib = {format_representation(gamma_vib(group))}; "
        + _polarized_line(result.symmetry, table),
        f"measured pair: {scenario.measured_note}; {s.n_bands} bands found",
        f"assignment: {s.n_assigned} of {s.n_bands} bands assigned, rms {s.rms_cm1:.1f} cm-1 "
        f"after scaling, polarization agreement {s.polarization_agreement:.2f}; scale factor "
        f"{a.scale.factor:.4f}{err}, fitted from {a.scale.start_note}",
    ]
    if unassigned:
        paragraphs.append(
            "left unassigned: measured "
            + ", ".join(f"{b.band_cm1:.0f} cm-1 (rho {b.band_rho:.2f})" for b in unassigned)
            + " - no computed fundamental fits: an overtone, a combination band or an impurity"
        )
    paragraphs.append(f"ranking: {_ranking_line(result.ranking)}")
    pol, dep = check_bands(a)
    if pol is not None and dep is not None:
        paragraphs.append(
            f"polarization check: the measured {pol.band_cm1:.0f} cm-1 band ({pol.irrep}, rho "
            f"{pol.band_rho:.2f}) should nearly vanish in VH; the {dep.band_cm1:.0f} cm-1 band "
            f"({dep.irrep}, 3/4 by symmetry) should keep 3/4 of its VV area - a measured ratio "
            "other than 3/4 there gives the VH/VV throughput of the spectrometer "
            "(vibrapol.measured.derive_correction)"
        )
    lines = [scenario.title, ""]
    lines += [textwrap.fill(p, WIDTH, subsequent_indent="    ") for p in paragraphs]
    lines += ["", f"files in {result.output_dir}/:"]
    width = max(len(p.name) for p, _ in files)
    lines += [f"  {p.name:<{width}}  {what}" for p, what in files]
    lines += [
        f"  {'*.checkpoint.sqlite':<{width}}  engine checkpoints (reused by a rerun with --force)",
        "",
        "next: vibrapol table|spectrum|match|rank on these files (see README.md and docs/)",
    ]
    return "\n".join(lines) + "\n"
