"""Helpers shared by the subcommands: output handling.

Every subcommand checks all its outputs with :func:`check_output` before any work and writes
them with :func:`write_outputs` (all or nothing, see :mod:`vibrapol.fileio`).
"""

from __future__ import annotations

import argparse
import codecs
import os
import sys
import unicodedata
from collections.abc import Sequence

from vibrapol.errors import VibrapolError
from vibrapol.fileio import check_outputs, write_all

#: Argument names (dest) that hold input files, in every subcommand.
_INPUT_DESTS = ("source", "sources", "structures", "vv", "vh", "iso_vv", "iso_vh")


def add_output_arguments(parser: argparse.ArgumentParser, what: str = "output") -> None:
    """Add ``-o/--output`` and ``--force``."""
    parser.add_argument(
        "-o", "--output", metavar="FILE", help=f"write the {what} here (default: standard output)"
    )
    parser.add_argument("--force", action="store_true", help="overwrite an existing output file")


def input_paths(args: argparse.Namespace) -> list[str]:
    """The input files named on the command line (positional sources, --vv, --vh, --mixture)."""
    found: list[str] = []
    for dest in _INPUT_DESTS:
        value = getattr(args, dest, None)
        if isinstance(value, str):
            found.append(value)
        elif isinstance(value, list):
            found += [v for v in value if isinstance(v, str)]
    for group in getattr(args, "mixture", None) or []:
        found += [f.strip() for f in group.split(",") if f.strip()]
    return found


def check_output(args: argparse.Namespace, *more: str | None) -> None:
    """Fail early, before any work, if ``--output`` or another output may not be written.

    Checks each path (existence without ``--force``, directory, writability), that no two
    outputs are the same file and that no output is one of the inputs.
    """
    check_outputs([getattr(args, "output", None), *more], args.force, input_paths(args))


def write_outputs(
    args: argparse.Namespace, files: Sequence[tuple[str | None, str | bytes]]
) -> None:
    """Write every ``(path, data)`` with a path, all or nothing, and say so on stderr."""
    chosen = [(path, data) for path, data in files if path]
    write_all(chosen, args.force, input_paths(args))
    for path, _ in chosen:
        print(f"wrote {path}", file=sys.stderr)


def print_stdout(text: str) -> None:
    """Write ``text`` to standard output and flush it; a full disk is a one-line error."""
    try:
        sys.stdout.write(text)
        sys.stdout.flush()
    except BrokenPipeError:
        raise
    except OSError as exc:
        devnull_stdout()  # what is still buffered must not fail again at exit
        raise VibrapolError(
            f"standard output could not be written ({exc.strerror or exc})"
        ) from None


def emit(args: argparse.Namespace, text: str) -> None:
    """Write ``text`` to ``--output`` atomically, or to standard output."""
    if args.output:
        write_outputs(args, [(args.output, text)])
    else:
        print_stdout(text)


def devnull_stdout() -> None:
    """Point standard output at /dev/null so the interpreter's final flush cannot fail."""
    try:
        fileno = sys.stdout.fileno()
    except (AttributeError, OSError, ValueError):  # replaced by a test's capture: nothing to do
        return
    os.dup2(os.open(os.devnull, os.O_WRONLY), fileno)


#: ASCII stand-ins for the non-ASCII characters vibrapol prints.
_ASCII = {
    "±": "+/-", "×": "x", "·": "*", "°": " deg", "Å": "A", "≤": "<=", "≥": ">=", "≈": "~",
    "≠": "!=", "→": "->", "←": "<-", "–": "-", "—": "-", "−": "-", "…": "...", "′": "'",
    "″": "''", "∂": "d", "∥": "||", "⊥": "_|_", "√": "sqrt", "∞": "inf", "∑": "sum",
    "ᐟ": "/", "‖": "||", "⟨": "<", "⟩": ">", "µ": "u", "“": '"', "”": '"', "‘": "'", "’": "'",
    "α": "alpha", "β": "beta", "γ": "gamma", "δ": "delta", "ε": "epsilon", "η": "eta",
    "θ": "theta", "κ": "kappa", "λ": "lambda", "μ": "mu", "ν": "nu", "π": "pi", "ρ": "rho",
    "σ": "sigma", "τ": "tau", "φ": "phi", "χ": "chi", "ψ": "psi", "ω": "omega", "Γ": "Gamma",
    "Δ": "Delta", "Σ": "Sigma", "Π": "Pi", "Ω": "Omega", "Φ": "Phi",
}  # fmt: skip
_SUPERSCRIPTS = dict(zip("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺", "0123456789-+", strict=True))
_SUBSCRIPTS = dict(zip("₀₁₂₃₄₅₆₇₈₉", "0123456789", strict=True))


def _ascii_equivalent(text: str) -> str:
    """``text`` with each character an ASCII stream cannot take replaced by a stand-in."""
    out: list[str] = []
    previous_super = False
    for ch in text:
        is_super = ch in _SUPERSCRIPTS
        if is_super:
            out.append(("" if previous_super else "^") + _SUPERSCRIPTS[ch])
        elif ch in _SUBSCRIPTS:
            out.append(_SUBSCRIPTS[ch])
        elif ch in _ASCII:
            out.append(_ASCII[ch])
        else:
            plain = unicodedata.normalize("NFKD", ch).encode("ascii", "ignore").decode()
            out.append(plain or "?")
        previous_super = is_super
    return "".join(out)


def _ascii_replace(exc: UnicodeError) -> tuple[str, int]:
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    return _ascii_equivalent(exc.object[exc.start : exc.end]), exc.end


codecs.register_error("vibrapol-ascii", _ascii_replace)


def ascii_safe_streams() -> None:
    """Let stdout and stderr print what their encoding cannot take as ASCII stand-ins.

    Under ``LC_ALL=C`` with UTF-8 mode and locale coercion off, Python's streams are ASCII:
    '±' becomes '+/-', 'ρ' 'rho', 'Å' 'A', 'cm⁻¹' 'cm^-1' instead of an exception.
    """
    for stream in (sys.stdout, sys.stderr):
        encoding = getattr(stream, "encoding", None) or "ascii"
        try:
            "±ρÅ⁻¹γ²→".encode(encoding)
        except (UnicodeEncodeError, LookupError):
            reconfigure = getattr(stream, "reconfigure", None)
            if reconfigure is not None:
                reconfigure(errors="vibrapol-ascii")
