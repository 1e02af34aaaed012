"""Ranking of candidate structures (isomers, conformers, mixtures, levels of theory)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from vibrapol.compare.assignment import assign
from vibrapol.compare.candidates import Candidate
from vibrapol.compare.results import Assignment
from vibrapol.errors import VibrapolError
from vibrapol.measured import MeasuredBands, PolarizedPair

if TYPE_CHECKING:
    import pandas as pd


@dataclass(frozen=True, eq=False)
class Ranking:
    """Candidates ordered by their overall score, best first.

    Attributes
    ----------
    assignments : tuple of Assignment
        Best first: highest ``scores.overall``; ties broken by the lower total cost.
    """

    assignments: tuple[Assignment, ...]

    def __repr__(self) -> str:
        from vibrapol.display import ranking_lines

        return "\n".join(ranking_lines(self))

    def _repr_html_(self) -> str:
        from vibrapol.display import ranking_html

        return ranking_html(self)

    def to_dataframe(self) -> pd.DataFrame:
        """The ranking as a pandas DataFrame, one row per candidate, best first.

        Columns and their order are those of the CSV file (the same rows, unrounded);
        ``df.attrs`` holds the conditions of its ``#`` lines.  Needs pandas (imported here).
        See :func:`vibrapol.output.frames.ranking_dataframe`.
        """
        from vibrapol.output.frames import ranking_dataframe

        return ranking_dataframe(self)

    def __len__(self) -> int:
        return len(self.assignments)

    @property
    def best(self) -> Assignment:
        """The winning candidate's assignment."""
        return self.assignments[0]

    @property
    def labels(self) -> tuple[str, ...]:
        """Candidate names, best first."""
        return tuple(a.label for a in self.assignments)

    def margin(self) -> float:
        """Overall score of the best minus that of the runner-up (NaN for one candidate)."""
        if len(self.assignments) < 2:
            return float("nan")
        return self.assignments[0].scores.overall - self.assignments[1].scores.overall


def rank(
    candidates: Sequence[Candidate],
    bands: MeasuredBands,
    *,
    pair: PolarizedPair | None = None,
    **options: Any,
) -> Ranking:
    """Assign every candidate to the same measured bands and order them by overall score.

    Parameters
    ----------
    candidates : sequence of Candidate
        From :func:`~vibrapol.compare.candidates.candidate_from_modes` or
        :func:`~vibrapol.compare.candidates.mixture_candidate` (a Boltzmann mixture of
        conformers is one candidate).
    bands : MeasuredBands
    pair : PolarizedPair, optional
        The cleaned measured spectra (for the spectral similarity).
    **options
        Passed to :func:`~vibrapol.compare.assignment.assign` for every candidate.

    Raises
    ------
    VibrapolError
        With no candidates, or two with the same label.
    """
    if not candidates:
        raise VibrapolError("ranking needs at least one candidate")
    labels = [c.label for c in candidates]
    dup = sorted({lab for lab in labels if labels.count(lab) > 1})
    if dup:
        raise VibrapolError(f"candidate labels must differ; repeated: {', '.join(dup)}")
    results = [assign(c, bands, pair=pair, **options) for c in candidates]
    results.sort(key=lambda a: (-a.scores.overall, a.scores.total_cost))
    return Ranking(tuple(results))
