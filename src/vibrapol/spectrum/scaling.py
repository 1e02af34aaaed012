"""Frequency scaling: one factor, two regions, or a published factor checked against the data.

Harmonic wavenumbers from a given method and basis are systematically too high; multiplying by
an empirical factor brings them close to observed fundamentals.  :data:`SCALE_FACTORS` holds
published fundamental-frequency factors (``data/scale_factors.csv``), each row as it was seen in
the place named by its ``where_seen`` keys (:data:`WHERE_SEEN`), with the source it cites
(:data:`SOURCES`, with DOI).  None of the values was read in a table of the paper itself: most
come from compilations that cite the paper by DOI, which every description says.

A factor is named ``METHOD/BASIS`` with an optional ``@SOURCE`` (``B3LYP/6-31G*@SR96``).  When
several sources give the pair, the first of :data:`DEFAULT_SOURCE_ORDER` is used: direct fits to
fundamentals (the Radom group's 2007 and 1996 evaluations, then CCCBDB) before factors derived
from zero-point factors.  MP2 and double hybrids need the core treatment (``MP2(FC)``,
``MP2(AE)``) whenever the table holds both kinds for the basis.
"""

from __future__ import annotations

import csv
import io
import math
import re
import warnings
from dataclasses import dataclass
from functools import cache
from importlib import resources

import numpy as np

from vibrapol.errors import AccuracyWarning, VibrapolError

#: Publications behind the factors: key → (citation, DOI or '').
SOURCES: dict[str, tuple[str, str]] = {
    "SR96": ("A. P. Scott, L. Radom, J. Phys. Chem. 100, 16502 (1996)", "10.1021/jp960976r"),
    "MMR07": (
        "J. P. Merrick, D. Moran, L. Radom, J. Phys. Chem. A 111, 11683 (2007)",
        "10.1021/jp073974n",
    ),
    "IJK05": (
        '"Uncertainties in Scaling Factors for ab Initio Vibrational Frequencies" (believed '
        "to be K. K. Irikura, R. D. Johnson III, R. N. Kacker, J. Phys. Chem. A 109, 8430 "
        "(2005); authors and DOI not verified)",
        "",
    ),
    "K17": (
        "D. O. Kashinski et al., J. Phys. Chem. A (2017)",
        "10.1021/acs.jpca.6b12147",
    ),
    "CCCBDB": (
        "NIST Computational Chemistry Comparison and Benchmark DataBase, SRD 101, Release 22 "
        "(2022), precomputed vibrational scaling factors",
        "",
    ),
    "TDB": (
        "Truhlar group database of frequency scale factors, after I. M. Alecu, J. Zheng, "
        "Y. Zhao, D. G. Truhlar, J. Chem. Theory Comput. 6, 2872 (2010)",
        "10.1021/ct100326h",
    ),
    "JCTC16": (
        "a J. Chem. Theory Comput. paper (authors and title not seen)",
        "10.1021/acs.jctc.6b00554",
    ),
}

#: Where a value was seen: key → place (a compilation that cites the source, or the source).
WHERE_SEEN: dict[str, str] = {
    "W-COLL": "github.com/liyuanhe211/Collection_of_Frequency_Scale_Factors (README @ b842a1b2)",
    "W-GV": "github.com/patonlab/GoodVibes, goodvibes/vib_scale_factors.py @ 23ff956b",
    "W-ARC": "github.com/ReactionMechanismGenerator/ARC, data/freq_scale_factors.yml @ 0fbb4e03",
    "W-RMG": "github.com/ReactionMechanismGenerator/RMG-database, quantum_corrections @ 0005cf62",
    "W-IJK": "the paper's abstract (discovery.researcher.life)",
    "W-FB": "github.com/leeping/forcebalance, src/readfrq.py @ 0db4c9ae",
    "W-CPP": "C++ header Vibrations of the ULYSSES semi-empirical package",
    "W-CCL": "Computational Chemistry List summary, 1995 (server.ccl.net)",
}

