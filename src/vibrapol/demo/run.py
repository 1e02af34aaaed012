"""The demo: the whole job on the embedded engine, in a scenario of our own.

Scenario (made up for the demo): a teaching lab records polarized Raman spectra of solutes in
dichloromethane.  Before the session the instructor wants to know which solvent bands can
check the polarizer and analyser — a band that nearly vanishes in the crossed (VH) spectrum and
one that keeps 3/4 of its parallel (VV) strength — and to make sure the bottle holds
dichloromethane, not chloroform, the other chlorinated solvent on the shelf.

Steps (:func:`run_demo`): compute both molecules with the embedded engine (checkpointed in the
output folder, so a rerun is fast) → per-mode table with symmetry species (text and CSV) →
VV/VH spectra (CSV, SVG and PNG figures) and a depolarization-ratio figure → assignment of a
bundled VV/VH pair to the computed modes (CSV and figure) → ranking of the two candidate
molecules against it → a summary (:mod:`vibrapol.demo.report`).

The bundled pair is INVENTED data, built from published band positions of liquid
dichloromethane (``examples/solvent-check/make_demo_data.py`` writes it; its header names the
source); every output that uses it says so.
"""

from __future__ import annotations

import dataclasses
import sys
from collections.abc import Callable
from pathlib import Path
from time import perf_counter
from typing import TYPE_CHECKING

from vibrapol.demo.report import figures, summary_text, tables
from vibrapol.demo.scenario import (
    CAUTION,
    DEFAULT_OUTPUT_DIR,
    DEFAULT_SCENARIO,
    MEASURED_COPY,
    DemoMolecule,
    DemoResult,
    DemoScenario,
    data_path,
    planned_files,
)
from vibrapol.errors import VibrapolError
from vibrapol.fileio import check_writable, write_all
from vibrapol.modeset import ModeSet

if TYPE_CHECKING:  # pragma: no cover
    from vibrapol.compare import Assignment, Ranking
    from vibrapol.measured import PolarizedPair


def prepare_output_dir(output_dir: str | Path, names: list[str], force: bool) -> Path:
    """Create the folder if needed; refuse, before any work, to overwrite without ``force``."""
    out = Path(output_dir)
    if out.exists() and not out.is_dir():
        raise VibrapolError(f"{out}: exists and is not a folder; give another --output-dir")
    if not force and out.is_dir():
        taken = [n for n in names if (out / n).exists()]
        if taken:
            raise VibrapolError(
                f"{out}: already holds the demo's files ({_some(taken)}); "
                "pass --force to overwrite them (computed results are reused from the "
                "checkpoints) or give another --output-dir"
            )
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise VibrapolError(f"{out}: cannot create the output folder ({exc.strerror})") from exc
    for n in names:
        check_writable(out / n, force=True)
    return out


def _some(names: list[str]) -> str:
    return names[0] if len(names) == 1 else f"{names[0]} and {len(names) - 1} more"


def _stderr(message: str) -> None:
    print(f"vibrapol demo: {message}", file=sys.stderr, flush=True)


