"""Progress on standard error: stage messages and a task bar with counts and ETA (tqdm)."""

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
        """One line such as ``vibrapol: analytic Hessian …``."""
        if self.enabled:
            print(f"vibrapol: {message}", file=sys.stderr, flush=True)

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