#: Sources in the order used when a pair has several and none is named.
DEFAULT_SOURCE_ORDER = ("MMR07", "SR96", "CCCBDB", "K17", "IJK05", "TDB", "JCTC16")

#: Core treatments: frozen core, all electrons, a plain label read as frozen core (a guess),
#: not stated.  '' for methods without the distinction.
CORE_NOTES = {
    "FC": "frozen core",
    "AE": "all electrons",
    "FC?": "frozen core by the source's plain label (a guess)",
    "unstated": "core treatment not stated",
}


@dataclass(frozen=True)
class PublishedFactor:
    """One row of :data:`SCALE_FACTORS`: a fundamental-frequency factor as seen in a source."""

    method: str
    core: str
    basis: str
    factor: float
    source: str
    where_seen: tuple[str, ...]
    note: str = ""
    label: str = ""

    @property
    def name(self) -> str:
        """``METHOD/BASIS`` with the core treatment, e.g. ``MP2(FC)/6-31G(d)``."""
        core = f"({self.core.rstrip('?')})" if self.core in ("FC", "FC?", "AE") else ""
        return f"{self.method}{core}/{self.basis}"

    @property
    def doi(self) -> str:
        """DOI of the source ('' when none was seen)."""
        return SOURCES[self.source][1]

    @property
    def citation(self) -> str:
        """The source as a reference."""
        cite, doi = SOURCES[self.source]
        return f"{cite}, doi:{doi}" if doi else cite

    def short(self) -> str:
        """Compact form for figure captions: pair, source key, DOI and where seen."""
        doi = f", doi:{self.doi}" if self.doi else ""
        return f"{self.name}, {self.source}{doi}, as seen in {', '.join(self.where_seen)}"

    def describe(self) -> str:
        """One line: the factor, the pair, the source with DOI and where the value was seen."""
        core = f" ({CORE_NOTES[self.core]})" if self.core else ""
        seen = ", ".join(self.where_seen)
        text = (
            f"{self.factor:g} for {self.name}{core}, source {self.source}: {self.citation}; "
            f"value as seen in {seen}"
        )
        if "W-IJK" in self.where_seen:
            text += " (the paper's abstract)"
        else:
            text += " (compilations citing the source; the paper's own table was not seen)"
        return text + (f"; {self.note}" if self.note else "")


def _read_table() -> tuple[PublishedFactor, ...]:
    text = resources.files("vibrapol").joinpath("data/scale_factors.csv").read_text("utf-8")
    lines = [line for line in io.StringIO(text) if not line.startswith("#")]
    return tuple(
        PublishedFactor(
            method=r["method"],
            core=r["core"],
            basis=r["basis"],
            factor=float(r["factor"]),
            source=r["source"],
            where_seen=tuple(r["where_seen"].split()),
            note=r["note"],
            label=r["label"],
        )
        for r in csv.DictReader(lines)
    )


#: Every published factor vibrapol knows (fundamentals), in the order of the data file.
SCALE_FACTORS: tuple[PublishedFactor, ...] = _read_table()

#: Spellings of one method (after removing spaces, hyphens, brackets; upper case).
_METHOD_ALIASES = {"PBE1PBE": "PBE0", "PBEPBE": "PBE"}
_CORE_SUFFIXES = {"FC": "FC", "AE": "AE", "FULL": "AE"}


def _squash(text: str) -> str:
    return re.sub(r"[\s\-_()=,]", "", text).upper()


@cache
def _families() -> frozenset[str]:
    return frozenset(_squash(f.method) for f in SCALE_FACTORS) | {"HF"}


