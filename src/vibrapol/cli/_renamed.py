"""Old option names kept working for scripts, each with one line saying what it is now."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from typing import Any


class Renamed(argparse.Action):
    """An option that was renamed: does what the new one does and says so once on stderr.

    Hidden from ``--help`` (and so from docs/cli.md); the new name is the documented one.
    """

    def __init__(self, option_strings: Sequence[str], dest: str, *, new: str, **kwargs: Any):
        self.new = new
        const = kwargs.pop("const", None)
        self._flag = const is not None
        super().__init__(
            option_strings,
            dest,
            nargs=0 if self._flag else None,
            const=const,
            help=argparse.SUPPRESS,
            **kwargs,
        )

    def __call__(
        self,
        parser: argparse.ArgumentParser,
        namespace: argparse.Namespace,
        values: Any,
        option_string: str | None = None,
    ) -> None:
        print(
            f"vibrapol: note: {option_string} is now called {self.new}; please use that name",
            file=sys.stderr,
        )
        setattr(namespace, self.dest, self.const if self._flag else values)


def add_renamed(
    parser: argparse.ArgumentParser, old: str, new: str, dest: str, **kwargs: Any
) -> None:
    """Accept ``old`` as a hidden, announced alias of ``new`` (same ``dest``)."""
    parser.add_argument(old, action=Renamed, new=new, dest=dest, **kwargs)
