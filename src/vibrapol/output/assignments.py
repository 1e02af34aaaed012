"""Assignments and rankings as CSV, text, Markdown and LaTeX (``vibrapol match`` and ``rank``)."""

from __future__ import annotations

import math
import os
from collections.abc import Sequence

from vibrapol.compare.ranking import Ranking
from vibrapol.compare.results import Assignment
from vibrapol.measured import PolarizedPair
from vibrapol.output.tables import csv_document

#: Columns of the assignment CSV, one row per measured band.  ``mode`` holds the 1-based mode
#: numbers of the assigned computed band (a degenerate set as "4 5") and is empty for a band
#: left unassigned; ``delta_cm1`` = band_cm1 − mode_cm1_scaled; ``confidence`` see
#: :class:`~vibrapol.compare.results.AssignedBand`; ``description`` says what the assigned mode
#: does (:mod:`vibrapol.describe`; empty when unassigned or not described).
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
    "description",
)


def band_description(mode: str, descriptions: Sequence[str] | None) -> str:
    """The description of an assigned band: that of its first mode ('4 5' → mode 4)."""
    if not mode or not descriptions:
        return ""
    first = int(mode.split()[0]) - 1
    return descriptions[first] if 0 <= first < len(descriptions) else ""


def _num(value: float, fmt: str) -> str:
    return format(value, fmt) if math.isfinite(value) else ""


def assignment_conditions(
    assignment: Assignment, pair: PolarizedPair | None = None, notes: Sequence[str] = ()
) -> list[tuple[str, str]]:
    """(name, value) pairs saying how an assignment was made, for file headers."""
    s, fit = assignment.scores, assignment.scale
    how = (
        f"fitted, {fit.factor:.4f} ± {fit.factor_err:.4f}"
        + (f" (started from {fit.start:.4f}: {fit.start_note})" if fit.start_note else "")
        if fit.fitted
        else f"fixed at {fit.factor:.4f}" + (f" ({fit.start_note})" if fit.start_note else "")
    )
    items = [
        ("vibrapol", "assignment of computed modes to measured bands"),
        ("candidate", assignment.label),
        ("measured", ", ".join(assignment.measured.source_files) or "(in memory)"),
    ]
    if pair is not None:
        steps = list(dict.fromkeys((*pair.vv.notes, *(pair.vh.notes if pair.vh else ()))))
        items.append(("measured spectra", "; ".join(steps) or "as read, no cleaning recorded"))
    items.append(("scale", how))
    items += [(k, v) for k, v in assignment.sticks.conditions.items() if k != "scale"]
    items += [("warning", w) for w in assignment.sticks.warnings]
    items += [("note", n) for n in notes]
    items.append(
        (
            "scores",
            f"{s.n_assigned}/{s.n_bands} bands assigned, rms {s.rms_cm1:.1f} cm-1, "
            f"overall {s.overall:.3f}"
            + (
                f" (isotopologue agreement {s.isotopologue_agreement:.3f} included)"
                if math.isfinite(s.isotopologue_agreement)
                else ""
            ),
        )
    )
    items.append(
        (
            "columns",
            "band_cm1, mode_cm1_scaled, mode_cm1_harmonic, delta_cm1 in cm-1 (mode_cm1_scaled = "
            "harmonic x scale); rho for 90 deg scattering, linearly polarized excitation",
        )
    )
    return items


def assignment_rows(
    assignment: Assignment, descriptions: Sequence[str] | None = None
) -> list[dict[str, object]]:
    """One dictionary per measured band keyed by :data:`ASSIGNMENT_COLUMNS` (NaN → None).

    ``descriptions`` (one per computed mode) fill the ``description`` column ("" without).

    The rows of :func:`assignment_csv` and of :meth:`Assignment.to_dataframe`; ``mode`` and
    ``alternative`` are text ("4 5" for a degenerate set, "" when unassigned).
    """
    return [
        {
            "band_cm1": float(b.band_cm1),
            "band_rho": _or_none(b.band_rho),
            "mode": b.mode,
            "mode_cm1_scaled": _or_none(b.mode_cm1_scaled),
            "irrep": b.irrep,
            "mode_rho": _or_none(b.mode_rho),
            "delta_cm1": _or_none(b.delta_cm1),
            "confidence": _or_none(b.confidence),
            "band_rho_err": _or_none(b.band_rho_err),
            "band_area": _or_none(b.band_area),
            "mode_cm1_harmonic": _or_none(b.mode_cm1),
            "component": b.component,
            "cost": float(b.cost),
            "alternative": b.alternative,
            "description": band_description(b.mode, descriptions),
        }
        for b in assignment.bands
    ]