def parse_method(method: str) -> tuple[str, str]:
    """(normalised method, core) from a spelling such as ``RB3LYP``, ``MP2(FC)``, ``MP2=FULL``.

    Case, spaces, hyphens and brackets do not matter; a leading R, U or RO (restricted,
    unrestricted) is dropped; PBE1PBE is PBE0 and PBEPBE is PBE.  The core is ``"FC"``,
    ``"AE"`` or '' (not given).
    """
    m = _squash(method)
    core = ""
    for suffix, kind in _CORE_SUFFIXES.items():
        if m.endswith(suffix) and m[: -len(suffix)] in _families():
            m, core = m[: -len(suffix)], kind
            break
    m = _METHOD_ALIASES.get(m, m)
    for prefix in ("RO", "R", "U"):
        rest = m[len(prefix) :]
        if m.startswith(prefix) and _METHOD_ALIASES.get(rest, rest) in _families():
            m = _METHOD_ALIASES.get(rest, rest)
            break
    return m, core


def normalize_basis(basis: str) -> str:
    """A basis-set name compared spelling-free: 6-31G* = 6-31G(d), 6-31G** = 6-31G(d,p)."""
    b = re.sub(r"\s", "", basis).upper()
    b = re.sub(r"\((CARTESIAN|SPHERICAL)[^)]*\)", "", b)  # the engine records the d-shell form
    b = b.replace("**", "(D,P)").replace("*", "(D)")
    return re.sub(r"[\-_]", "", b)


def published_factors(method: str, basis: str) -> list[PublishedFactor]:
    """All rows for a method/basis pair, any core treatment (spelling variants accepted)."""
    m, _ = parse_method(method)
    b = normalize_basis(basis)
    return [f for f in SCALE_FACTORS if _squash(f.method) == m and normalize_basis(f.basis) == b]


def _choices(rows: list[PublishedFactor]) -> str:
    order = {k: i for i, k in enumerate(DEFAULT_SOURCE_ORDER)}
    rows = sorted(rows, key=lambda r: order.get(r.source, len(order)))
    return "; ".join(f"{r.name}@{r.source} = {r.factor:g}" for r in rows)


def lookup_factor(spec: str, source: str | None = None) -> PublishedFactor:
    """The published factor named ``METHOD/BASIS[@SOURCE]``.

    Parameters
    ----------
    spec : str
        For example ``"B3LYP/6-31G*"``, ``"HF/6-31G(d)@SR96"``, ``"MP2(FC)/6-31G*"``.
    source : str, optional
        Source key (:data:`SOURCES`), instead of ``@SOURCE``; default: the first source of
        :data:`DEFAULT_SOURCE_ORDER` that lists the pair.

    Raises
    ------
    VibrapolError
        When the pair is not in the table, when the source does not list it, when the core
        treatment is needed and not given (the message names the choices), or when the chosen
        source gives two values.
    """
    text, _, at = spec.partition("@")
    source = (source or at).strip() or None
    if "/" not in text:
        raise VibrapolError(
            f"scale factor lookup needs METHOD/BASIS[@SOURCE], e.g. B3LYP/6-31G*, got {spec!r}"
        )
    method, basis = text.split("/", 1)
    _, core = parse_method(method)
    rows = published_factors(method, basis)
    if not rows:
        raise VibrapolError(
            f"no published scale factor for {text!r} in vibrapol's table "
            "(vibrapol.spectrum.scaling.SCALE_FACTORS); give a factor with --scale instead"
        )
    if source is not None:
        key = source.upper()
        picked = [r for r in rows if r.source.upper() == key]
        if not picked:
            have = ", ".join(dict.fromkeys(r.source for r in rows))
            raise VibrapolError(f"source {source!r} gives no factor for {text!r}; have: {have}")
        rows = picked
    if core:
        rows = [r for r in rows if r.core.rstrip("?") == core]
        if not rows:
            raise VibrapolError(f"no published scale factor for {text!r} with that core treatment")
    elif len({r.core for r in rows}) > 1:
        raise VibrapolError(
            f"{text!r} is ambiguous: frozen-core and all-electron factors differ; name one of "
            f"{_choices(rows)}"
        )
    order = {k: i for i, k in enumerate(DEFAULT_SOURCE_ORDER)}
    best = min(order.get(r.source, len(order)) for r in rows)
    rows = [r for r in rows if order.get(r.source, len(order)) == best]
    if len({r.factor for r in rows}) > 1:
        raise VibrapolError(
            f"{rows[0].source} is seen with two values for {text!r} ({_choices(rows)}); "
            "give the factor with --scale"
        )
    return rows[0]


