"""Frequency scaling: one factor, two regions, or a factor from a small table of published ones.

Harmonic wavenumbers from a given method and basis are systematically too high; multiplying by
an empirical factor brings them close to observed fundamentals.  The table holds only factors
from two published compilations, each marked with whether it was checked against the paper
here or written down from memory.

References
----------
.. [SR1996] A. P. Scott and L. Radom, J. Phys. Chem. 100, 16502 (1996), table of scale factors
   for fundamental vibrational frequencies.
.. [MMR2007] J. P. Merrick, D. Moran and L. Radom, J. Phys. Chem. A 111, 11683 (2007), table of
   scale factors for fundamental frequencies.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from vibrapol.errors import VibrapolError


@dataclass(frozen=True)
class PublishedFactor:
    """One entry of :data:`SCALE_FACTORS` (fundamental frequencies)."""

    method: str
    basis: str
    factor: float
    source: str
    year: int
    from_memory: bool


_SR = "Scott & Radom, J. Phys. Chem. 100, 16502 (1996)"
_MMR = "Merrick, Moran & Radom, J. Phys. Chem. A 111, 11683 (2007)"

#: Published scale factors for fundamentals.  None of these could be checked against the papers
#: in this workplace (no access to the journals): every value is marked ``from_memory=True`` and
#: should be confirmed against the cited table before use in a publication.
SCALE_FACTORS: tuple[PublishedFactor, ...] = (
    PublishedFactor("HF", "3-21G", 0.9085, _SR, 1996, True),
    PublishedFactor("HF", "6-31G(d)", 0.8953, _SR, 1996, True),
    PublishedFactor("HF", "6-31+G(d)", 0.8970, _SR, 1996, True),
    PublishedFactor("HF", "6-31G(d,p)", 0.8992, _SR, 1996, True),
    PublishedFactor("HF", "6-311G(d,p)", 0.9051, _SR, 1996, True),
    PublishedFactor("MP2", "6-31G(d)", 0.9427, _SR, 1996, True),
    PublishedFactor("BLYP", "6-31G(d)", 0.9945, _SR, 1996, True),
    PublishedFactor("B3LYP", "6-31G(d)", 0.9614, _SR, 1996, True),
    PublishedFactor("B3PW91", "6-31G(d)", 0.9573, _SR, 1996, True),
    PublishedFactor("B3LYP", "6-31G(d)", 0.960, _MMR, 2007, True),
)


#: Closed-shell spellings that name the same method as the table's entry (restricted HF and
#: Kohn–Sham: the published factors are for closed-shell molecules).
_METHOD_ALIASES = {"RHF": "HF", "RB3LYP": "B3LYP"}


def _norm_method(method: str) -> str:
    m = re.sub(r"[\s\-_]", "", method).upper()
    return _METHOD_ALIASES.get(m, m)


def _norm_basis(basis: str) -> str:
    b = re.sub(r"\s", "", basis).upper()
    # the engine records "6-31g* (Cartesian d)"; the d-shell form is not part of the name
    b = re.sub(r"\((CARTESIAN|SPHERICAL)[^)]*\)", "", b)
    b = b.replace("**", "(D,P)").replace("*", "(D)")
    return b


def published_factors(method: str, basis: str) -> list[PublishedFactor]:
    """All table entries for a method/basis pair (spelling variants such as 6-31G* accepted)."""
    m, b = _norm_method(method), _norm_basis(basis)
    return [f for f in SCALE_FACTORS if _norm_method(f.method) == m and _norm_basis(f.basis) == b]


def lookup_factor(method_basis: str, source: str | None = None) -> PublishedFactor:
    """The published factor for ``"METHOD/BASIS"``.

    Parameters
    ----------
    method_basis : str
        For example ``"B3LYP/6-31G*"`` or ``"HF/6-31G(d)"``.
    source : str, optional
        A word from the reference (``"Scott"``, ``"Merrick"``, ``"2007"``) to choose between
        entries; default: the most recent compilation that lists the pair.

    Raises
    ------
    VibrapolError
        When the pair is not in the table (the message lists the pairs that are).
    """
    if "/" not in method_basis:
        raise VibrapolError(
            f"scale factor lookup needs METHOD/BASIS, e.g. B3LYP/6-31G*, got {method_basis!r}"
        )
    method, basis = method_basis.split("/", 1)
    found = published_factors(method, basis)
    if source:
        found = [f for f in found if source.lower() in f.source.lower()]
    if not found:
        known = sorted({f"{f.method}/{f.basis}" for f in SCALE_FACTORS})
        raise VibrapolError(
            f"no published scale factor for {method_basis!r} in vibrapol's table "
            f"(known: {', '.join(known)}); give a factor with --scale instead"
        )
    return max(found, key=lambda f: f.year)


@dataclass(frozen=True)
class FrequencyScale:
    """Multiplicative scaling of harmonic wavenumbers, optionally in two regions.

    Attributes
    ----------
    factor : float
        Factor for every mode (or for modes below ``split_cm1``).
    factor_high : float, optional
        Factor for modes at or above ``split_cm1`` (X–H stretches are often scaled separately).
    split_cm1 : float, optional
        Boundary between the regions, compared with the *unscaled* wavenumber.
    note : str
        Where the factor came from (for headers and captions).
    """

    factor: float = 1.0
    factor_high: float | None = None
    split_cm1: float | None = None
    note: str = ""

    def __post_init__(self) -> None:
        for name in ("factor", "factor_high"):
            value = getattr(self, name)
            if value is not None and not (math.isfinite(value) and 0.5 <= value <= 1.5):
                raise VibrapolError(f"scale {name} must lie between 0.5 and 1.5, got {value}")
        if (self.factor_high is None) != (self.split_cm1 is None):
            raise VibrapolError("a two-region scale needs both factor_high and split_cm1")

    @classmethod
    def published(cls, method_basis: str, source: str | None = None) -> FrequencyScale:
        """A single factor from the table (see :func:`lookup_factor`)."""
        entry = lookup_factor(method_basis, source)
        memo = ", from memory, confirm against the paper" if entry.from_memory else ""
        return cls(
            entry.factor,
            note=f"{entry.factor} for {entry.method}/{entry.basis} ({entry.source}{memo})",
        )

    def apply(self, freqs_cm1: np.ndarray) -> np.ndarray:
        """Scaled wavenumbers (the sign of imaginary modes is kept)."""
        f = np.asarray(freqs_cm1, dtype=float)
        if self.factor_high is None:
            return f * self.factor
        return np.where(np.abs(f) < self.split_cm1, f * self.factor, f * self.factor_high)

    def describe(self) -> str:
        """One line for headers and captions."""
        if self.factor == 1.0 and self.factor_high is None:
            return "unscaled"
        if self.factor_high is None:
            text = f"scaled by {self.factor:g}"
        else:
            text = (
                f"scaled by {self.factor:g} below {self.split_cm1:g} cm-1 "
                f"and {self.factor_high:g} above"
            )
        return f"{text} [{self.note}]" if self.note else text


NO_SCALE = FrequencyScale()