def run_demo(
    output_dir: str | Path = DEFAULT_OUTPUT_DIR,
    *,
    force: bool = False,
    scenario: DemoScenario = DEFAULT_SCENARIO,
    workers: int | None = None,
    progress: bool | None = None,
    log: Callable[[str], None] = _stderr,
) -> DemoResult:
    """Run the whole demo and write its files into ``output_dir``.

    Parameters
    ----------
    output_dir : str or Path
        Created if missing.  Files already there are refused unless ``force``; the engine's
        checkpoint files are always reused.
    force : bool
        Overwrite the demo's files from an earlier run.
    scenario : DemoScenario
        Molecules, level of theory and measured data (default: :data:`DEFAULT_SCENARIO`).
    workers : int or None
        Engine worker processes (None: one per core when worth it).  Scripts calling this with
        more than one need the ``if __name__ == "__main__":`` guard.
    progress : bool or None
        Engine progress bar on stderr (None: only on a terminal).
    log : callable
        Receives one line per step (default: standard error).

    Returns
    -------
    DemoResult
    """
    from vibrapol import measured
    from vibrapol.compare import candidate_from_modes, rank

    t_start = perf_counter()
    planned = planned_files(scenario)
    out = prepare_output_dir(output_dir, [n for n, _ in planned], force)
    what = dict(planned)
    written: list[tuple[Path, str]] = []
    pending: list[tuple[str | Path, str | bytes]] = []

    def write(name: str, data: str | bytes) -> None:
        # Collected and written together at the end, all or nothing (the engine's modes files
        # and checkpoints are written as they are computed, so that a rerun resumes).
        pending.append((out / name, data))
        written.append((out / name, what[name]))

    n_steps = 5
    modes: dict[str, ModeSet] = {}
    seconds: dict[str, float] = {}
    reused: dict[str, bool] = {}
    for mol in scenario.molecules:
        log(f"[1/{n_steps}] computing {mol.label} at {scenario.level} (embedded PySCF engine)")
        modes[mol.name], seconds[mol.name], reused[mol.name] = _compute(
            mol, scenario, out, force, workers, progress
        )
        written.append((out / f"{mol.name}.modes.json", what[f"{mol.name}.modes.json"]))
        log(f"      {mol.name}.modes.json ({seconds[mol.name]:.1f} s)")

    sample = scenario.sample
    log(f"[2/{n_steps}] per-mode table and symmetry of {sample.label}")
    sym, table, table_files = tables(modes[sample.name], sample.name)
    data: str | bytes
    for name, data in table_files:
        write(name, data)

    log(f"[3/{n_steps}] VV/VH spectra and figures")
    for name, data in figures(sym, table, scenario, sample.name):
        write(name, data)

    log(f"[4/{n_steps}] measured VV/VH pair (INVENTED data): spikes, baseline, band fit")
    write(MEASURED_COPY, data_path(scenario.measured).read_text(encoding="utf-8"))
    pair = measured.read_pair(data_path(scenario.measured))
    pair, _, _ = measured.clean_pair(pair)
    bands = measured.measure_bands(pair)
    candidates = [
        candidate_from_modes(
            modes[m.name],
            label=m.label,
            laser_nm=scenario.laser_nm,
            temperature_k=scenario.temperature_k,
        )
        for m in scenario.molecules
    ]
    log(f"[5/{n_steps}] assignment and ranking of {len(candidates)} candidate molecules")
    ranking = rank(candidates, bands, pair=pair)
    assignment = next(a for a in ranking.assignments if a.label == sample.label)
    for name, data in _match_files(assignment, pair, ranking):
        write(name, data)

    result = DemoResult(
        output_dir=out,
        files=tuple(written),
        modes=modes,
        symmetry=sym,
        table=table,
        assignment=assignment,
        ranking=ranking,
        seconds_compute=seconds,
        reused=reused,
    )
    text = summary_text(result, scenario, [*written, (out / "summary.txt", what["summary.txt"])])
    write("summary.txt", f"{text}\n{CAUTION}\n")
    write_all(pending, force=force)
    return dataclasses.replace(
        result, files=tuple(written), summary=text, seconds_wall=perf_counter() - t_start
    )


def _compute(
    mol: DemoMolecule,
    scenario: DemoScenario,
    out: Path,
    force: bool,
    workers: int | None,
    progress: bool | None,
) -> tuple[ModeSet, float, bool]:
    """Run the engine (resuming from the checkpoint), write and read back ``NAME.modes.json``."""
    import ase.io

    from vibrapol.engine.compute import run_engine
    from vibrapol.sources import read_modes
    from vibrapol.sources.modes_json import write_modes_json

    path = data_path(mol.structure)
    try:
        atoms = ase.io.read(path)
    except Exception as exc:  # ase raises many kinds for unreadable files
        raise VibrapolError(f"{path}: cannot read the structure ({exc})") from exc
    run = run_engine(
        atoms,
        scenario.method,
        scenario.basis,
        route=scenario.route,
        workers=workers,
        checkpoint=out / f"{mol.name}.modes.checkpoint.sqlite",
        progress=progress,
    )
    target = out / f"{mol.name}.modes.json"
    write_modes_json(run.modes, target, force=force)
    was_reused = run.reused_reference and run.tasks.n_computed == 0
    return read_modes(target), run.seconds_wall, was_reused


def _match_files(
    assignment: Assignment, pair: PolarizedPair, ranking: Ranking
) -> list[tuple[str, str | bytes]]:
    from vibrapol.output.assignments import assignment_csv, ranking_text
    from vibrapol.plotting.match import match_figure
    from vibrapol.plotting.style import figure_bytes

    fig = match_figure(
        assignment, pair, title=f"{assignment.label} against the INVENTED measured pair"
    )
    return [
        ("assignment.csv", assignment_csv(assignment, pair)),
        ("match.svg", figure_bytes(fig, "svg")),
        ("match.png", figure_bytes(fig, "png")),
        ("ranking.txt", ranking_text(ranking)),
    ]