def check_factor_belongs(entry: PublishedFactor, method: str, basis: str, where: str) -> None:
    """Refuse a published factor for another method or basis than the data's.

    Parameters
    ----------
    entry : PublishedFactor
    method, basis : str
        The data's provenance ('' when the source does not record it).
    where : str
        The data's file, for the message.

    Raises
    ------
    VibrapolError
        When the method, the basis or the core treatment differs (spellings such as RHF = HF,
        6-31G* = 6-31G(d) and letter case do not count).

    Warns
    -----
    AccuracyWarning
        When the data record no method or basis: the factor cannot be checked.
    """
    if not method or not basis:
        warnings.warn(
            f"{where}: the source records no method/basis, so the {entry.name} scale factor "
            "could not be checked against it",
            AccuracyWarning,
            stacklevel=3,
        )
        return
    m, core = parse_method(method)
    same = m == _squash(entry.method) and normalize_basis(basis) == normalize_basis(entry.basis)
    if core and entry.core in ("FC", "FC?", "AE") and core != entry.core.rstrip("?"):
        same = False
    if not same:
        raise VibrapolError(
            f"{where}: the {entry.name} scale factor does not belong to this output, computed "
            f"with {method}/{basis}; use the factor of its own method and basis, or --scale F "
            "to apply a factor deliberately"
        )


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
    entry : PublishedFactor, optional
        The published factor used (checked against the data by :meth:`check_belongs`).
    """

    factor: float = 1.0
    factor_high: float | None = None
    split_cm1: float | None = None
    note: str = ""
    entry: PublishedFactor | None = None

    def __post_init__(self) -> None:
        for name in ("factor", "factor_high"):
            value = getattr(self, name)
            if value is not None and not (math.isfinite(value) and 0.5 <= value <= 1.5):
                raise VibrapolError(f"scale {name} must lie between 0.5 and 1.5, got {value}")
        if (self.factor_high is None) != (self.split_cm1 is None):
            raise VibrapolError("a two-region scale needs both factor_high and split_cm1")

    @classmethod
    def published(cls, spec: str, source: str | None = None) -> FrequencyScale:
        """A single factor from the table (see :func:`lookup_factor`)."""
        entry = lookup_factor(spec, source)
        return cls(entry.factor, note=entry.describe(), entry=entry)

    @property
    def is_unscaled(self) -> bool:
        """True when no wavenumber changes."""
        return self.factor == 1.0 and self.factor_high is None

    def check_belongs(self, method: str, basis: str, where: str) -> None:
        """:func:`check_factor_belongs` for a published factor; nothing for a given one."""
        if self.entry is not None:
            check_factor_belongs(self.entry, method, basis, where)

    def apply(self, freqs_cm1: np.ndarray) -> np.ndarray:
        """Scaled wavenumbers (the sign of imaginary modes is kept)."""
        f = np.asarray(freqs_cm1, dtype=float)
        if self.factor_high is None:
            return f * self.factor
        return np.where(np.abs(f) < self.split_cm1, f * self.factor, f * self.factor_high)

    def describe(self, short: bool = False) -> str:
        """One line for headers and captions (``short``: the compact source of a figure)."""
        if self.is_unscaled:
            return "unscaled (harmonic wavenumbers)"
        if self.factor_high is None:
            text = f"scaled by {self.factor:g}"
        else:
            text = (
                f"scaled by {self.factor:g} below {self.split_cm1:g} cm-1 "
                f"and {self.factor_high:g} above"
            )
        note = self.entry.short() if short and self.entry is not None else self.note
        return f"{text} [{note}]" if note else text


NO_SCALE = FrequencyScale()
