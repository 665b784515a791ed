"""Newton's method on the bordered (augmented) system: the corrector of each continuation step."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.linalg.lapack import dgetrf, dgetrs

from ._extended import Extended

__all__ = ["Correction", "correct"]


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
    factors: tuple | None = None  # LAPACK LU of [jacobian; row] when the last iteration factorised exactly that


def correct(
    extended: Extended,
    guess: np.ndarray,
    row: np.ndarray,
    target: float,
    *,
    tolerance: float,
    max_iterations: int,
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
        tolerance: converged when max |G| <= tolerance and the last step is small.
        max_iterations: iterations before giving up.
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

    Each iteration evaluates only the residual at the new iterate; the Jacobian there is evaluated
    only if another iteration is needed (or an exact one was asked for).
    """
    x = np.array(guess, dtype=float)
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
    matrix = np.empty((size, size))
    rhs = np.empty(size)
    last_step = math.inf
    counters = extended.counters
    for iteration in range(1, max_iterations + 1):
        # Factorise [dG/dx; row] in place with LAPACK (the scipy.linalg wrappers cost more than the
        # factorisation itself at these sizes).
        matrix[:-1] = jacobian
        matrix[-1] = row
        lu, piv, info = dgetrf(matrix, overwrite_a=True)
        pivots = abs(lu.diagonal())
        if info != 0 or not pivots.min() > 1e-13 * max(1.0, float(pivots.max())):
            return Correction(False, x, residual, jacobian, iteration - 1, norm, "singular bordered Jacobian")
        rhs[:-1] = -residual
        rhs[-1] = target - row @ x
        dx, _ = dgetrs(lu, piv, rhs)
        step = float(abs(dx).max())
        counters.newton_iterations += 1
        if not math.isfinite(step):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite Newton step")
        if guard_divergence and iteration > 2 and step > 2.0 * last_step:
            return Correction(False, x, residual, jacobian, iteration, norm, "Newton diverged")
        x = x + dx
        residual = extended.residual(x)
        norm = float(abs(residual).max()) if residual.size else 0.0
        if not math.isfinite(norm):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite residual")
        if max_distance < math.inf:
            moved = x - guess
            if math.sqrt(moved @ moved) > max_distance:
                return Correction(False, x, residual, jacobian, iteration, norm, "corrector moved too far from the predictor")
        converged = norm <= tolerance and step <= step_tolerance
        if converged and jacobian_here and not exact_jacobian:
            # The Jacobian kept is the one just factorised with this row: its LU serves the tangent.
            return Correction(True, x, residual, jacobian, iteration, norm, factors=(lu, piv))
        residual, jacobian = extended.linearise(x)
        jacobian_here = True
        # One reduction finds any NaN or infinity in the Jacobian (their sum is not finite).
        if not math.isfinite(float(jacobian.sum())):
            return Correction(False, x, residual, jacobian, iteration, norm, "non-finite Jacobian")
        if converged:
            return Correction(True, x, residual, jacobian, iteration, norm)
        last_step = step
    return Correction(False, x, residual, jacobian, max_iterations, norm, f"no convergence (in {max_iterations} Newton iterations)")