#: How :func:`assignment_csv` writes each column (others as they are).
ASSIGNMENT_CSV_FORMATS = {
    "band_cm1": ".2f",
    "band_rho": ".4f",
    "mode_cm1_scaled": ".2f",
    "mode_rho": ".4f",
    "delta_cm1": ".2f",
    "confidence": ".4f",
    "band_rho_err": ".4f",
    "band_area": ".6g",
    "mode_cm1_harmonic": ".2f",
    "cost": ".3f",
}


def _or_none(value: float) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def assignment_csv(
    assignment: Assignment,
    pair: PolarizedPair | None = None,
    notes: Sequence[str] = (),
    descriptions: Sequence[str] | None = None,
) -> str:
    """``#`` lines with the conditions, then one row per measured band.

    ``descriptions``: what each computed mode does, one text per mode of the candidate's
    ModeSet (:func:`vibrapol.describe.describe_modes`), for the ``description`` column.

    The columns are :data:`ASSIGNMENT_COLUMNS`; the ``#`` lines
    (:func:`assignment_conditions`: candidate, measured files and the cleaning applied, scale
    factor and how it was found, laser, temperature, detector, scores) are skipped by
    ``pandas.read_csv(comment="#")``.
    """
    return csv_document(
        assignment_conditions(assignment, pair, notes),
        ASSIGNMENT_COLUMNS,
        assignment_rows(assignment, descriptions),
        ASSIGNMENT_CSV_FORMATS,
    )


#: Columns of the ranking CSV, one row per candidate, best first (``rms_cm1`` and
#: ``max_abs_cm1``: deviations of the assigned bands after scaling, cm⁻¹; the shares and
#: agreements are between 0 and 1, see :class:`~vibrapol.compare.results.AssignmentScores`).
RANKING_COLUMNS = (
    "rank",
    "candidate",
    "overall",
    "n_assigned",
    "n_bands",
    "rms_cm1",
    "max_abs_cm1",
    "polarization_agreement",
    "similarity",
    "explained_fraction",
    "predicted_found_fraction",
    "scale_factor",
    "scale_factor_err",
    "scale_fitted",
)

#: How :func:`ranking_csv` writes each column (others as they are).
RANKING_CSV_FORMATS = {
    "overall": ".4f",
    "rms_cm1": ".2f",
    "max_abs_cm1": ".2f",
    "polarization_agreement": ".4f",
    "similarity": ".4f",
    "explained_fraction": ".4f",
    "predicted_found_fraction": ".4f",
    "scale_factor": ".5f",
    "scale_factor_err": ".5f",
}


def ranking_rows(ranking: Ranking) -> list[dict[str, object]]:
    """One dictionary per candidate keyed by :data:`RANKING_COLUMNS`, best first."""
    rows = []
    for k, a in enumerate(ranking.assignments, start=1):
        s = a.scores
        rows.append(
            {
                "rank": k,
                "candidate": a.label,
                "overall": _or_none(s.overall),
                "n_assigned": int(s.n_assigned),
                "n_bands": int(s.n_bands),
                "rms_cm1": _or_none(s.rms_cm1),
                "max_abs_cm1": _or_none(s.max_abs_cm1),
                "polarization_agreement": _or_none(s.polarization_agreement),
                "similarity": _or_none(s.similarity),
                "explained_fraction": _or_none(s.explained_fraction),
                "predicted_found_fraction": _or_none(s.predicted_found_fraction),
                "scale_factor": _or_none(a.scale.factor),
                "scale_factor_err": _or_none(a.scale.factor_err),
                "scale_fitted": bool(a.scale.fitted),
            }
        )
    return rows


def ranking_conditions(ranking: Ranking) -> list[tuple[str, str]]:
    """(name, value) pairs saying what was ranked against what, for file headers."""
    items = [("vibrapol", "ranking of candidates against one measured spectrum")]
    if ranking.assignments:
        best = ranking.best
        items.append(("measured", ", ".join(best.measured.source_files) or "(in memory)"))
        items += [(k, v) for k, v in best.sticks.conditions.items() if k not in ("scale", "method")]
    if len(ranking) > 1:
        items.append(("margin", f"{ranking.margin():.4f} (overall score, best − runner-up)"))
    items.append(
        (
            "columns",
            "overall and the shares between 0 and 1 (1 = perfect); rms_cm1, max_abs_cm1 in "
            "cm-1 after scaling; scale_factor fitted or fixed per candidate (scale_fitted)",
        )
    )
    return items


def ranking_csv(ranking: Ranking) -> str:
    """``#`` lines with the conditions, then :data:`RANKING_COLUMNS`, one row per candidate."""
    return csv_document(
        ranking_conditions(ranking), RANKING_COLUMNS, ranking_rows(ranking), RANKING_CSV_FORMATS
    )


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
    if math.isfinite(s.isotopologue_agreement):
        lines.insert(
            -1, f"isotopologue agreement: {s.isotopologue_agreement:.2f} (in the overall score)"
        )
    if s.n_bands and s.n_assigned < 0.5 * s.n_bands:
        lines.append(
            "note: fewer than half of the bands were assigned; for a low level of theory widen "
            "the position tolerance (--position-tolerance) or check the scale factor"
        )
    return "\n".join(lines) + "\n"


