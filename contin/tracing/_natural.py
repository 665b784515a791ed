"""Natural-parameter stepping: solve at given values of the free parameter, each from the last answer."""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence

import numpy as np

from ..results._branch import Branch
from ._corrector import correct
from ..base._errors import InputError, TraceError
from ._extended import CallbackFailure, Counters, Extended
from ..results._status import Status
from ..systems._system import System
from ._tangent import SingularMatrix, factorise_bordered, tangent
from ._trace import start_vector

__all__ = ["sweep"]


def sweep(
    system: System,
    start=None,
    *,
    free: str,
    values: Sequence[float],
    parameters: Mapping[str, float] | None = None,
    tolerance: float = 1e-10,
    max_iterations: int = 20,
    throw: bool = False,
) -> Branch:
    """Solve F(u, p) = 0 at each of ``values`` of the free parameter, in order, by Newton's method.

    Each solve starts from the previous solution (the first from ``start``). This is the plain
    grid-stepping approach: it cannot pass a turning point, and near one it may converge to another
    solution without notice; :func:`contin.trace` is the robust alternative. Tangents in the result
    are those of the branch at each point (for comparison), oriented along increasing index.

    Args:
        system: the residual system.
        start: start guess for the unknowns at ``values[0]``.
        free: name of the parameter stepped through ``values``.
        values: the parameter values, in the order to solve them.
        parameters: values overriding the system's other parameters.
        tolerance: Newton converges when the largest residual is at most this.
        max_iterations: Newton iterations per value.
        throw: raise :class:`TraceError` if a value does not converge.

    Returns:
        A :class:`Branch` with status ``completed``, or ``not_converged`` at the first failing value
        (the points solved before it are kept).
    """
    began = time.perf_counter()
    free_index = system.index_of_parameter(free)
    grid = np.asarray(values, dtype=float).reshape(-1)
    if grid.size == 0 or not np.all(np.isfinite(grid)):
        raise InputError("values must be a non-empty sequence of finite numbers")
    if not (isinstance(max_iterations, int) and max_iterations >= 1):
        raise InputError(f"max_iterations={max_iterations!r} must be a whole number of at least 1")
    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"tolerance={tolerance!r} must be a positive number")
    parameter_values = system.parameter_vector(parameters)
    u = start_vector(system, start)
    counters = Counters()
    extended = Extended(system, parameter_values, free_index, counters)
    n = system.size
    row = np.zeros(n + 1)
    row[n] = 1.0
    rows, tangents, iterations, residuals = [], [], [], []
    status, message, cause = Status.COMPLETED, Status.COMPLETED.message, None
    setup = time.perf_counter() - began
    traced = time.perf_counter()
    reference = row.copy()
    try:
        for value in grid:
            guess = np.append(u, value)
            correction = correct(extended, guess, row, float(value), tolerance=tolerance,
                                 max_iterations=max_iterations, guard_divergence=False)
            if not correction.converged:
                status = Status.NOT_CONVERGED
                message = (f"{Status.NOT_CONVERGED.message}: {free} = {value:g} ({correction.reason}; "
                           f"largest residual {correction.residual_norm:.3g})")
                break
            try:
                t = tangent(factorise_bordered(correction.jacobian, row), reference)
            except SingularMatrix:
                t = np.full(n + 1, np.nan)
            else:
                reference = t
            rows.append(correction.x)
            tangents.append(t)
            iterations.append(correction.iterations)
            residuals.append(correction.residual_norm)
            u = correction.x[:n]
            counters.accepted_steps += 1
    except CallbackFailure as failure:
        status, message, cause = Status.INTERRUPTED, f"{Status.INTERRUPTED.message}: {failure}", failure.__cause__
    except KeyboardInterrupt as interrupt:
        status, message, cause = Status.INTERRUPTED, f"{Status.INTERRUPTED.message}: keyboard interrupt", interrupt
    points = np.array(rows) if rows else np.empty((0, n + 1))
    steps = np.concatenate([[0.0], np.linalg.norm(np.diff(points, axis=0), axis=1)]) if rows else np.empty(0)
    branch = Branch(
        columns=tuple(system.unknowns) + (free,),
        points=points,
        tangents=np.array(tangents) if tangents else np.empty((0, n + 1)),
        steps=steps,
        newton_iterations=np.array(iterations, dtype=int),
        residual_norms=np.array(residuals),
        special_points=(),
        at=(),
        status=status,
        message=message,
        stats={
            "setup_seconds": setup,
            "trace_seconds": time.perf_counter() - traced,
            "newton_iterations": counters.newton_iterations,
            "jacobian_evaluations": counters.jacobian_evaluations,
            "residual_evaluations": counters.residual_evaluations,
            "accepted_steps": counters.accepted_steps,
            "rejected_steps": 0,
            "points": len(rows),
        },
        free=free,
        parameters={name: float(v) for name, v in zip(system.parameters, parameter_values)},
        cause=cause,
    )
    if throw and not branch.success:
        raise TraceError(branch.message, branch) from cause
    return branch
