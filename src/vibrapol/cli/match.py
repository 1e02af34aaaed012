"""Assign the computed modes of one source to the bands of a measured VV (and VH) spectrum.

The measured spectra are cleaned (cosmic-ray spikes, arPLS baseline), their bands found and
fitted jointly in VV and VH (depolarization ratio per band), and matched one to one with the
computed bands (degenerate sets as one band), the frequency scale factor fitted jointly.
Writes one CSV row per measured band (columns band_cm1, band_rho, mode, mode_cm1_scaled,
irrep, mode_rho, delta_cm1, confidence, ...; mode empty when unassigned) and prints the
scale factor and the scores.  See vibrapol.compare for the cost and the scores.

Laser safety: recording the spectra means working with a laser, which can injure eyes and
skin; follow your institution's laser safety rules and local regulations.  Handle samples
and solvents per their safety data sheets.
"""

from __future__ import annotations

import argparse
import dataclasses
import math
import sys
from typing import TYPE_CHECKING, Any

import numpy as np

from vibrapol import fileio
from vibrapol.cli._common import input_paths, print_stdout, write_outputs
from vibrapol.cli._options import (
    add_isotopes_argument,
    add_kind_argument,
    add_no_symmetry_argument,
    add_temperature_argument,
)
from vibrapol.cli.spectrum import parse_range
from vibrapol.errors import VibrapolError
from vibrapol.sources import read_modes
from vibrapol.spectrum.quantities import DETECTOR_NOTES

if TYPE_CHECKING:
    from vibrapol.modeset import ModeSet


#: Laser line used for the computed intensities when none is given.
DEFAULT_LASER_NM = 532.0


