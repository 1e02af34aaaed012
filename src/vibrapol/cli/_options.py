"""Options that several subcommands share: one definition each, so a name has one meaning.

Every help line gives the unit and the default; placeholders are the same for the same idea
(``NM``, ``K``, ``CM1``, ``LOW:HIGH``, ``F``, ``N``).
"""

from __future__ import annotations

import argparse

from vibrapol.errors import VibrapolError
from vibrapol.invariants import DEGENERACY_TOL_CM1
from vibrapol.sources import readers

#: The laser caution, shown once per command that plans a measurement (below its options).
LASER_CAUTION = (
    "Caution: laser radiation can injure eyes and skin; follow your institution's laser safety "
    "rules and local regulations."
)


def add_kind_argument(parser: argparse.ArgumentParser) -> None:
    """``--kind``: the reader to use instead of recognising the file by its content."""
    parser.add_argument(
        "--kind",
        choices=sorted(readers()),
        metavar="KIND",
        help="input kind: " + ", ".join(sorted(readers())) + " (default: from the content)",
    )


def add_no_symmetry_argument(parser: argparse.ArgumentParser) -> None:
    """``--no-symmetry``: no point group, so no species labels; sets from frequencies alone."""
    parser.add_argument(
        "--no-symmetry",
        action="store_true",
        help="do not find the point group: no species labels, and degenerate sets from the "
        "frequencies alone (within --degeneracy-tol-cm1)",
    )


def add_temperature_argument(parser: argparse.ArgumentParser) -> None:
    """``--temperature-k``: the sample temperature."""
    parser.add_argument(
        "--temperature-k",
        type=float,
        default=298.15,
        metavar="K",
        help="sample temperature in kelvin (default 298.15)",
    )


def add_degeneracy_argument(parser: argparse.ArgumentParser, extra: str = "") -> None:
    """``--degeneracy-tol-cm1``: modes closer than this form one band."""
    parser.add_argument(
        "--degeneracy-tol-cm1",
        type=float,
        default=DEGENERACY_TOL_CM1,
        metavar="CM1",
        help=f"modes closer than this (cm-1) form one band{extra} (default {DEGENERACY_TOL_CM1})",
    )


def add_figure_width_argument(parser: argparse.ArgumentParser, default: str) -> None:
    """``--width``: figure width."""
    parser.add_argument(
        "--width",
        default=default,
        metavar="single|double|INCHES",
        help=f"figure width: single or double journal column, or inches (default {default})",
    )


def figure_width(text: str) -> str | float:
    """The value of ``--width``: ``"single"``, ``"double"`` or a width in inches."""
    if text in ("single", "double"):
        return text
    try:
        return float(text)
    except ValueError:
        raise VibrapolError(
            f"--width must be single, double or a number of inches, got {text!r}"
        ) from None


def add_isotopes_argument(
    parser: argparse.ArgumentParser | argparse._ArgumentGroup,
    what: str,
    default: str = "the source's masses",
) -> None:
    """``--isotopes SPEC``: other isotopes on the same molecule (``vibrapol.isotopes``)."""
    parser.add_argument(
        "--isotopes",
        metavar="SPEC",
        help=f"{what}: comma-separated ELEMENT=MASS (every atom of that element) or ATOM=MASS "
        "(atom number from 1 in the source's order; wins over its element), masses in Da, e.g. "
        "H=2.01410178 for the fully deuterated molecule; frequencies and modes from the "
        "Hessian rebuilt from the source's modes, Raman numbers from its ∂α/∂x (refused "
        f"without them; default: {default})",
    )
