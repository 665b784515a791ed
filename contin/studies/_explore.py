"""Exploration: from one start, trace every branch that leaves a detected branch point, up to a budget."""

from __future__ import annotations

import numpy as np

from ..tracing._switching import switch_branch
from ..results._branch import Branch
from ..results._diagram import Diagram, build_diagram
from ..base._errors import InputError
from ..systems._system import System

__all__ = ["explore"]


def _near(x: np.ndarray, branch: Branch) -> bool:
    """Whether x lies on the polyline of ``branch``: within a tenth of the local chord (the arc of a
    step stays within about L theta / 8 of its chord for a turn theta, which the step control keeps
    small), plus a rounding allowance, of one of its segments."""
    rows = branch.points
    if len(rows) < 2:
        return False
    starts, chords = rows[:-1], rows[1:] - rows[:-1]
    lengths2 = np.einsum("ij,ij->i", chords, chords)
    along = np.clip(np.einsum("ij,ij->i", x - starts, chords) / np.where(lengths2 > 0.0, lengths2, 1.0), 0.0, 1.0)
    gaps = np.linalg.norm(starts + along[:, None] * chords - x, axis=1)
    return bool(np.any(gaps <= 0.1 * np.sqrt(lengths2) + 1e-8 * (1.0 + float(np.abs(x).max()))))


def _retraced(points: np.ndarray, branches: list[Branch]) -> bool:
    """Whether every point lies on some traced branch (a new branch may run along pieces of several)."""
    return all(any(_near(x, branch) for branch in branches) for x in points)


def explore(system: System, start=None, *, free: str, max_branches: int = 8, **trace_keywords) -> Diagram:
    """Trace the branch through ``start`` and every branch leaving a branch point found on any traced
    branch, both ways, until ``max_branches`` branches are traced.

    Branches are identified by their points, not by where they start: a switched branch whose points
    (past its first one) all lie on a branch already traced is dropped, so no branch is traced twice
    whichever branch point it is reached from. Each switch uses :func:`contin.switch_branch` (the
    algebraic bifurcation equation, with the perpendicular guess as fallback).

    Args:
        system: the system.
        start: start values of the unknowns (as for :func:`contin.trace`).
        free: the free parameter.
        max_branches: the budget: at most this many branches (the first included), at least 1.
        trace_keywords: passed to every :func:`contin.trace` (``bounds`` keep each branch finite).

    Returns:
        The :class:`~contin.Diagram`: the branches (the first one first) and their graph.
        ``diagram.graph.graph["notes"]`` lists switches that failed or were dropped as repeats.

    Raises:
        InputError: a bad budget, or what :func:`contin.trace` refuses.
    """
    from ..tracing._trace import trace

    if isinstance(max_branches, bool) or not isinstance(max_branches, int) or max_branches < 1:
        raise InputError(f"max_branches={max_branches!r} must be a whole number of at least 1 (the first branch "
                         "counts as one)")
    for name in ("tangent", "direction"):
        if name in trace_keywords:
            raise InputError(f"explore sets {name!r} itself for each switched branch; leave it out")
    first = trace(system, start, free=free, **trace_keywords)
    branches: list[Branch] = [first]
    origins: list[np.ndarray | None] = [None]
    notes: list[str] = []
    queue = [(0, sp) for sp in first.special("branch_point")]
    done: list[np.ndarray] = []
    while queue and len(branches) < max_branches:
        number, point = queue.pop(0)
        scale = 1.0 + float(np.abs(point.point).max())
        if any(float(np.linalg.norm(point.point - seen)) <= 1e-6 * scale for seen in done):
            continue  # met again on another branch: its branches are known
        done.append(np.asarray(point.point, dtype=float))
        for direction in (1, -1):
            if len(branches) >= max_branches:
                break
            where = ", ".join(f"{c} = {v:.6g}" for c, v in point.values.items())
            try:
                new = switch_branch(branches[number], point, system, direction=direction, **trace_keywords)
            except InputError as error:
                notes.append(f"no switch at the branch point at {where}: {error}")
                break
            if len(new.points) < 2:
                notes.append(f"the switch at {where} (direction {direction:+d}) gave no branch: {new.message}")
                continue
            if _retraced(new.points[1:], branches):
                notes.append(f"the switch at {where} (direction {direction:+d}) retraced a known branch; dropped")
                continue
            branches.append(new)
            origins.append(np.asarray(point.point, dtype=float))
            queue.extend((len(branches) - 1, sp) for sp in new.special("branch_point"))
    diagram = build_diagram(branches, origins)
    diagram.graph.graph["notes"] = "; ".join(notes)
    if queue:
        diagram.graph.graph["notes"] = "; ".join(notes + [f"budget of {max_branches} branches reached with "
                                                           f"{len(queue)} branch points unexplored"])
    return diagram
