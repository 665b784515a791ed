"""The directions of the branches through a simple branch point, from the algebraic bifurcation equation.

At a simple branch point x* of G(x) = 0 (G: R^(n+1) -> R^n) the null space of dG/dx is spanned by
two orthonormal vectors phi_1, phi_2 and its left null space by one vector psi. Every branch through
x* leaves along t = alpha phi_1 + beta phi_2 with

    a alpha^2 + 2 b alpha beta + c beta^2 = 0,   a = psi . G''[phi_1, phi_1],
    b = psi . G''[phi_1, phi_2],                  c = psi . G''[phi_2, phi_2],

the algebraic bifurcation equation; a simple branch point has b^2 - a c > 0 and so two real
directions, one of them the traced branch's (Keller, Numerical solution of bifurcation and nonlinear
eigenvalue problems, in Applications of Bifurcation Theory, Academic Press 1977; Allgower & Georg,
Numerical Continuation Methods, Springer 1990, section 8.3; Seydel, Practical Bifurcation and
Stability Analysis, 3rd ed., Springer 2010, section 5.6). The second derivatives along phi_1 and
phi_2 are exact for symbolic systems, else central differences of the Jacobian.
"""

from __future__ import annotations

import inspect
import math

import numpy as np

from ..results._branch import Branch, SpecialPoint
from ..base._errors import InputError
from ._extended import Counters, Extended
from ..base._names import suggest
from ..systems._system import System, finite_difference_step
from ._trace import trace

__all__ = ["bifurcation_directions", "quadratic_directions", "switch_branch", "trace_keyword_names"]


def quadratic_directions(a: float, b: float, c: float) -> list[np.ndarray] | None:
    """The two unit roots (alpha, beta) of a alpha^2 + 2 b alpha beta + c beta^2 = 0, or None when the
    form has no two distinct real roots (b^2 - a c <= 0, or all coefficients zero: a degenerate
    branch point, which second-order data cannot resolve)."""
    discriminant = b * b - a * c
    if not (discriminant > 0.0 and math.isfinite(discriminant)):
        return None
    # a cos^2 + 2 b cos sin + c sin^2 = (a + c)/2 + R cos(2 theta - phi), R = |((a - c)/2, b)|:
    # the angle form has no cancellation, whichever coefficients vanish.
    radius = math.hypot(0.5 * (a - c), b)
    phase = math.atan2(b, 0.5 * (a - c))
    opening = math.acos(max(-1.0, min(1.0, -0.5 * (a + c) / radius)))
    angles = (0.5 * (phase + opening), 0.5 * (phase - opening))
    return [np.array([math.cos(angle), math.sin(angle)]) for angle in angles]


def bifurcation_directions(extended: Extended, x: np.ndarray, jacobian: np.ndarray,
                           reference: np.ndarray) -> tuple[np.ndarray | None, dict]:
    """The direction of the other branch through the branch point x, from the bifurcation equation.

    Args:
        extended: the system as G(x).
        x: the branch point.
        jacobian: dG/dx at x, shape (n, n + 1).
        reference: the traced branch's direction there (need not be a unit vector).

    Returns:
        (unit direction of the other branch, facts), or (None, facts with ``"reason"``) when the
        equation does not give two real directions.
    """
    left, singular, right = np.linalg.svd(jacobian)
    psi = left[:, -1]
    null = right[-2:]
    h = float(finite_difference_step(np.array([float(np.abs(x).max())]))[0])  # phi has unit length
    contracted = []
    for phi in null:
        _, forward = extended.linearise(x + h * phi)
        _, backward = extended.linearise(x - h * phi)
        contracted.append(psi @ (forward - backward) / (2.0 * h))  # psi . G''[phi, .]
    a = float(contracted[0] @ null[0])
    b = 0.5 * float(contracted[0] @ null[1] + contracted[1] @ null[0])
    c = float(contracted[1] @ null[1])
    facts = {"coefficients": (a, b, c)}
    roots = quadratic_directions(a, b, c)
    if roots is None:
        facts["reason"] = (f"the bifurcation equation has no two real directions (b^2 - a c = {b * b - a * c:.3g} "
                           f"with a, b, c = {a:.3g}, {b:.3g}, {c:.3g}): a degenerate branch point")
        return None, facts
    candidates = [root @ null for root in roots]
    unit = reference / np.linalg.norm(reference)
    cosines = [abs(float(t @ unit)) for t in candidates]
    other = int(np.argmin(cosines))
    facts["cosine_to_traced_branch"] = cosines[other]
    facts["traced_branch_match"] = cosines[1 - other]
    return candidates[other] / np.linalg.norm(candidates[other]), facts


