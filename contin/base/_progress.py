"""A one-line progress report on stderr for traces that take longer than about a second."""

from __future__ import annotations

import sys
import time
from collections.abc import Callable, Sequence
from typing import TextIO

import numpy as np

__all__ = ["Progress"]


class Progress:
    """``on_point`` callback of :func:`contin.trace` that keeps one status line up to date.

    Silent when ``quiet`` is set, when the stream is not a terminal, and during the first ``delay``
    seconds (short runs print nothing). The line shows the points traced, the current coordinates
    and the special points so far; :meth:`close` clears it. It never writes to stdout, so JSON
    output on stdout stays clean.

    Args:
        columns: coordinate names, in the order of the points.
        stream: where to write (default ``sys.stderr``).
        quiet: never write.
        delay: seconds before the first line.
        interval: least seconds between updates.
        label: a word or two naming the run.
        describe: optional ``describe(x) -> text`` for the current point in the user's terms (e.g.
            ``"T = 301.2 K, P = 4.1e6 Pa"`` from internal log coordinates); default: the last three
            coordinates by name.
    """

    def __init__(self, columns: Sequence[str], *, stream: TextIO | None = None, quiet: bool = False,
                 delay: float = 1.0, interval: float = 0.2, label: str = "tracing",
                 describe: Callable[[np.ndarray], str] | None = None) -> None:
        self.columns = tuple(columns)
        self.describe = describe
        self.stream = stream if stream is not None else sys.stderr
        is_terminal = getattr(self.stream, "isatty", lambda: False)
        self.enabled = not quiet and bool(is_terminal())
        self.delay = delay
        self.interval = interval
        self.label = label
        self.began = time.monotonic()
        self.last = -1e300
        self.width = 0

    def line(self, index: int, x: np.ndarray, special_points: Sequence) -> str:
        """The text of the progress line (also used by tests)."""
        if self.describe is not None:
            shown = self.describe(x)
        else:
            shown = ", ".join(f"{name} = {value:.6g}" for name, value in list(zip(self.columns, x))[-3:])
        kinds: dict[str, int] = {}
        for point in special_points:
            kinds[point.kind] = kinds.get(point.kind, 0) + 1
        found = ", ".join(f"{count} {kind}" for kind, count in sorted(kinds.items())) or "none yet"
        return f"{self.label}: {index + 1} points; {shown}; special points: {found}"

    def __call__(self, index: int, x: np.ndarray, special_points: Sequence) -> None:
        if not self.enabled:
            return
        now = time.monotonic()
        if now - self.began < self.delay or now - self.last < self.interval:
            return
        self.last = now
        text = self.line(index, x, special_points)
        padding = max(0, self.width - len(text))
        self.stream.write("\r" + text + " " * padding)
        self.stream.flush()
        self.width = len(text)

    def close(self) -> None:
        """Clear the line, if one was written."""
        if self.enabled and self.width:
            self.stream.write("\r" + " " * self.width + "\r")
            self.stream.flush()
            self.width = 0
