"""Progress on standard error: a line per stage and a bar over all tasks (tqdm).

A run prints, per molecule, a line when a stage is sent to the backend
(``vibrapol: water.xyz: analytic Hessian …``), one when it finishes with its own wall time
(``… analytic Hessian: done in 2.1 s``, or ``taken from the checkpoint``), the route and its
number of tasks, and a last line when the molecule is done; below them one bar counts every
job of the run, stages and derivative tasks, its total growing as molecules reach their route.
"""

from __future__ import annotations

import sys
from typing import Any


def want_progress(progress: bool | None) -> bool:
    """Explicit choice, or by default only when standard error is a terminal."""
    if progress is not None:
        return bool(progress)
    return bool(getattr(sys.stderr, "isatty", lambda: False)())


class Progress:
    """Stage lines and one tqdm bar per batch of tasks; silent when disabled."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled

    def stage(self, message: str) -> None:
        """One line such as ``vibrapol: water.xyz: analytic Hessian: done in 2.1 s``.

        Written through tqdm, so that it appears above an open bar instead of breaking it.
        """
        if self.enabled:
            from tqdm import tqdm

            tqdm.write(f"vibrapol: {message}", file=sys.stderr)

    def bar(self, total: int, initial: int, desc: str) -> Any:
        """A tqdm bar on stderr (a no-op bar when disabled)."""
        from tqdm import tqdm

        return tqdm(
            total=total,
            initial=initial,
            desc=desc,
            unit="task",
            file=sys.stderr,
            disable=not self.enabled,
            dynamic_ncols=True,
            leave=True,
        )
