"""Newton's method on the bordered (augmented) system: the corrector of each continuation step."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._extended import Extended
from ._linear import SingularMatrix, all_finite

__all__ = ["Correction", "correct", "residual_converged", "term_sizes"]

# Chord steps (a solver with ``chord = True``) keep the factors of the iteration while each Newton step
# is at most this fraction of the one before: linear convergence that fast reaches the tolerance within
# the iteration limit from a predictor error of 1e-4; slower contraction refreshes the Jacobian.
CHORD_CONTRACTION = 0.2

# The stall diagnosis: a residual within this fraction of its equation's term sizes is at (or near)
# the rounding level of the evaluation, so more Newton iterations cannot bring it down.
_NEAR_ROUNDING = 1e-9
# A residual within this fraction of its terms is rounding noise even when the last iteration halved
# it (a thousand times machine epsilon): that halving may be chance.
_AT_ROUNDING = 1e3 * np.finfo(float).eps


def term_sizes(jacobian: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Size of each equation's first-order terms: w_i = sum_j |dG_i/dx_j| max(1, |x_j|).

    It is the magnitude of the terms that the evaluation of G_i adds up near x (every coordinate
    counted at least at unit size), so the rounding error of G_i is a small multiple of
    machine epsilon times w_i; it scales with the equation (multiplying G_i by c multiplies w_i by |c|).
    """
    return abs(jacobian) @ np.maximum(1.0, np.abs(x))


def residual_converged(residual: np.ndarray, jacobian: np.ndarray, x: np.ndarray, tolerance: float,
                       relative_tolerance: float, stalled: bool) -> bool:
    """Newton's residual test at x (see :func:`correct`).

    Every |G_i(x)| <= ``tolerance`` passes. When that fails and Newton has ``stalled`` (the last
    iteration did not halve the largest residual, so it is rounding noise that further iterations
    cannot remove), every |G_i(x)| <= tolerance + relative_tolerance * w_i passes, with w_i from
    :func:`term_sizes`. The term sizes are computed only in that second case.
    """
    if residual.size == 0 or float(abs(residual).max()) <= tolerance:
        return True
    if not stalled or relative_tolerance <= 0.0:
        return False
    return bool(np.all(abs(residual) <= tolerance + relative_tolerance * term_sizes(jacobian, x)))


def _stalled_reason(residual: np.ndarray, jacobian: np.ndarray, x: np.ndarray, tolerance: float,
                    relative_tolerance: float, norm: float, falling: bool = False) -> str | None:
    """The failure reason when the residual is already near the rounding level of its terms, else None.

    ``falling``: the last iteration at least halved the residual. Newton still converging (linearly,
    as at a multiple root) has not stalled, however small its residual: it needs more iterations,
    not a looser tolerance. Only within :data:`_AT_ROUNDING` of its terms is a halving taken for
    noise, and the reason given all the same.
    """
    if not residual.size or not math.isfinite(norm) or jacobian is None or not all_finite(jacobian):
        return None
    sizes = term_sizes(jacobian, x)
    worst = int(np.argmax(abs(residual) / np.maximum(sizes, 1e-300)))
    if not abs(residual[worst]) <= (_AT_ROUNDING if falling else _NEAR_ROUNDING) * sizes[worst]:
        return None
    return (f"Newton stalled near rounding (largest residual {norm:.3g}, where the terms of its equation "
            f"are of size {sizes[worst]:.3g}, so the tolerance asks for more than rounding allows: raise "
            f"relative_tolerance (now {relative_tolerance:g}) or tolerance (now {tolerance:g}))")


@dataclass(frozen=True)
class Correction:
    """Outcome of one corrector call.

    Attributes:
        converged: whether the residual and the last Newton step met the tolerance.
        x: last iterate (the corrected point when converged).
        residual: G(x).
        jacobian: dG/dx at x, or at the last iterate (see ``exact_jacobian``).
        iterations: Newton iterations done.
        residual_norm: largest absolute residual at x.
        reason: why it failed ("" when converged).
    """

    converged: bool
    x: np.ndarray
    residual: np.ndarray
    jacobian: np.ndarray | None
    iterations: int
    residual_norm: float
    reason: str = ""
    factors: object | None = None  # the solver's factors of [jacobian; row] when the last iteration made exactly those


