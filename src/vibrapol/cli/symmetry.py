"""Point group, vibrational representation and selection rules of a structure or mode source.

Prints the point group, Γ_vib reduced into symmetry species, and for each species whether its
fundamentals are IR-active, Raman-active, and polarized (totally symmetric) or depolarized
(ρ_linear = 3/4) in the Raman spectrum.  With a source that carries normal modes (a
quantum-chemistry output or *.modes.json) it also gives the species of every mode.
"""

from __future__ import annotations

import argparse
import contextlib
import warnings
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from vibrapol.cli._common import add_output_arguments, check_output, emit
from vibrapol.cli._options import add_kind_argument
from vibrapol.errors import OptionError, VibrapolWarning
from vibrapol.modeset import ModeSet
from vibrapol.output.symmetry import symmetry_json, symmetry_text
from vibrapol.sources import read_modes
from vibrapol.sources.registry import sniff_text
from vibrapol.structure import read_structure
from vibrapol.symmetry import DEFAULT_TOLERANCE_ANG, analyse_modes, find_point_group
from vibrapol.textio import read_text


def add_symmetry_arguments(parser: argparse.ArgumentParser) -> None:
    """``--symmetry-tolerance-ang`` and ``--symmetrize`` (shared with ``vibrapol table``)."""
    parser.add_argument(
        "--symmetry-tolerance-ang",
        type=float,
        default=DEFAULT_TOLERANCE_ANG,
        metavar="ANG",
        help="largest distance between an atom and the image of its partner under a symmetry "
        f"operation (default: {DEFAULT_TOLERANCE_ANG} Å)",
    )
    parser.add_argument(
        "--symmetrize",
        action="store_true",
        help="average the Hessian and the polarizability derivative tensors over the point group "
        "before labelling, which changes frequencies and activities slightly (announced in the "
        "output); refused for sources with only activities and ratios. Default: off, the "
        "numbers are the source's and mixed modes are named in a warning",
    )


def recorded_warnings() -> contextlib.AbstractContextManager[list[str]]:
    """Collect the texts of vibrapol warnings raised inside the block, and still show them.

    The texts go into the header of the file written, so that CSV and JSON users see every
    warning stderr showed.
    """
    return _recorder()


@contextlib.contextmanager
def _recorder() -> Iterator[list[str]]:
    texts: list[str] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", VibrapolWarning)
            yield texts
    finally:
        for w in caught:
            if issubclass(w.category, VibrapolWarning):
                texts.append(str(w.message))
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        texts[:] = list(dict.fromkeys(texts))


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``vibrapol symmetry``."""
    parser.add_argument(
        "source",
        help="structure file (any format ase reads, e.g. .xyz) or a quantum-chemistry output / "
        "*.modes.json with normal modes",
    )
    add_kind_argument(parser)
    parser.add_argument(
        "--format", choices=("text", "json"), default="text", help="output format (default text)"
    )
    parser.add_argument("--characters", action="store_true", help="also print the character table")
    add_symmetry_arguments(parser)
    add_output_arguments(parser, "report")


def read_structure_or_modes(
    path: str, kind: str | None = None
) -> ModeSet | tuple[np.ndarray, np.ndarray]:
    """A ModeSet when ``path`` is a known mode source, else (atomic numbers, coordinates in Å).

    Raises
    ------
    InputFormatError
        When the file is missing, or neither a mode source nor a structure with coordinates.
    """
    if kind:
        return read_modes(path, kind=kind)
    text = read_text(path)
    if sniff_text(text) is not None:
        return read_modes(path)
    atoms = read_structure(path)
    return atoms.get_atomic_numbers(), atoms.get_positions()


def run(args: argparse.Namespace) -> int:
    """Find the point group, reduce Γ_vib, label the modes if there are any, print."""
    check_output(args)
    with recorded_warnings() as texts:
        data = read_structure_or_modes(args.source, args.kind)
        symmetry = None
        if isinstance(data, ModeSet):
            group = find_point_group(
                data.atomic_numbers,
                data.coordinates_ang,
                data.masses_da,
                tolerance_ang=args.symmetry_tolerance_ang,
                where=args.source,
            )
            if data.n_modes:
                symmetry = analyse_modes(data, group, symmetrize=args.symmetrize)
        else:
            if args.symmetrize:
                raise OptionError(
                    f"{args.source}: --symmetrize needs normal modes; a structure has none"
                )
            z, xyz = data
            group = find_point_group(
                z, xyz, tolerance_ang=args.symmetry_tolerance_ang, where=args.source
            )
    source = str(Path(args.source))
    if args.format == "json":
        emit(args, symmetry_json(group, symmetry=symmetry, source=source, warnings=texts))
    else:
        emit(
            args,
            symmetry_text(
                group,
                symmetry=symmetry,
                source=source,
                characters=args.characters,
                warnings=texts,
            ),
        )
    return 0
