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
