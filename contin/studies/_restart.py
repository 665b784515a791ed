"""Restart: continue from a saved point of a branch or a run record, in a new direction or another
free parameter."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..results._branch import Branch
from ..results._record import restart_start
from ..systems._system import System
from ..tracing._trace import trace

__all__ = ["restart"]


def restart(source: Branch | Mapping, index: int, system: System, *, free: str | None = None,
            direction: int = 1, **keywords) -> Branch:
    """Continue from row ``index`` of a branch (or run record), in a new direction or another parameter.

    With the same free parameter the trace starts along the saved tangent (``direction=-1`` reverses
    it), so a fold or any other saved point is a valid start. With another free parameter the old one
    stays fixed at its value there; if dF/du is singular at that point (e.g. a fold), the start
    direction is the null vector of [dF/du, dF/dq].

    Args:
        source: a :class:`Branch` or a run record (as read by :func:`read_record`).
        index: the row to start from (negative counts from the end).
        system: the system the branch was traced on (with any parameter values it needs).
        free: the new free parameter (default: the branch's).
        direction: +1 or -1.
        keywords: further :func:`contin.trace` options (bounds, events, at, step, ...).
    """
    start, parameters, saved_tangent, old_free = restart_start(source, index)
    parameters = {name: value for name, value in parameters.items() if name in system.parameters}
    free = free or old_free
    if free == old_free and np.any(saved_tangent):
        return trace(system, start, free=free, parameters=parameters, direction=direction,
                     tangent=saved_tangent, **keywords)
    u = np.array([start[name] for name in system.unknowns])
    p = system.parameter_vector(parameters)
    k = system.index_of_parameter(free)
    _, ju, jq = system.linearise(u, p, k)
    if np.linalg.matrix_rank(ju) == system.size:
        return trace(system, start, free=free, parameters=parameters, direction=direction, **keywords)
    null = np.linalg.svd(np.column_stack([ju, jq]))[2][-1]
    if null[-1] < 0:
        null = -null
    return trace(system, start, free=free, parameters=parameters, direction=direction, tangent=null, **keywords)