def add_measurement_arguments(parser: argparse.ArgumentParser) -> None:
    """Options shared by ``match`` and ``rank``: the measured pair and the matching."""
    add_kind_argument(parser)
    parser.add_argument(
        "--vv", required=True, metavar="VV_FILE",
        help="parallel (VV) spectrum: delimited text or JCAMP-DX; a file with two intensity "
        "columns holds VV and VH",
    )  # fmt: skip
    parser.add_argument(
        "--vh",
        metavar="VH_FILE",
        help="crossed (VH) spectrum (default: none, or the second intensity column of --vv; "
        "without it no ratio is measured)",
    )
    parser.add_argument(
        "--axis", choices=("auto", "shift", "wavenumber", "wavelength"), default="auto",
        help="x axis of the measured files (default: from the file's units, else Raman shift)",
    )  # fmt: skip
    parser.add_argument(
        "--laser-nm", type=float, metavar="NM",
        help="excitation wavelength in nm: needed for wavelength or absolute-wavenumber axes, "
        f"and used for the computed intensities (default {DEFAULT_LASER_NM:g})",
    )  # fmt: skip
    add_temperature_argument(parser)
    parser.add_argument(
        "--detector", choices=("photon", "energy"), default="photon",
        help="detector of the measurement, for the computed relative intensities: photon "
        "(counting: CCD, InGaAs array; I ∝ ν0(ν0-ν)^3; default) or energy (I ∝ (ν0-ν)^4)",
    )  # fmt: skip
    parser.add_argument(
        "--range-cm1",
        metavar="LOW:HIGH",
        help="use only this part of the measured spectra, in cm-1 (default: all of it)",
    )
    parser.add_argument(
        "--no-baseline", action="store_true", help="keep the baseline (already subtracted)"
    )
    parser.add_argument(
        "--min-snr", type=float, default=5.0, metavar="N",
        help="smallest band height and prominence in noise units (default 5)",
    )  # fmt: skip
    scale = parser.add_mutually_exclusive_group()
    scale.add_argument(
        "--scale", type=_factor, metavar="F",
        help="multiply all harmonic wavenumbers by F and keep it fixed (default: the factor is "
        "fitted with the assignment, starting from the published factor of the source's "
        "method when known)",
    )  # fmt: skip
    scale.add_argument(
        "--scale-for", metavar="METHOD/BASIS[@SOURCE]",
        help="use the published factor of this method, e.g. B3LYP/6-31G*, and keep it fixed "
        "(refused when the source was computed with another method or basis; default: fitted)",
    )  # fmt: skip
    parser.add_argument(
        "--position-tolerance", type=float, metavar="REL",
        help="relative position tolerance σ/ν̃ of the cost (default 0.02; match: 0.03 for "
        "STO-3G and 3-21G results)",
    )  # fmt: skip
    add_no_symmetry_argument(parser)
    iso = parser.add_argument_group(
        "isotopologue",
        "a measured isotopologue beside the parent: the computed isotope ratio of each mode "
        "predicts where its band moves, and the cost of each pair gains a term for how well "
        "the isotopologue's measured bands agree (see docs/assignment.md)",
    )
    add_isotopes_argument(iso, "the masses of the isotopologue measured with --iso-vv")
    iso.add_argument(
        "--iso-vv", metavar="VV_FILE",
        help="parallel (VV) spectrum of the isotopologue (same forms as --vv; needs --isotopes; "
        "default: none)",
    )  # fmt: skip
    iso.add_argument(
        "--iso-vh",
        metavar="VH_FILE",
        help="crossed (VH) spectrum of the isotopologue (default: none, or the second "
        "intensity column of --iso-vv)",
    )
    parser.add_argument("--force", action="store_true", help="overwrite existing output files")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol match``."""
    parser.add_argument("source", help="*.modes.json or quantum-chemistry output")
    add_measurement_arguments(parser)
    parser.add_argument(
        "-o",
        "--output",
        metavar="FILE",
        help="write the assignment CSV here (default: after the summary on standard output)",
    )
    parser.add_argument(
        "--figure", metavar="FILE", action="append", default=[],
        help="match figure (.svg, .pdf or .png); repeat for several formats",
    )  # fmt: skip
    parser.add_argument(
        "--table", metavar="FILE", action="append", default=[],
        help="assignment table for a paper: .md (Markdown) or .tex (LaTeX, booktabs); repeat "
        "for both",
    )  # fmt: skip
    parser.add_argument(
        "--no-describe", action="store_true",
        help="leave out what each assigned mode does (default: a description column from the "
        "bond stretches, bends, wags and torsions carrying its potential energy)",
    )  # fmt: skip


def table_writer(path: str):  # noqa: ANN201
    """The paper-table writer for a file from its suffix."""
    from vibrapol.output.assignments import PAPER_TABLES

    suffix = "." + path.rsplit(".", 1)[-1].lower() if "." in path else ""
    if suffix not in PAPER_TABLES:
        raise VibrapolError(f"{path}: table files must end in .md or .tex")
    return PAPER_TABLES[suffix]


def mode_descriptions(modes: Any, notes: list[str]) -> list[str] | None:
    """What each mode does (:mod:`vibrapol.describe`), its notes added to ``notes``.

    None when the modes cannot be described (the note says why).
    """
    from vibrapol.describe import descriptions_with_notes

    texts, found = descriptions_with_notes(modes)
    notes += found
    return texts or None


def measure(args: argparse.Namespace, vv: str | None = None, vh: str | None = None):  # noqa: ANN201
    """Read, crop, clean and fit a measured pair: (cleaned pair, MeasuredBands).

    Default: the parent's ``--vv``/``--vh``; the isotopologue's files are passed explicitly.
    """
    from vibrapol import measured

    if vv is None:
        vv, vh = args.vv, args.vh
    options: dict[str, Any] = {"axis": args.axis}
    if args.laser_nm is not None:
        options["laser_nm"] = args.laser_nm
    if vh is not None:
        check_distinct_channels(vv, vh)
    pair = measured.read_pair(vv, vh, **options)
    if args.range_cm1:
        lo, hi = parse_range(args.range_cm1)
        pair = measured.PolarizedPair(
            pair.vv.crop(lo, hi), None if pair.vh is None else pair.vh.crop(lo, hi)
        )
    check_stokes(pair.vv.shift_cm1, vv)
    pair, _, _ = measured.clean_pair(pair, **({"baseline": None} if args.no_baseline else {}))
    starts = measured.find_bands(pair.vv, min_snr=args.min_snr)
    if not starts:
        raise VibrapolError(
            f"{vv}: no bands found above {args.min_snr:g} noise units; lower --min-snr"
        )
    return pair, measured.measure_bands(pair, starts)


def check_isotopologue_options(args: argparse.Namespace) -> None:
    """--iso-vv needs --isotopes and the other way round; --iso-vh needs --iso-vv."""
    if args.iso_vh is not None and args.iso_vv is None:
        raise VibrapolError("--iso-vh needs --iso-vv (the isotopologue's parallel spectrum)")
    if (args.iso_vv is None) != (args.isotopes is None):
        raise VibrapolError(
            "--iso-vv and --isotopes go together: the isotopologue's spectrum and its masses"
        )
    if args.iso_vv is not None and args.iso_vv in (args.vv, args.vh):
        raise VibrapolError(f"--iso-vv {args.iso_vv} is a parent spectrum; give the isotopologue's")


def with_measured_isotopologue(args: argparse.Namespace, cand, modes: ModeSet):  # noqa: ANN001, ANN201
    """The candidate with its computed isotope ratios (when --iso-vv is given), and a note."""
    if args.iso_vv is None:
        return cand, ""
    from vibrapol.compare.isotopologue import with_isotopologue
    from vibrapol.isotopes import frequencies_only, isotopologue

    parent = frequencies_only(modes)  # the isotopologue term uses wavenumbers only
    heavy = isotopologue(parent, args.isotopes)
    note = f"isotopologue {args.iso_vv}: {heavy.provenance.masses} (isotope-shift cost term)"
    return with_isotopologue(cand, parent, heavy), note


def check_distinct_channels(vv: str, vh: str) -> None:
    """Refuse a --vh that is the --vv file itself or a copy of it (ρ would be 1 everywhere)."""
    from vibrapol.textio import MAX_SPECTRUM_BYTES, check_input_file, read_bytes

    a, b = check_input_file(vv, MAX_SPECTRUM_BYTES), check_input_file(vh, MAX_SPECTRUM_BYTES)
    if (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino):
        raise VibrapolError(f"--vh {vh} is the same file as --vv {vv}; give the crossed (VH) file")
    if a.st_size == b.st_size and read_bytes(vv, MAX_SPECTRUM_BYTES) == read_bytes(
        vh, MAX_SPECTRUM_BYTES
    ):
        raise VibrapolError(
            f"--vh {vh} has the same content as --vv {vv}; give the crossed (VH) file"
        )


def check_stokes(shift_cm1: np.ndarray, where: str) -> None:
    """Refuse a spectrum with no positive Raman shift: computed bands are on the Stokes side."""
    shift = np.asarray(shift_cm1, dtype=float)
    if shift.size and np.max(shift) <= 0:
        raise VibrapolError(
            f"{where}: every Raman shift is ≤ 0 ({np.min(shift):.0f} to {np.max(shift):.0f} "
            "cm⁻¹, the anti-Stokes side); assignment needs the Stokes side (positive shifts)"
        )


def assign_options(args: argparse.Namespace) -> dict[str, Any]:
    """Keyword arguments of :func:`vibrapol.compare.assign` from the options."""
    from vibrapol.compare import DEFAULT_MODEL
    from vibrapol.spectrum.scaling import FrequencyScale

    out: dict[str, Any] = {}
    if args.scale is not None:
        out["scale"] = args.scale
    elif args.scale_for:
        out["scale"] = FrequencyScale.published(args.scale_for).factor
    if args.position_tolerance is not None:
        if not 0 < args.position_tolerance < 0.5:
            raise VibrapolError(
                f"--position-tolerance must be between 0 and 0.5, got {args.position_tolerance}"
            )
        out["model"] = dataclasses.replace(DEFAULT_MODEL, sigma_rel=args.position_tolerance)
    return out


def check_scale_for(args: argparse.Namespace, modes: ModeSet, where: str) -> None:
    """Refuse a ``--scale-for`` factor computed for another method or basis than ``modes``."""
    if args.scale_for:
        from vibrapol.spectrum.scaling import FrequencyScale

        p = modes.provenance
        FrequencyScale.published(args.scale_for).check_belongs(p.method, p.basis, where)


def _factor(text: str) -> float | None:
    """A scale factor; ``auto`` (the old spelling of the default, a fitted factor) gives None."""
    if text == "auto":
        print(
            "vibrapol: note: --scale auto is the default (the factor is fitted); --scale now "
            "takes only a fixed factor",
            file=sys.stderr,
        )
        return None
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number, got {text!r}") from None
    if not math.isfinite(value) or value <= 0:
        raise argparse.ArgumentTypeError(f"must be a positive number, got {text!r}")
    return value


def laser_nm(args: argparse.Namespace) -> float:
    """Laser line for the computed intensities."""
    return DEFAULT_LASER_NM if args.laser_nm is None else float(args.laser_nm)


def check_outputs(args: argparse.Namespace, paths: list[str]) -> None:
    """Fail before any work when an output may not be written (or is an input, or twice)."""
    fileio.check_outputs(paths, args.force, input_paths(args))


def run(args: argparse.Namespace) -> int:
    """Read, measure, assign; write the CSV and figures (all or nothing); print the summary."""
    from vibrapol.compare import assign, candidate_from_modes
    from vibrapol.output.assignments import assignment_csv, assignment_summary

    outputs = [p for p in [args.output, *args.figure, *args.table] if p]
    check_outputs(args, outputs)
    formats = [fileio.figure_format(p) for p in args.figure]
    writers = [table_writer(p) for p in args.table]
    opts = assign_options(args)
    check_isotopologue_options(args)
    modes = read_modes(args.source, kind=args.kind)
    check_scale_for(args, modes, args.source)
    pair, bands = measure(args)
    if args.iso_vv is not None:
        opts["isotopologue_bands"] = measure(args, args.iso_vv, args.iso_vh)[1]
    cand = candidate_from_modes(
        modes, laser_nm=laser_nm(args), temperature_k=args.temperature_k,
        symmetry=not args.no_symmetry, detector=args.detector,
    )  # fmt: skip
    cand, iso_note = with_measured_isotopologue(args, cand, modes)
    level_note = ""
    if "model" not in opts:
        from vibrapol.compare.costs import model_for_basis

        opts["model"], level_note = model_for_basis(modes.provenance.basis)
    result = assign(cand, bands, pair=pair, **opts)
    notes = [n for n in (level_note, iso_note) if n]
    described = None if args.no_describe else mode_descriptions(modes, notes)
    if args.laser_nm is None:
        notes.append(f"laser line not given: computed intensities for {DEFAULT_LASER_NM:g} nm")
    files: list[tuple[str, str | bytes]] = []
    if args.output:
        files.append((args.output, assignment_csv(result, pair, notes, described)))
    files += [(p, write(result, described)) for p, write in zip(args.table, writers, strict=True)]
    if args.figure:
        from vibrapol.plotting.match import match_figure
        from vibrapol.plotting.style import figure_bytes

        fig = match_figure(result, pair)
        files += [(p, figure_bytes(fig, f)) for p, f in zip(args.figure, formats, strict=True)]
    write_outputs(args, files)  # all or nothing
    text = assignment_summary(result)
    if level_note:
        text += f"note: {level_note}\n"
    if args.laser_nm is None:
        text += f"laser line not given: computed intensities for {DEFAULT_LASER_NM:g} nm\n"
    text += f"computed intensities for a {DETECTOR_NOTES[args.detector]}\n"
    if not args.output:
        text += "\n" + assignment_csv(result, pair, notes, described)
    print_stdout(text)
    return 0