def correct(
    extended: Extended,
    guess: np.ndarray,
    row: np.ndarray,
    target: float,
    *,
    tolerance: float,
    max_iterations: int,
    relative_tolerance: float | None = None,
    jacobian: np.ndarray | None = None,
    residual: np.ndarray | None = None,
    max_distance: float = np.inf,
    guard_divergence: bool = True,
    exact_jacobian: bool = True,
) -> Correction:
    """Solve G(x) = 0, row . x = target by Newton's method from ``guess``.

    With ``row`` the tangent and ``target = row . predictor`` this is Keller's pseudo-arclength
    corrector (Keller, Numerical solution of bifurcation and nonlinear eigenvalue problems, 1977);
    with ``row`` a unit vector it fixes one coordinate (natural or local parametrisation).

    Args:
        extended: the system in coordinates x.
        guess: starting point (the predictor).
        row: the constraint row, shape (n + 1,).
        target: the constraint's right-hand side.
        tolerance: the absolute part of the residual test (below).
        max_iterations: iterations before giving up.
        relative_tolerance: the scaled part of the residual test; None takes the trace's
            (``extended.relative_tolerance``).
        jacobian: dG/dx to use for the first iteration (e.g. from the previous point), or None.
        residual: G(guess) if already known.
        max_distance: give up if an iterate moves farther than this from ``guess`` (branch jumping).
        guard_divergence: give up when a Newton step is more than twice the previous one (after the
            second iteration); plain grid stepping turns this off to behave as the textbook method.
        exact_jacobian: return dG/dx evaluated at the corrected point itself. When False, the
            Jacobian of the last iterate may be returned instead (it is one converged Newton step,
            at most sqrt(tolerance) relative, away): good enough for a predictor tangent, and it
            saves a Jacobian evaluation per point. A Jacobian passed in (from another point) is never
            returned as the corrected point's.

    Convergence test: after a Newton step dx to the iterate x, the correction has converged when
    the step is small, max_j |dx_j| <= max(sqrt(tolerance), 1e-8) * (1 + max_j |x_j|), and

    - either the absolute test holds: max_i |G_i(x)| <= tolerance,
    - or Newton has stalled (the step did not halve the largest residual: what is left is rounding
      noise) and every equation meets the scaled test |G_i(x)| <= tolerance + relative_tolerance * w_i,
      with w_i = sum_j |dG_i/dx_j| max(1, |x_j|) the size of equation i's first-order terms
      (:func:`term_sizes`, with the Jacobian the step was computed from).

    A Newton iteration that still converges is never stopped early by the scaled test, so on
    well-scaled problems the result is that of the absolute test; a badly scaled equation (terms of
    size 1e5, whose rounding error alone may exceed 1e-10) converges to the accuracy rounding allows
    instead of failing. ``relative_tolerance = 0`` keeps the absolute test alone. When Newton fails
    with the residual already near the rounding level of its terms, the reason says so and names the
    options to raise.

    Each iteration evaluates only the residual at the new iterate; the Jacobian there is evaluated
    only if another iteration is needed (or an exact one was asked for). With a linear solver that
    sets ``chord = True`` (the sparse LU), an iteration re-uses the factors of the one before (a chord
    step: no Jacobian, no factorisation) while each step is at most :data:`CHORD_CONTRACTION` of the
    previous one, and the Jacobian returned is evaluated at the corrected point.
    """
    x = np.array(guess, dtype=float)
    if relative_tolerance is None:
        relative_tolerance = float(getattr(extended, "relative_tolerance", 0.0))
    if jacobian is None:
        residual, jacobian = extended.linearise(x)
        jacobian_here = True  # evaluated at an iterate of this correction
    else:
        jacobian_here = False
        if residual is None:
            residual = extended.residual(x)
    norm = float(abs(residual).max()) if residual.size else 0.0
    if not math.isfinite(norm):
        return Correction(False, x, residual, jacobian, 0, norm, "non-finite residual at the predicted point")
    scale = 1.0 + float(abs(x).max())
    step_tolerance = max(math.sqrt(tolerance), 1e-8) * scale
    size = row.size
    solver = extended.solver
    rhs = np.empty(size)
    last_step = math.inf
    previous_norm = math.inf
    counters = extended.counters
    chord = bool(getattr(solver, "chord", False))
    factors = None
    for iteration in range(1, max_iterations + 1):
        if factors is None:
            try:
                factors = solver.factorise(jacobian, row)
            except SingularMatrix:
                return Correction(False, x, residual, jacobian, iteration - 1, norm, "singular bordered Jacobian")
        rhs[:-1] = -residual
        rhs[-1] = target - row @ x
        dx = factors.solve(rhs)
        step = float(abs(dx).max())
        counters.newton_iterations += 1
        if not math.isfinite(step):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite Newton step")
        if guard_divergence and iteration > 2 and step > 2.0 * last_step:
            # Steps that grow from a residual at rounding level are noise, not divergence: the point
            # reached is converged if it meets the stalled test (its Jacobian is the one factorised).
            if jacobian_here and last_step <= step_tolerance and residual_converged(
                    residual, jacobian, x, tolerance, relative_tolerance, norm > 0.5 * previous_norm):
                return Correction(True, x, residual, jacobian, iteration - 1, norm,
                                  factors=None if exact_jacobian else factors)
            reason = _stalled_reason(residual, jacobian, x, tolerance, relative_tolerance, norm)
            return Correction(False, x, residual, jacobian, iteration, norm, reason or "Newton diverged")
        x = x + dx
        residual = extended.residual(x)
        previous_norm, norm = norm, (float(abs(residual).max()) if residual.size else 0.0)
        if not math.isfinite(norm):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite residual")
        if max_distance < math.inf:
            moved = x - guess
            if math.sqrt(moved @ moved) > max_distance:
                return Correction(False, x, residual, jacobian, iteration, norm, "corrector moved too far from the predictor")
        converged = step <= step_tolerance and residual_converged(
            residual, jacobian, x, tolerance, relative_tolerance, norm > 0.5 * previous_norm)
        if converged and jacobian_here and not exact_jacobian:
            # The Jacobian kept is the one just factorised with this row: its LU serves the tangent.
            return Correction(True, x, residual, jacobian, iteration, norm, factors=factors)
        if chord and not converged and (iteration == 1 or step <= CHORD_CONTRACTION * last_step):
            # A chord step: the same factors again, while they still contract the step fast enough
            # (they are no longer those of the latest iterate, so a converged point gets its own Jacobian).
            last_step = step
            jacobian_here = False
            continue
        factors = None
        residual, jacobian = extended.linearise(x)
        jacobian_here = True
        # One reduction finds any NaN or infinity in the Jacobian (their sum is not finite).
        if not math.isfinite(float(jacobian.sum())):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite Jacobian")
        if converged:
            return Correction(True, x, residual, jacobian, iteration, norm)
        last_step = step
    reason = _stalled_reason(residual, jacobian, x, tolerance, relative_tolerance, norm,
                             falling=norm <= 0.5 * previous_norm)
    return Correction(False, x, residual, jacobian, max_iterations, norm,
                      reason or f"no convergence (in {max_iterations} Newton iterations)")
