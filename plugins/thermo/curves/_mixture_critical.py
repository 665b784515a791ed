"""Mixture critical points by the Heidemann-Khalil criterion, and binary critical loci.

At a critical point of a mixture of composition z (Heidemann & Khalil, The calculation of critical
points, AIChE J. 26 (1980) 769), at fixed T and V,

    Q dn = 0 with Q_ij = d2(A/RT)/dn_i dn_j (a zero eigenvalue), and
    C = sum_ijk d3(A/RT)/dn_i dn_j dn_k dn_i dn_j dn_k = 0 along that eigenvector dn.

Following Michelsen & Mollerup (Thermodynamic Models, 2nd ed., 2007, ch. 12) the matrix is scaled,
B_ij = sqrt(z_i z_j) Q_ij, the smallest eigenvalue of B and its eigenvector u give dn_i = sqrt(z_i) u_i
(normalised, with the sign chosen so that sum_i b_i dn_i > 0, which keeps C continuous), and the
cubic form is exact (third derivatives of the Helmholtz energy, ``Mixture.cubic_form``). For each
volume V = kappa b the temperature with a zero eigenvalue is found by bracketing; then kappa is
solved for C = 0; a two-dimensional Newton polish ends it.

This calculation is independent of the phase-envelope trace and is used to check it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from collections.abc import Sequence

import numpy as np
from scipy.optimize import brentq

import contin
from contin import InputError

from ..models._mixture import Mixture

__all__ = ["CriticalPoint", "critical_conditions", "critical_point", "critical_points", "polish_critical",
           "binary_critical_locus"]


@dataclass(frozen=True)
class CriticalPoint:
    """A mixture critical point.

    Attributes:
        T: temperature (K); P: pressure (Pa); v: molar volume (m^3/mol).
        eigenvalue: smallest eigenvalue of the scaled Hessian there; cubic: the cubic form there (both ~0).
    """

    T: float
    P: float
    v: float
    eigenvalue: float
    cubic: float


def critical_conditions(mixture: Mixture, z: np.ndarray, T: float, v: float) -> tuple[float, float]:
    """(smallest eigenvalue of B, cubic form C) at temperature T and molar volume v for composition z."""
    z = np.asarray(z, dtype=float)
    root = np.sqrt(z)
    Q = mixture.helmholtz_hessian(T, v, z)
    scaled = np.outer(root, root) * Q
    values, vectors = np.linalg.eigh(scaled)
    u = vectors[:, 0]
    dn = root * u
    if float(mixture.b @ dn) < 0:
        dn = -dn
    return float(values[0]), mixture.cubic_form(T, v, z, dn)


# A sign change of the cubic form C that leaves |C| above this fraction of its size at the ends of the
# bracket is a jump, not a root: C is odd in dn, whose sign is fixed by b . dn > 0, so C changes sign
# by a jump where b . dn passes through zero. At a root bracketed to 1e-15 |C| is below 1e-12 of it.
_JUMP = 1e-6


def _temperature_of_zero_eigenvalue(mixture: Mixture, z: np.ndarray, v: float, T_high: float) -> float | None:
    def f(lnT):
        return critical_conditions(mixture, z, math.exp(lnT), v)[0]

    grid = np.linspace(math.log(T_high), math.log(T_high / 20.0), 60)
    previous = f(grid[0])
    for k in range(1, grid.size):
        current = f(grid[k])
        if previous > 0 >= current:
            return math.exp(brentq(f, grid[k], grid[k - 1], xtol=1e-15, rtol=1e-15))
        previous = current
    return None


def critical_points(mixture: Mixture, z: Sequence[float]) -> list[CriticalPoint]:
    """Every critical point found for composition z with V/b between 1.05 and 20, sorted by T.

    Raises:
        InputError: the composition does not match the mixture.
    """
    z = np.asarray(z, dtype=float).reshape(-1)
    if z.size != mixture.size or np.any(z < 0) or not z.sum() > 0:
        raise InputError(f"the composition must hold {mixture.size} non-negative mole fractions")
    z = z / z.sum()
    b = float(mixture.b @ z)
    T_high = 3.0 * float(np.max(mixture.Tc))

    def cubic_at(ln_kappa: float):
        v = math.exp(ln_kappa) * b
        T = _temperature_of_zero_eigenvalue(mixture, z, v, T_high)
        if T is None:
            return math.nan, None
        return critical_conditions(mixture, z, T, v)[1], T

    kappas = np.linspace(math.log(1.05), math.log(20.0), 48)
    values = [cubic_at(k) for k in kappas]
    found = []
    for k in range(len(kappas) - 1):
        (ca, Ta), (cb, Tb) = values[k], values[k + 1]
        if math.isfinite(ca) and math.isfinite(cb) and (ca > 0) != (cb > 0):
            ln_kappa = brentq(lambda x: cubic_at(x)[0], kappas[k], kappas[k + 1], xtol=1e-15, rtol=1e-15)
            cubic, T = cubic_at(ln_kappa)
            if not abs(cubic) < _JUMP * max(abs(ca), abs(cb)):
                continue  # C jumped across zero where b . dn = 0 flips dn's sign: not a root
            found.append(_polish(mixture, z, T, math.exp(ln_kappa) * b))
    return sorted(found, key=lambda c: c.T)


def _polish(mixture: Mixture, z: np.ndarray, T: float, v: float) -> CriticalPoint:
    """Two-dimensional Newton on (ln T, ln v) with a central-difference Jacobian, to round-off."""
    return polish_critical(mixture, z, T, v)[0]


def polish_critical(mixture: Mixture, z: np.ndarray, T: float, v: float,
                    largest_step: float = 1e-3) -> tuple[CriticalPoint, float]:
    """The critical point near (T, v) by Newton on the two Heidemann-Khalil conditions in (ln T, ln v).

    Returns:
        (the point, the size of the last Newton step in ln T and ln v: how well it is known); the step
        is infinite when Newton stopped before converging (a step larger than ``largest_step``, a
        singular or non-finite Jacobian).
    """
    x = np.array([math.log(T), math.log(v)])

    def g(x):
        return np.array(critical_conditions(mixture, z, math.exp(x[0]), math.exp(x[1])))

    for _ in range(6):  # the first pass sets last, whatever happens in it
        r = g(x)
        h = 1e-6
        J = np.column_stack([(g(x + h * e) - g(x - h * e)) / (2 * h) for e in np.eye(2)])
        try:
            dx = np.linalg.solve(J, -r)
        except np.linalg.LinAlgError:
            last = math.inf
            break
        if not np.all(np.isfinite(dx)) or np.max(np.abs(dx)) > largest_step:
            last = math.inf
            break
        x = x + dx
        last = float(np.max(np.abs(dx)))
        if last < 1e-12:
            break  # Newton is quadratic here: the next step would be below round-off
    T, v = math.exp(x[0]), math.exp(x[1])
    eigenvalue, cubic = critical_conditions(mixture, z, T, v)
    return CriticalPoint(T, mixture.pressure(T, v, z), v, eigenvalue, cubic), last


def critical_point(mixture: Mixture, z: Sequence[float], near: tuple[float, float] | None = None) -> CriticalPoint:
    """The mixture critical point by Heidemann & Khalil (1980); the one nearest ``near`` = (T, P) if several.

    Raises:
        InputError: no critical point found (for example a composition with no vapour-liquid critical
            point under this model).
    """
    found = critical_points(mixture, z)
    if not found:
        raise InputError("no mixture critical point was found for this composition (Heidemann-Khalil criterion)")
    if near is None:
        return found[-1]
    return min(found, key=lambda c: abs(c.T / near[0] - 1) + abs(c.P / near[1] - 1))


@dataclass(frozen=True)
class CriticalLocus:
    """The critical line of a binary, from one pure component to the other.

    Attributes:
        x1: mole fraction of the first component; T (K), P (Pa), v (m^3/mol): arrays along the line.
        status, message: how the continuation ended.
    """

    x1: np.ndarray
    T: np.ndarray
    P: np.ndarray
    v: np.ndarray
    status: str
    message: str


def binary_critical_locus(mixture: Mixture, *, ends: float = 1e-7, max_points: int = 400) -> CriticalLocus:
    """Binary critical locus by continuation in composition, traced to (nearly) pure components.

    The two Heidemann-Khalil conditions in (ln T, ln v) are traced with the engine with the mole
    fraction x1 of the first component as the free parameter, both ways from x1 = 0.5, between
    ``ends`` and 1 - ``ends``; the ends approach the pure-component critical points.

    Raises:
        InputError: not a binary, or no critical point at x1 = 0.5.
    """
    if mixture.size != 2:
        raise InputError(f"a binary critical locus needs two components, not {mixture.size}")

    def residual(u, p):
        # Clipped so that a predictor step just past a pure end still evaluates; the bound on x1
        # then locates the end exactly.
        x1 = min(max(float(p[0]), 1e-15), 1.0 - 1e-15)
        z = np.array([x1, 1.0 - x1])
        return np.array(critical_conditions(mixture, z, math.exp(u[0]), math.exp(u[1])))

    def parameter_jacobian(u, p):
        # Central differences in x1 that stay inside (0, 1): the engine's default step (about 6e-6)
        # would reach past a pure end once x1 is nearer to it than that, where the clipped residual
        # no longer changes, and the steps then collapsed about 1e-6 from pure methane.
        x1 = float(p[0])
        h = min(6e-6, 0.5 * min(x1, 1.0 - x1))
        return ((residual(u, [x1 + h]) - residual(u, [x1 - h])) / (2.0 * h)).reshape(2, 1)

    system = contin.CallableSystem(residual, ["lnT", "lnv"], {"x1": 0.5}, parameter_jacobian=parameter_jacobian)
    middle = critical_point(mixture, [0.5, 0.5])
    start = [math.log(middle.T), math.log(middle.v)]
    halves = []
    for direction in (-1, 1):
        branch = contin.trace(system, start, free="x1", direction=direction, step=0.02, max_step=0.05,
                              min_step=1e-10, tolerance=1e-11, bounds={"x1": (ends, 1.0 - ends)},
                              max_points=max_points)
        halves.append(branch)
    down, up = halves
    rows = np.vstack([down.points[::-1], up.points[1:]])
    x1 = rows[:, 2]
    T = np.exp(rows[:, 0])
    v = np.exp(rows[:, 1])
    P = np.array([mixture.pressure(t, vv, np.array([x, 1 - x])) for t, vv, x in zip(T, v, x1)])
    # complete only when both halves reached their pure ends (a stop at max_points is no locus)
    ok = down.status.label == up.status.label == "bound_reached"
    message = f"x1 towards 0: {down.message}; x1 towards 1: {up.message}"
    return CriticalLocus(x1, T, P, v, "bound_reached" if ok else "incomplete", message)
