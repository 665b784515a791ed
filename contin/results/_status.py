"""How a trace ended: a fixed table of statuses, each with a human message."""

from __future__ import annotations

from enum import Enum

__all__ = ["Status"]


class Status(Enum):
    """Why a trace or sweep stopped. ``success`` is True for the endings a user asked for."""

    COMPLETED = ("completed", True, "completed: every requested value was solved")
    BOUND_REACHED = ("bound_reached", True, "completed: the branch reached a bound")
    MAX_POINTS = ("max_points", True, "completed: the maximum number of points was reached")
    CLOSED_LOOP = ("closed_loop", True, "completed: the branch came back to its start (a closed loop)")
    TERMINAL_EVENT = ("terminal_event", True, "completed: stopped by a terminal event")
    STEP_TOO_SMALL = ("step_too_small", False, "stopped: the step size fell below min_step")
    START_NOT_CONVERGED = ("start_not_converged", False, "stopped: Newton did not converge at the start point")
    NOT_CONVERGED = ("not_converged", False, "stopped: Newton did not converge at a requested value")
    NON_FINITE = ("non_finite", False, "stopped: the residual or the Jacobian is not finite at the start point")
    LINEAR_ALGEBRA_FAILED = ("linear_algebra_failed", False, "stopped: a linear-algebra routine failed")
    INTERRUPTED = ("interrupted", False, "interrupted: the trace was stopped before it finished")

    def __init__(self, label: str, success: bool, message: str) -> None:
        self.label = label
        self.success = success
        self.message = message

    def __str__(self) -> str:
        return self.label
