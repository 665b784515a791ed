"""Running a loaded problem file: one trace, or a branch with the curves and branches that grow from it."""

from __future__ import annotations

from typing import Any

__all__ = ["run_curves", "run_problem"]

from ..base._errors import InputError
from ..results._diagram import build_diagram
from ..systems._problem import Problem
from ..tracing._trace import trace
from ._explore import explore
from ._follow import follow


def run_problem(problem: Problem, **overrides: Any):
    """Trace a loaded problem with :func:`contin.trace`; ``overrides`` replace ``[trace]`` options.

    Returns:
        The :class:`~contin.Branch`.

    Raises:
        InputError: an option the engine refuses (e.g. min_step above max_step), prefixed with the file.
    """
    options = {**problem.options, **overrides}
    try:
        return trace(problem.system, dict(problem.start), events=list(problem.events), **options)
    except InputError as error:
        raise InputError(f"{problem.path}: [trace]: {error}") from None


def run_curves(problem: Problem, on_point=None):
    """Trace a problem whose ``[trace]`` has ``follow`` or ``explore``: the one-parameter branch first,
    then the curve of its fold or Hopf point in two parameters (:func:`contin.follow`), or every branch
    leaving its branch points (:func:`contin.explore`).

    Returns:
        The :class:`~contin.Diagram` (``branches`` and the graph).

    Raises:
        InputError: the branch has no such point to follow (or none at ``start_at``), or what the
            engine refuses, prefixed with the file.
    """
    curves = problem.curves
    if curves is None:
        raise InputError(f"{problem.path}: [trace] has neither follow nor explore")
    options = dict(problem.options)
    try:
        if "explore" in curves:
            free = options.pop("free")
            options.pop("direction", None)
            return explore(problem.system, dict(problem.start), free=free, max_branches=curves["max_branches"],
                           events=list(problem.events), **options)
        first = run_problem(problem, on_point=on_point)
        kind, free = curves["follow"], first.free
        candidates = [sp for sp in first.special_points if sp.kind == kind and
                      (kind == "hopf" or sp.info.get("coordinate") == free)]
        if curves["start_at"] is not None:
            candidates = [sp for sp in candidates if sp.index == curves["start_at"]]
            if not candidates:
                raise InputError(f"[trace]: start_at = {curves['start_at']} is not the point number of a "
                                 f"{'fold in ' + free if kind == 'fold' else 'Hopf point'} on the branch (those are "
                                 f"{[sp.index for sp in first.special_points if sp.kind == kind] or 'none'})")
        if not candidates:
            raise InputError(f"[trace]: follow = {kind!r}, but the branch has no "
                             f"{'fold in ' + free if kind == 'fold' else 'Hopf point'} to follow (its special points: "
                             f"{', '.join(sp.kind for sp in first.special_points) or 'none'})")
        keep = {key: options[key] for key in ("step", "min_step", "max_step", "max_points", "tolerance", "bounds")
                if key in options}
        # The curve both ways from the point: the second parameter up, then down.
        pieces = [follow(first, candidates[0], problem.system, free=(free, curves["second"]), direction=way, **keep)
                  for way in (1, -1)]
    except InputError as error:
        message = str(error)
        raise InputError(message if message.startswith(str(problem.path)) else f"{problem.path}: {message}") from None
    # Both pieces start at the point they were followed from: in the coordinates they share with the
    # branch it is that point's node.
    origin = dict(zip(first.columns, candidates[0].point))
    return build_diagram([first, *pieces], origins=[None, origin, origin])
