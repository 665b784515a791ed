"""Immutable, validated tolerances and step options of a trace."""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

from ..base._errors import InputError
from ._linear import SOLVER_NAMES, LinearSolver

__all__ = ["TraceOptions", "CORRECTORS"]

CORRECTORS = ("arclength", "local")


@dataclass(frozen=True)
class TraceOptions:
    """Step, tolerance and stopping options of :func:`contin.trace`, checked once at construction.

    Args:
        step: first step length (in the Euclidean norm of the coordinates, unknowns then parameter).
        min_step: the trace stops with ``step_too_small`` when a step this short fails.
        max_step: longest step allowed.
        max_points: most points on the branch (the start included).
        tolerance: the absolute part of Newton's residual test. A correction has converged when every
            equation i meets |G_i(x)| <= tolerance + relative_tolerance * w_i and the last Newton step
            is at most max(sqrt(tolerance), 1e-8) * (1 + max_j |x_j|) in every coordinate.
        relative_tolerance: the scaled part of that test: w_i = sum_j |dG_i/dx_j| max(1, |x_j|) is
            the size of equation i's first-order terms at x, so the test bounds each residual by
            ``tolerance`` plus ``relative_tolerance`` times the magnitude of what the equation adds
            up. An equation of order one is held to ``tolerance``; a badly scaled one (terms of size
            1e5, whose rounding error alone can exceed 1e-10) converges to the accuracy rounding
            allows. 0 gives the absolute test max_i |G_i| <= tolerance alone.
        max_iterations: Newton iterations per corrector call before the step is declared failed.
        direction: +1 or -1, the initial sign of the free parameter's change.
        corrector: ``"arclength"`` (Keller 1977: correct on the hyperplane orthogonal to the tangent)
            or ``"local"`` (Rheinboldt 1986: fix the coordinate with the largest tangent component).
        max_turn: largest angle (radians) between successive tangents before a step is retried shorter.
        location_tolerance: special points are located until their position along the branch is known
            to this distance.
        max_correction: largest distance of the corrected point from the predicted one, as a fraction
            of the step length; a step whose corrector moved farther is retried shorter. Together with
            ``max_turn`` it keeps a step from jumping over a tight turn or onto a nearby branch.
        linear_solver: how the bordered matrix [dF/du, dF/dp; row] is factorised: ``"auto"`` (sparse
            LU when the system returns dF/du as a scipy.sparse matrix, dense LU otherwise),
            ``"dense"``, ``"sparse"``, or a :class:`contin.LinearSolver` object (see
            docs/linear-solvers.md).

    Raises:
        InputError: an option is not finite, not positive where it must be, or inconsistent.
    """

    step: float = 0.01
    min_step: float = 1e-8
    max_step: float = 0.5
    max_points: int = 2000
    tolerance: float = 1e-10
    relative_tolerance: float = 1e-13
    max_iterations: int = 8
    direction: int = 1
    corrector: str = "arclength"
    max_turn: float = 0.5
    location_tolerance: float = 1e-10
    max_correction: float = 0.5
    linear_solver: str | LinearSolver = "auto"

    def __post_init__(self) -> None:
        for name in ("step", "min_step", "max_step", "tolerance", "max_turn", "location_tolerance", "max_correction"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                raise InputError(f"{name}={value!r} must be a finite number")
            if value <= 0:
                raise InputError(f"{name}={value!r} must be positive")
            object.__setattr__(self, name, float(value))
        value = self.relative_tolerance
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
            raise InputError(f"relative_tolerance={value!r} must be a finite number, zero or positive "
                             "(0 keeps the absolute residual test alone)")
        if value >= 1:
            raise InputError(f"relative_tolerance={value!r} must be below 1 (it is a fraction of each "
                             "equation's term sizes; 1e-13 is the default)")
        object.__setattr__(self, "relative_tolerance", float(value))
        if self.min_step > self.max_step:
            raise InputError(f"min_step={self.min_step} is larger than max_step={self.max_step}")
        if not self.min_step <= self.step <= self.max_step:
            raise InputError(
                f"step={self.step} must lie between min_step={self.min_step} and max_step={self.max_step}"
            )
        for name, least in (("max_points", 2), ("max_iterations", 1)):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < least:
                raise InputError(f"{name}={value!r} must be a whole number of at least {least}")
        if self.direction not in (1, -1) or isinstance(self.direction, bool):
            raise InputError(f"direction={self.direction!r} must be 1 or -1")
        if self.corrector not in CORRECTORS:
            raise InputError(f"corrector={self.corrector!r} is not known; use one of {', '.join(CORRECTORS)}")
        if not isinstance(self.linear_solver, LinearSolver) and self.linear_solver not in SOLVER_NAMES:
            raise InputError(f"linear_solver={self.linear_solver!r} is not known; use one of "
                             f"{', '.join(SOLVER_NAMES)} or a contin.LinearSolver object")
        if self.max_turn >= math.pi:
            raise InputError(f"max_turn={self.max_turn} must be below pi radians")

    @classmethod
    def names(cls) -> tuple[str, ...]:
        """The option names, for "did you mean" suggestions."""
        return tuple(f.name for f in fields(cls))
