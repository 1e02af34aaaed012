"""A model of the wall time of a batch of engine runs on W workers, from measured stage costs.

Each molecule is a chain of stages; a stage is a set of independent tasks that may start when
every task of the stage before it has finished (optimisation → reference SCF → Hessian →
derivative tasks, or optimisation → reference SCF → displacement tasks).  Tasks go to the
first free worker in the order they became ready (first come, first served: what a process
pool or a Dask scheduler does with equal-priority tasks).  The client's own work (symmetry,
route choice, assembly) is taken as free; the model is checked against a measured Dask batch
by ``bench/engine_scale.py``.
"""

from __future__ import annotations

import heapq
from collections import deque
from collections.abc import Sequence

#: A molecule: its stages in order, each a list of task durations in seconds.
Molecule = Sequence[Sequence[float]]


def makespan(molecules: Sequence[Molecule], workers: int) -> float:
    """Wall time of the whole batch on ``workers`` identical workers (list scheduling).

    Parameters
    ----------
    molecules : sequence of molecules
        Each a sequence of stages, each a sequence of task durations (s).
    workers : int
        Number of workers (each runs one task at a time).

    Returns
    -------
    float
        The time at which the last task finishes, in seconds.
    """
    if workers < 1:
        raise ValueError("workers must be at least 1")
    ready: deque[tuple[int, float]] = deque()  # (molecule, duration), in order of readiness
    left: list[int] = [0] * len(molecules)  # unfinished tasks of each molecule's current stage
    stage: list[int] = [0] * len(molecules)

    def release(m: int) -> None:
        while stage[m] < len(molecules[m]) and not molecules[m][stage[m]]:
            stage[m] += 1  # an empty stage (skipped) releases the next at once
        if stage[m] < len(molecules[m]):
            tasks = molecules[m][stage[m]]
            left[m] = len(tasks)
            ready.extend((m, float(d)) for d in tasks)

    for m in range(len(molecules)):
        release(m)
    running: list[tuple[float, int]] = []  # (finish time, molecule)
    now = 0.0
    free = workers
    while ready or running:
        while free and ready:
            m, duration = ready.popleft()
            heapq.heappush(running, (now + duration, m))
            free -= 1
        now, m = heapq.heappop(running)
        free += 1
        left[m] -= 1
        if left[m] == 0:
            stage[m] += 1
            release(m)
    return now


def hessian_route(t_opt: float, t_ref: float, t_hessian: float, tasks: Sequence[float]) -> list:
    """Stages of one molecule on a Hessian route (optimisation, reference, Hessian, tasks)."""
    return [[t_opt], [t_ref], [t_hessian], list(tasks)]


def displacement_route(t_opt: float, t_ref: float, tasks: Sequence[float]) -> list:
    """Stages of one molecule on the displacement route (no Hessian stage)."""
    return [[t_opt], [t_ref], list(tasks)]