def _paper_rows(
    assignment: Assignment, descriptions: Sequence[str] | None = None
) -> list[tuple[str, ...]]:
    """Cells of each band for the paper tables.

    (measured ν, measured ρ ± err, species, scaled computed ν, computed ρ, Δ), and the
    description of the assigned mode when ``descriptions`` are given.
    """
    rows = []
    for b in assignment.bands:
        rho = _fmt(b.band_rho)
        if math.isfinite(b.band_rho) and math.isfinite(b.band_rho_err):
            rho += f" ± {b.band_rho_err:.3f}"
        assigned = bool(b.mode)
        rows.append(
            (
                f"{b.band_cm1:.0f}",
                rho,
                b.irrep or ("?" if assigned else "–"),
                _fmt(b.mode_cm1_scaled, ".0f") if assigned else "unassigned",
                _fmt(b.mode_rho) if assigned else "",
                _fmt(b.delta_cm1, "+.0f") if assigned else "",
            )
            + ((band_description(b.mode, descriptions),) if descriptions else ())
        )
    return rows


def _paper_caption(assignment: Assignment) -> str:
    s = assignment.scores
    return (
        f"Assignment of the measured Raman bands to {os.path.basename(assignment.label)} "
        f"({assignment.scale.describe()}); {s.n_assigned} of {s.n_bands} bands assigned, "
        f"rms deviation {_fmt(s.rms_cm1, '.1f')} cm⁻¹, overall score {s.overall:.2f}; "
        "ρ measured with its standard error, Δ = measured − computed."
    )


def assignment_markdown(assignment: Assignment, descriptions: Sequence[str] | None = None) -> str:
    """The assignment as a Markdown (pipe) table for a paper or a lab notebook.

    With ``descriptions`` (one per computed mode) a last column says what each mode does.
    """
    extra = " description |" if descriptions else ""
    lines = [
        _paper_caption(assignment),
        "",
        "| ν̃ meas. / cm⁻¹ | ρ meas. | species | ν̃ calc. / cm⁻¹ | ρ calc. | Δ / cm⁻¹ |" + extra,
        "|---:|---:|:---|---:|---:|---:|" + (":---|" if descriptions else ""),
    ]
    lines += ["| " + " | ".join(row) + " |" for row in _paper_rows(assignment, descriptions)]
    return "\n".join(lines) + "\n"


def assignment_latex(assignment: Assignment, descriptions: Sequence[str] | None = None) -> str:
    r"""The assignment as a booktabs LaTeX table (needs ``\usepackage{booktabs}``).

    With ``descriptions`` (one per computed mode) a last column says what each mode does.
    """
    from vibrapol.output.tables import latex_species, tex_escape

    caption = (
        tex_escape(_paper_caption(assignment))
        .replace("cm⁻¹", "cm$^{-1}$")
        .replace("ρ", r"$\rho$")
        .replace("Δ", r"$\Delta$")
        .replace("±", r"$\pm$")
        .replace("−", "$-$")
    )
    body = []
    for meas, rho, species, calc, rho_calc, delta, *words in _paper_rows(assignment, descriptions):
        tex_species = species if species in ("?", "–") else latex_species(species)
        cells = [meas, rho.replace("±", r"$\pm$"), tex_species.replace("–", "--"), calc]
        delta = delta.replace("+", "$+$").replace("-", "$-$")
        said = [tex_escape(w).replace("–", "--") for w in words]
        body.append("  " + " & ".join([*cells, rho_calc, delta, *said]) + r" \\")
    return "\n".join(
        [
            r"\begin{table}",
            rf"\caption{{{caption}}}",
            r"\begin{tabular}{rrlrrr" + ("l" if descriptions else "") + "}",
            r"\toprule",
            r"$\tilde\nu_\mathrm{meas}$ / cm$^{-1}$ & $\rho_\mathrm{meas}$ & species & "
            r"$\tilde\nu_\mathrm{calc}$ / cm$^{-1}$ & $\rho_\mathrm{calc}$ & "
            r"$\Delta$ / cm$^{-1}$" + (" & description" if descriptions else "") + r" \\",
            r"\midrule",
            *body,
            r"\bottomrule",
            r"\end{tabular}",
            r"\end{table}",
            "",
        ]
    )


#: Paper-table writers by file ending.
PAPER_TABLES = {".md": assignment_markdown, ".tex": assignment_latex}


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
