"""Assignments and rankings as CSV and text (for ``vibrapol match`` and ``vibrapol rank``)."""

from __future__ import annotations

import csv
import io
import math

from vibrapol.compare.ranking import Ranking
from vibrapol.compare.results import Assignment

#: Columns of the assignment CSV, one row per measured band.  ``mode`` holds the 1-based mode
#: numbers of the assigned computed band (a degenerate set as "4 5") and is empty for a band
#: left unassigned; ``delta_cm1`` = band_cm1 − mode_cm1_scaled; ``confidence`` see
#: :class:`~vibrapol.compare.results.AssignedBand`.
ASSIGNMENT_COLUMNS = (
    "band_cm1",
    "band_rho",
    "mode",
    "mode_cm1_scaled",
    "irrep",
    "mode_rho",
    "delta_cm1",
    "confidence",
    "band_rho_err",
    "band_area",
    "mode_cm1_harmonic",
    "component",
    "cost",
    "alternative",
)


def _num(value: float, fmt: str) -> str:
    return format(value, fmt) if math.isfinite(value) else ""


def assignment_csv(assignment: Assignment) -> str:
    """One row per measured band with the columns of :data:`ASSIGNMENT_COLUMNS`."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(ASSIGNMENT_COLUMNS)
    for b in assignment.bands:
        writer.writerow(
            [
                f"{b.band_cm1:.2f}",
                _num(b.band_rho, ".4f"),
                b.mode,
                _num(b.mode_cm1_scaled, ".2f"),
                b.irrep,
                _num(b.mode_rho, ".4f"),
                _num(b.delta_cm1, ".2f"),
                _num(b.confidence, ".4f"),
                _num(b.band_rho_err, ".4f"),
                _num(b.band_area, ".6g"),
                _num(b.mode_cm1, ".2f"),
                b.component,
                f"{b.cost:.3f}",
                b.alternative,
            ]
        )
    return buf.getvalue()


def _fmt(value: float, fmt: str = ".3f") -> str:
    return format(value, fmt) if math.isfinite(value) else "-"


def assignment_summary(assignment: Assignment) -> str:
    """A few lines: candidate, scale factor, scores, and a hint when little was assigned."""
    s = assignment.scores
    lines = [
        f"candidate: {assignment.label}",
        assignment.scale.describe(),
        f"assigned: {s.n_assigned} of {s.n_bands} measured bands; "
        f"{s.n_modes_in_range} computed bands in the measured range "
        f"{assignment.range_cm1[0]:.0f}–{assignment.range_cm1[1]:.0f} cm-1",
        f"rms error after scaling: {_fmt(s.rms_cm1, '.1f')} cm-1 "
        f"(largest {_fmt(s.max_abs_cm1, '.1f')})",
        f"polarization agreement: {_fmt(s.polarization_agreement, '.2f')}   "
        f"spectral similarity: {_fmt(s.similarity)}",
        f"explained share of measured area: {_fmt(s.explained_fraction, '.2f')}   "
        f"share of computed intensity found: {_fmt(s.predicted_found_fraction, '.2f')}",
        f"overall score: {s.overall:.3f} (geometric mean of the shares, the position and "
        "polarization agreements and the similarity; 1 = perfect)",
    ]
    if s.n_bands and s.n_assigned < 0.5 * s.n_bands:
        lines.append(
            "note: fewer than half of the bands were assigned; for a low level of theory widen "
            "the position tolerance (--position-tolerance) or check the scale factor"
        )
    return "\n".join(lines) + "\n"


def ranking_text(ranking: Ranking) -> str:
    """The ranking table: one line per candidate, best first."""
    head = (
        f"{'rank':>4}  {'overall':>7}  {'assigned':>8}  {'rms/cm-1':>8}  {'pol':>5}  "
        f"{'similar':>7}  {'scale':>14}  candidate"
    )
    lines = [head]
    for k, a in enumerate(ranking.assignments, start=1):
        s = a.scores
        err = a.scale.factor_err
        scale = f"{a.scale.factor:.4f}" + (f"±{err:.4f}" if math.isfinite(err) and err else "")
        lines.append(
            f"{k:>4}  {s.overall:>7.3f}  {s.n_assigned:>3}/{s.n_bands:<4}  "
            f"{_fmt(s.rms_cm1, '.1f'):>8}  {_fmt(s.polarization_agreement, '.2f'):>5}  "
            f"{_fmt(s.similarity):>7}  {scale:>14}  {a.label}"
        )
    if len(ranking) > 1:
        lines.append(f"margin of the best over the runner-up: {ranking.margin():.3f}")
    return "\n".join(lines) + "\n"
