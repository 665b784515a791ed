"""Shared catalogue of problems with exact or published answers; every solver path runs against it.

Each entry: a system, a start, trace keywords, and the special points it must find.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

import contin


@dataclass(frozen=True)
class KnownProblem:
    name: str
    system: contin.System
    start: dict
    trace: dict
    folds: tuple[dict, ...] = ()          # coordinate values of each fold, in branch order
    closed_loop: bool = False
    source: str = ""
    extra: dict = field(default_factory=dict)


def fold_normal_form() -> KnownProblem:
    # u^2 + p = 0: a single fold at (0, 0). Kuznetsov, Elements of Applied Bifurcation Theory, ch. 3.
    system = contin.CallableSystem(
        lambda u, p: [u[0] ** 2 + p[0]], ["u"], {"p": -1.0},
        jacobian=lambda u, p: [[2 * u[0]]], parameter_jacobian=lambda u, p: [[1.0]],
    )
    return KnownProblem("fold normal form", system, {"u": 1.0},
                        dict(free="p", step=0.05, bounds={"p": (-1.5, 0.5)}),
                        folds=({"u": 0.0, "p": 0.0},), source="Kuznetsov, Elements of Applied Bifurcation Theory, ch. 3")


def cubic_s_curve() -> KnownProblem:
    # u^3 - u + p = 0: folds at u = ±1/sqrt(3), p = ±2/(3 sqrt(3)) (exact).
    system = contin.CallableSystem(
        lambda u, p: [u[0] ** 3 - u[0] + p[0]], ["u"], {"p": -1.0},
        jacobian=lambda u, p: [[3 * u[0] ** 2 - 1]], parameter_jacobian=lambda u, p: [[1.0]],
    )
    r = 1 / math.sqrt(3)
    return KnownProblem("cubic S-curve", system, {"u": 1.3247179572447460},
                        dict(free="p", step=0.05, bounds={"p": (-1.0, 1.0)}),
                        folds=({"u": r, "p": 2 * r / 3}, {"u": -r, "p": -2 * r / 3}), source="exact")


def circle() -> KnownProblem:
    # u^2 + p^2 = 1: a closed loop with folds in p at u = 0, p = ±1 (exact).
    system = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 - 1.0], ["u"], {"p": 0.0})
    return KnownProblem("circle", system, {"u": 1.0}, dict(free="p", step=0.1),
                        folds=({"u": 0.0, "p": 1.0}, {"u": 0.0, "p": -1.0}), closed_loop=True, source="exact")


def two_unknown_fold() -> KnownProblem:
    # x = y^2 - p ... a two-unknown system whose folds in p are those of the cubic: y^3 - y + p = 0, x = y^2.
    def residual(u, p):
        x, y = u
        return [x - y * y, y * x - y + p[0]]

    system = contin.CallableSystem(residual, ["x", "y"], {"p": -1.0})
    r = 1 / math.sqrt(3)
    return KnownProblem("two-unknown S-curve", system, {"x": 1.3247179572447460**2, "y": 1.3247179572447460},
                        dict(free="p", step=0.05, bounds={"p": (-1.0, 1.0)}),
                        folds=({"x": r * r, "y": r, "p": 2 * r / 3}, {"x": r * r, "y": -r, "p": -2 * r / 3}),
                        source="exact (eliminate x = y^2 to get the cubic)")


def catalogue() -> list[KnownProblem]:
    return [fold_normal_form(), cubic_s_curve(), circle(), two_unknown_fold()]


def bratu_system(interior: int) -> contin.CallableSystem:
    """One-dimensional Bratu problem u'' + λ e^u = 0, u(0) = u(1) = 0, central differences."""
    h = 1.0 / (interior + 1)
    main = -2.0 / h**2 * np.ones(interior)
    off = 1.0 / h**2 * np.ones(interior - 1)
    laplacian = np.diag(main) + np.diag(off, 1) + np.diag(off, -1)

    def residual(u, p):
        return laplacian @ u + p[0] * np.exp(u)

    def jacobian(u, p):
        return laplacian + np.diag(p[0] * np.exp(u))

    def parameter_jacobian(u, p):
        return np.exp(u)[:, None]

    return contin.CallableSystem(residual, [f"u{i}" for i in range(interior)], {"lambda": 0.0},
                                 jacobian=jacobian, parameter_jacobian=parameter_jacobian,
                                 start=np.zeros(interior))


# Published: λc = 3.51383071912516 (Boundary Value Problems 2013:142; the fold relations
# λc = 8(η² − 1), η = coth η derived from the exact solution).
BRATU_CRITICAL_LAMBDA = 3.51383071912516
BRATU_MAX_U_AT_FOLD = 1.186842169


# -- branch points and Hopf points (appended with contin/tracing/_bifurcation.py) -----------------------------
def pitchfork_normal_form() -> KnownProblem:
    # u (p - u^2) = 0: the trivial branch u = 0 meets u^2 = p at a branch point (0, 0).
    # Kuznetsov, Elements of Applied Bifurcation Theory, 3rd ed. 2004, ch. 7 (pitchfork normal form).
    system = contin.CallableSystem(
        lambda u, p: [u[0] * (p[0] - u[0] ** 2)], ["u"], {"p": -1.0},
        jacobian=lambda u, p: [[p[0] - 3 * u[0] ** 2]], parameter_jacobian=lambda u, p: [[u[0]]],
    )
    return KnownProblem("pitchfork normal form", system, {"u": 0.0},
                        dict(free="p", step=0.05, bounds={"p": (-1.0, 1.0)}),
                        source="Kuznetsov, Elements of Applied Bifurcation Theory, ch. 7",
                        extra={"branch_points": ({"u": 0.0, "p": 0.0},)})


def transcritical_normal_form() -> KnownProblem:
    # u (p - u) = 0: the branches u = 0 and u = p cross at (0, 0).
    # Kuznetsov, Elements of Applied Bifurcation Theory, 3rd ed. 2004, ch. 7 (transcritical normal form).
    system = contin.CallableSystem(
        lambda u, p: [u[0] * (p[0] - u[0])], ["u"], {"p": -1.0},
        jacobian=lambda u, p: [[p[0] - 2 * u[0]]], parameter_jacobian=lambda u, p: [[u[0]]],
    )
    return KnownProblem("transcritical normal form", system, {"u": 0.0},
                        dict(free="p", step=0.05, bounds={"p": (-1.0, 1.0)}),
                        source="Kuznetsov, Elements of Applied Bifurcation Theory, ch. 7",
                        extra={"branch_points": ({"u": 0.0, "p": 0.0},)})


def symmetric_pitchfork_two_unknowns() -> KnownProblem:
    # x (p - y - x^2) = 0, y - p/2 - 1/4 - x^2 = 0, symmetric under x -> -x. The symmetric branch
    # x = 0, y = p/2 + 1/4 loses stability at p = y, i.e. p = 1/2; the asymmetric branches are
    # x^2 = (2p - 1)/8, y = (6p + 1)/8 (exact: eliminate y between the two equations).
    def residual(u, p):
        x, y = u
        return [x * (p[0] - y - x * x), y - 0.5 * p[0] - 0.25 - x * x]

    def jacobian(u, p):
        x, y = u
        return [[p[0] - y - 3 * x * x, -x], [-2 * x, 1.0]]

    system = contin.CallableSystem(residual, ["x", "y"], {"p": -0.5}, jacobian=jacobian,
                                   parameter_jacobian=lambda u, p: [[u[0]], [-0.5]])
    return KnownProblem("symmetry-breaking pitchfork in two unknowns", system, {"x": 0.0, "y": 0.0},
                        dict(free="p", step=0.05, bounds={"p": (-0.5, 1.5)}), source="exact",
                        extra={"branch_points": ({"x": 0.0, "y": 0.5, "p": 0.5},)})


def brusselator(a: float) -> KnownProblem:
    # du/dt = A - (B + 1) u + u^2 v, dv/dt = B u - u^2 v; equilibrium u = A, v = B/A; traced in B.
    # Hopf point at B = 1 + A^2 with angular frequency A (Lefever & Nicolis, J. Theor. Biol. 30, 1971).
    def residual(u, p):
        x, y = u
        big_a, big_b = p
        return [big_a - (big_b + 1) * x + x * x * y, big_b * x - x * x * y]

    def jacobian(u, p):
        x, y = u
        big_a, big_b = p
        return [[-(big_b + 1) + 2 * x * y, x * x], [big_b - 2 * x * y, -x * x]]

    def parameter_jacobian(u, p):
        x, _ = u
        return [[1.0, -x], [0.0, x]]

    system = contin.CallableSystem(residual, ["u", "v"], {"A": a, "B": 0.5}, jacobian=jacobian,
                                   parameter_jacobian=parameter_jacobian, kind="ode")
    return KnownProblem(f"Brusselator A = {a:g}", system, {"u": a, "v": 0.5 / a},
                        dict(free="B", step=0.05, bounds={"B": (0.5, 2.0 + 2 * a * a)}),
                        source="Lefever & Nicolis, J. Theor. Biol. 30, 1971",
                        extra={"hopf": {"B": 1.0 + a * a, "angular_frequency": a}})


def neutral_saddle_ode() -> KnownProblem:
    # du/dt = p u + v - 1, dv/dt = u - v: the Jacobian [[p, 1], [1, -1]] is symmetric, so its
    # eigenvalues are real; their sum p - 1 vanishes at p = 1, where they are +-sqrt(2): a neutral
    # saddle, not a Hopf point (exact). The equilibrium is u = v = 1/(p + 1).
    system = contin.CallableSystem(
        lambda u, p: [p[0] * u[0] + u[1] - 1.0, u[0] - u[1]], ["u", "v"], {"p": 0.0},
        jacobian=lambda u, p: [[p[0], 1.0], [1.0, -1.0]], parameter_jacobian=lambda u, p: [[u[0]], [0.0]],
        kind="ode",
    )
    return KnownProblem("neutral saddle", system, {"u": 1.0, "v": 1.0},
                        dict(free="p", step=0.05, bounds={"p": (0.0, 2.0)}), source="exact",
                        extra={"neutral_saddle": {"p": 1.0, "eigenvalues": (-math.sqrt(2.0), math.sqrt(2.0))}})
