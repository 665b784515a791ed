"""Test functions along a branch: user events, turning points, requested coordinate values."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..base._errors import InputError

__all__ = ["Event", "crossed"]


@dataclass(frozen=True)
class Event:
    """A zero crossing of a user function g(u, p) along the branch, located to tolerance.

    Args:
        name: name shown in output (and the special point's ``name``).
        function: ``g(u, p) -> float`` with ``u`` (n,) and ``p`` (m,) arrays.
        direction: 0 for any crossing, +1 only where g increases along the branch, -1 where it decreases.
        terminal: stop the trace at the first located crossing (status ``terminal_event``).
        kind: the special point's ``kind`` (default ``"event"``; a plug-in may say e.g. ``"critical"``).

    Raises:
        InputError: empty name or kind, a function that is not callable, or a direction not in (-1, 0, 1).
    """

    name: str
    function: Callable[[np.ndarray, np.ndarray], float]
    direction: int = 0
    terminal: bool = False
    kind: str = "event"

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name:
            raise InputError(f"event name {self.name!r} must be a non-empty string")
        if not callable(self.function):
            raise InputError(f"event {self.name!r}: function must be callable as g(u, p)")
        if isinstance(self.direction, bool) or self.direction not in (-1, 0, 1):
            raise InputError(f"event {self.name!r}: direction={self.direction!r} must be -1, 0 or 1")
        if not isinstance(self.terminal, bool):
            raise InputError(f"event {self.name!r}: terminal={self.terminal!r} must be True or False")
        if not isinstance(self.kind, str) or not self.kind:
            raise InputError(f"event {self.name!r}: kind must be a non-empty string")


def crossed(before: float, after: float, direction: int = 0) -> bool:
    """Whether a test function went from ``before`` to ``after`` through zero in ``direction``.

    A zero exactly at ``before`` is not a crossing (it was counted as the ``after`` of the previous
    step), a zero exactly at ``after`` is.
    """
    if not (math.isfinite(before) and math.isfinite(after)) or before == 0.0:
        return False
    rising = before < 0.0 <= after
    falling = before > 0.0 >= after
    if direction > 0:
        return rising
    if direction < 0:
        return falling
    return rising or falling
