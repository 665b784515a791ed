"""The discretised one-dimensional Bratu problem: its fold, checked independently and against λc."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

import contin
from catalogue import BRATU_CRITICAL_LAMBDA, BRATU_MAX_U_AT_FOLD, bratu_system

# η solves η = coth η; the continuum fold is at λc = 8(η² − 1) = 3.51383071912516 with max u = 2 ln cosh η
# (Boundary Value Problems 2013:142; the fold relations derived from the exact solution).
ETA = 1.199678640


def traced_fold(interior: int) -> contin.SpecialPoint:
    system = bratu_system(interior)
    # The upper branch creeps back towards λ = 0 with u growing without bound: stop it at u = 3 mid-span.
    middle = f"u{interior // 2}"
    branch = contin.trace(system, np.zeros(interior), free="lambda", step=0.1, max_step=0.5,
                          bounds={"lambda": (-0.1, 4.0), middle: (-1.0, 3.0)}, max_points=400)
    assert branch.success, branch.message
    assert np.all(branch.residual_norms <= 1e-10)  # every returned point within the residual tolerance
    for row in branch.points:
        assert np.max(np.abs(system.residual(row[:-1], np.array([row[-1]])))) <= 1e-10
    (fold,) = branch.special("fold")
    return fold


def moore_spence_fold(interior: int) -> tuple[float, np.ndarray]:
    """The discrete fold solved independently: F = 0, F_u φ = 0, sum(φ) = 1 (Moore & Spence, SIAM J.
    Numer. Anal. 17, 1980), by scipy's fsolve from the continuum solution at the fold."""
    system = bratu_system(interior)
    x = np.linspace(0, 1, interior + 2)[1:-1]
    u0 = 2 * np.log(math.cosh(ETA) / np.cosh(ETA * (1 - 2 * x)))
    phi0 = np.sin(np.pi * x)
    phi0 /= phi0.sum()

    def equations(z):
        u, phi, lam = z[:interior], z[interior:2 * interior], z[-1]
        p = np.array([lam])
        f, ju, _ = system.linearise(u, p, 0)
        return np.concatenate([f, ju @ phi, [phi.sum() - 1.0]])

    z = scipy.optimize.fsolve(equations, np.concatenate([u0, phi0, [BRATU_CRITICAL_LAMBDA]]), xtol=1e-13)
    assert np.max(np.abs(equations(z))) < 1e-8
    return z[-1], z[:interior]


@pytest.mark.parametrize("interior", [9, 19, 39])
def test_discrete_fold_agrees_with_an_independent_solve(interior):
    fold = traced_fold(interior)
    lam, u = moore_spence_fold(interior)
    assert fold.values["lambda"] == pytest.approx(lam, abs=1e-9)
    assert fold.point[:-1] == pytest.approx(u, abs=1e-6)


def test_discrete_fold_tends_to_the_published_critical_value():
    # Central differences err by O(h^2): halving h should cut the error in λ by about 4, and
    # Richardson extrapolation should land on λc = 3.513830719 (Boundary Value Problems 2013:142).
    lambdas = [traced_fold(n).values["lambda"] for n in (9, 19, 39, 79)]
    errors = [abs(lam - BRATU_CRITICAL_LAMBDA) for lam in lambdas]
    assert errors == sorted(errors, reverse=True)
    for coarse, fine in zip(errors, errors[1:]):
        assert 3.5 < coarse / fine < 4.5
    extrapolated = (4 * lambdas[-1] - lambdas[-2]) / 3
    assert extrapolated == pytest.approx(BRATU_CRITICAL_LAMBDA, abs=2e-6)
    assert errors[-1] < 3e-4  # h = 1/80: the O(h^2) error is about 1.8 h^2


def test_largest_u_at_the_fold_tends_to_the_published_value():
    # max u at the fold = 2 ln cosh η = 1.186842169 (from the exact solution; BVP 2013:142).
    fold = traced_fold(79)  # odd interior count: the middle grid point is x = 1/2
    assert float(np.max(fold.point[:-1])) == pytest.approx(BRATU_MAX_U_AT_FOLD, abs=2e-4)
