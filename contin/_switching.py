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
Stability Analysis, 3rd ed., Springer 2010, section 5.6). The second derivatives are central
differences of the exact Jacobian along phi_1 and phi_2.
"""

from __future__ import annotations

import math

import numpy as np

from ._extended import Extended
from ._system import finite_difference_step

__all__ = ["bifurcation_directions", "quadratic_directions"]


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