# -- branch switching ------------------------------------------------------------------------------
def trace_keyword_names() -> tuple[str, ...]:
    return tuple(name for name, parameter in inspect.signature(trace).parameters.items()
                 if parameter.kind is inspect.Parameter.KEYWORD_ONLY)


def switch_branch(branch, point, system, *, direction: int = 1, guess: str = "bifurcation_equation",
                  **trace_keywords):
    """Trace the other branch through a simple branch point found on ``branch``.

    At a simple branch point the null space of dG/dx (n x (n + 1)) is two-dimensional: it holds the
    tangents of both crossing branches. With ``guess="bifurcation_equation"`` (the default) the
    direction of the other branch is the root of the algebraic bifurcation equation (second-order
    data at the point, :mod:`contin.tracing._switching`; Keller 1977, Allgower & Georg 1990) that is not the
    traced branch's; where that equation gives no two real directions (a degenerate point) the
    perpendicular guess is used instead and ``stats["switch"]["note"]`` says why. With
    ``guess="perpendicular"`` the direction is the null vector orthogonal to the traced branch's
    tangent (Keller 1977, section 6; Seydel 2010, section 5.6), which may fall back onto the first
    branch where the second crosses it at a shallow angle. The new trace starts one ``step`` (the
    trace keyword, 0.01 by default) from the branch point along that direction and corrects the guess
    on the hyperplane orthogonal to it. ``stats["switch"]`` tells which guess was used. A branch
    point where more than two branches meet is not resolved.

    Args:
        branch: the :class:`~contin.Branch` the branch point was found on.
        point: the :class:`~contin.SpecialPoint` of kind ``branch_point`` (from ``branch.special("branch_point")``).
        system: the system that was traced (the same unknowns and free parameter).
        direction: +1 or -1, which way along the new branch: +1 moves the free parameter up, or, where
            the perpendicular direction leaves it fixed (a vertical branch, as at a pitchfork), the
            first unknown that moves.
        guess: ``"bifurcation_equation"`` or ``"perpendicular"`` (see above).
        trace_keywords: passed on to :func:`contin.trace` (``step``, ``max_step``, ``bounds``,
            ``events``, ...); ``start``, ``free``, ``parameters`` and ``tangent`` are set here.

    Returns:
        The new :class:`~contin.Branch`, starting next to the branch point.

    Raises:
        InputError: ``point`` is not a branch point of ``branch``, ``system`` does not match the
            branch's columns, the Jacobian there is not singular (not a branch point of this system),
            a bad ``direction``, or a keyword that :func:`contin.trace` does not take or that is set here.
    """
    if not isinstance(branch, Branch):
        raise InputError(f"branch must be a contin Branch (from contin.trace), got {type(branch).__name__}")
    if not isinstance(point, SpecialPoint) or point.kind != "branch_point":
        found = type(point).__name__ if not isinstance(point, SpecialPoint) else f"a {point.kind!r} point"
        raise InputError(f"point must be a branch point of the branch (from branch.special('branch_point')), "
                         f"got {found}")
    if not isinstance(system, System):
        raise InputError(f"system must be a contin System, got {type(system).__name__}")
    if isinstance(direction, bool) or direction not in (1, -1):
        raise InputError(f"direction={direction!r} must be 1 or -1")
    if guess not in ("bifurcation_equation", "perpendicular"):
        raise InputError(f"guess={guess!r} is not known; use 'bifurcation_equation' or 'perpendicular'"
                         f"{suggest(str(guess), ('bifurcation_equation', 'perpendicular'))}")
    columns = tuple(system.unknowns) + (branch.free,)
    if branch.free not in system.parameters or columns != tuple(branch.columns):
        raise InputError(f"system does not match the branch: the branch has columns {', '.join(branch.columns)}, "
                         f"the system gives {', '.join(tuple(system.unknowns) + (branch.free,))}; pass the "
                         "system that was traced")
    allowed = trace_keyword_names()
    for name in sorted(trace_keywords):
        if name in ("start", "free", "parameters", "tangent"):
            raise InputError(f"switch_branch sets {name!r} itself (from the branch point); leave it out")
        if name not in allowed:
            raise InputError(f"switch_branch got the keyword {name!r}, which contin.trace does not take"
                             f"{suggest(name, allowed)}")

    x_star = np.asarray(point.point, dtype=float)
    n = system.size
    free_index = system.parameters.index(branch.free)
    parameters = dict(branch.parameters)
    parameters[branch.free] = float(x_star[n])
    # The bifurcation equation needs the singular vectors of dG/dx: a dense decomposition.
    extended = Extended(system, system.parameter_vector(parameters), free_index, Counters(), linear_solver="dense")
    _, jacobian = extended.linearise(x_star)
    if not np.all(np.isfinite(jacobian)):
        raise InputError("the Jacobian dF/dx is not finite at the given branch point: it is not a branch point "
                         "of this system; pass the system that was traced")
    try:
        _, singular_values, right = np.linalg.svd(jacobian)
    except np.linalg.LinAlgError as error:
        raise InputError(f"the Jacobian dF/dx at the given branch point could not be decomposed ({error}); "
                         "check the system's derivatives there") from None
    scale = max(1.0, float(singular_values[0])) if n > 1 else 1.0
    smallest = float(singular_values[-1])
    if not smallest <= 1e-6 * scale:
        raise InputError(f"the Jacobian dF/dx is not singular at the given point (smallest singular value "
                         f"{smallest:.3g}): it is not a branch point of this system; pass the system that was traced")
    null = right[-2:]  # rows: an orthonormal basis of the two-dimensional null space

    # The traced branch's direction through the point: its neighbours' tangents (the tangent computed
    # at the singular point itself is ill-defined).
    rows = [k for k in (point.index - 1, point.index + 1) if 0 <= k < len(branch.tangents) and k != point.index]
    reference = sum((branch.tangents[k] for k in rows), np.zeros(n + 1)) if rows else np.asarray(point.tangent)
    if not np.any(reference):
        reference = np.asarray(point.tangent, dtype=float)
    along = null @ reference  # coefficients of the old tangent in the null basis
    if not float(np.linalg.norm(along)) > 0.0:
        along = np.array([1.0, 0.0])
    perpendicular = np.array([-along[1], along[0]]) @ null
    perpendicular /= np.linalg.norm(perpendicular)
    switch = {"guess": "perpendicular"}
    if guess == "bifurcation_equation":

        other, facts = bifurcation_directions(extended, x_star, jacobian, reference)
        if other is None:
            switch["note"] = f"{facts['reason']}; the perpendicular guess is used"
        else:
            perpendicular = other
            switch = {"guess": "bifurcation_equation", "coefficients": list(facts["coefficients"]),
                      "cosine_to_traced_branch": facts["cosine_to_traced_branch"]}
    largest = float(np.abs(perpendicular).max())
    order = [n] + list(range(n))  # the free parameter first, then the unknowns in order
    leading = next(k for k in order if abs(perpendicular[k]) >= 1e-3 * largest)
    if perpendicular[leading] < 0.0:
        perpendicular = -perpendicular
    perpendicular *= direction

    step = float(trace_keywords.get("step", 0.01))
    if not (math.isfinite(step) and step > 0.0):
        raise InputError(f"step={trace_keywords.get('step')!r} must be a positive finite number")
    x0 = x_star + step * perpendicular
    try:
        switched = trace(system, x0[:n], free=branch.free, parameters={**parameters, branch.free: float(x0[n])},
                         tangent=perpendicular, direction=1, **trace_keywords)
    except InputError as error:
        if "singular" not in str(error):
            raise
        where = ", ".join(f"{c} = {v:.6g}" for c, v in zip(columns, x_star))
        used = switch.get("note") or ("the bifurcation equation (coefficients "
                                      f"{', '.join(f'{v:.3g}' for v in switch.get('coefficients', ()))}) was used"
                                      if switch["guess"] == "bifurcation_equation" else "the perpendicular guess was used")
        raise InputError(f"switching cannot decide at the branch point at {where} (a degenerate branch point?): "
                         f"{used}, and its guess starts where the Jacobian is singular; start contin.trace near "
                         "the other branch yourself (with tangent=)") from None
    switched.stats["switch"] = switch
    return switched
