"""The step-size controller: accept or reject a step, and choose the next step length."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["StepController"]


@dataclass(frozen=True)
class StepController:
    """Step-length rules for pseudo-arclength continuation.

    A step that converged in few Newton iterations grows the next one; a slow one shrinks it; a
    failed step (no convergence, non-finite residual, or a turn larger than ``max_turn`` between
    successive tangents) is retried at ``shrink`` times the length, until ``min_step``.

    Args:
        min_step, max_step: bounds on the step length.
        max_turn: largest accepted angle between successive tangents, radians.
        grow: factor applied after a step that took at most ``fast_iterations`` Newton iterations.
        shrink: factor applied after a failed step.
        fast_iterations: Newton iterations regarded as easy.
        slow_iterations: Newton iterations from which the next step is shortened.
    """

    min_step: float
    max_step: float
    max_turn: float = 0.5
    grow: float = 1.6
    shrink: float = 0.5
    fast_iterations: int = 2
    slow_iterations: int = 5

    def accepts(self, turn: float) -> bool:
        """Whether a converged step whose tangent turned by ``turn`` radians is accepted."""
        return turn <= self.max_turn

    def after_success(self, step: float, iterations: int, turn: float) -> float:
        """Next step length after an accepted step of length ``step``.

        At most ``fast_iterations`` Newton iterations: grow by ``grow``; one more than that: grow
        gently (the corrector evaluates a Jacobian only when another iteration is needed, so such a
        step still costs few Jacobians); ``slow_iterations`` or more, or a turn above half of
        ``max_turn``: shrink to 0.7; otherwise keep the length.
        """
        if turn > 0.5 * self.max_turn or iterations >= self.slow_iterations:
            factor = 0.7
        elif iterations <= self.fast_iterations:
            factor = self.grow
        elif iterations == self.fast_iterations + 1:
            factor = 1.0 + 0.4 * (self.grow - 1.0)
        else:
            factor = 1.0
        return min(self.max_step, max(self.min_step, step * factor))

    def after_failure(self, step: float) -> float | None:
        """Shorter step to retry with, or None when it would fall below ``min_step``."""
        if step <= self.min_step:
            return None
        return max(self.min_step, step * self.shrink)
