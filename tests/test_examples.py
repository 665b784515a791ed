"""The shipped example problem files: each finds the special points its model says it must."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import fsolve

from contin.commands._cli import example_names, example_path
from contin.systems._problem import load_problem
from contin.studies._run import run_problem

# Bratu fold lambda_c = 3.51383071912516 (Boundary Value Problems 2013:142); the slab of half-width 1
# maps onto Bratu's unit interval with lambda = 4 delta, so the Frank-Kamenetskii slab limit is lambda_c / 4.
BRATU_FOLD = 3.51383071912516


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


def traced(name):
    with example_path(name) as path:
        problem = load_problem(path)
        branch = run_problem(problem)
    assert branch.status.success, branch.message
    # Every returned point satisfies the equations (to well within the corrector tolerance).
    p = problem.system.parameter_vector()
    free = problem.system.index_of_parameter(branch.free)
    for row in branch.points:
        p[free] = row[-1]
        assert np.max(np.abs(problem.system.residual(row[:-1], p))) < 1e-8
    return problem, branch


def kinds(branch, kind):
    return [sp for sp in branch.special_points if sp.kind == kind]


def test_three_examples_are_shipped():
    assert example_names() == ["pellet_ignition", "roof_truss", "stirred_tank"]


def test_stirred_tank_ignition_and_extinction():
    problem, branch = traced("stirred_tank")
    b, beta = problem.system.constants["B"], problem.system.constants["beta"]
    # Exact for this model (derived here): x = y (1 + beta)/B on the branch, Da = x e^-y / (1 - x), and
    # dDa/dy = 0 at y^2 - B' y + B' = 0 with B' = B/(1 + beta).
    reduced = b / (1 + beta)
    roots = [(reduced - math.sqrt(reduced**2 - 4 * reduced)) / 2, (reduced + math.sqrt(reduced**2 - 4 * reduced)) / 2]

    def damkoehler(y):
        x = y / reduced
        return x * math.exp(-y) / (1 - x)

    folds = kinds(branch, "fold")
    assert len(folds) == 2
    ignition, extinction = folds  # in the order met: ignition on the cold branch first
    assert ignition.values["y"] == pytest.approx(roots[0], abs=1e-8)
    assert ignition.values["Da"] == pytest.approx(damkoehler(roots[0]), abs=1e-10)
    assert extinction.values["y"] == pytest.approx(roots[1], abs=1e-8)
    assert extinction.values["Da"] == pytest.approx(damkoehler(roots[1]), abs=1e-10)
    assert extinction.values["Da"] < ignition.values["Da"]
    (hot,) = [sp for sp in branch.special_points if sp.name == "hot_reactor"]
    assert hot.values["y"] == pytest.approx(2.5, abs=1e-9)
    assert hot.values["Da"] == pytest.approx(damkoehler(2.5), abs=1e-10)
    (cold,) = branch.at  # below extinction the steady state is unique (exact, from the fold values)
    assert cold.values["Da"] == 0.05 and cold.values["x"] == pytest.approx(cold.values["y"] / reduced, rel=1e-9)


def test_roof_truss_snap_through():
    problem, branch = traced("roof_truss")
    h = problem.system.constants["h"]
    # Exact for the two-bar truss (derived here): P = 2 s (1/sqrt(1 + s^2) - 1/L0) with s = h - w, so
    # dP/ds = 0 at (1 + s^2)^(3/2) = L0, i.e. s = +-sqrt(L0^(2/3) - 1), L0 = sqrt(1 + h^2).
    length = math.sqrt(1 + h * h)
    s = math.sqrt(length ** (2 / 3) - 1)
    peak = 2 * s * (1 / math.sqrt(1 + s * s) - 1 / length)
    folds = kinds(branch, "fold")
    assert len(folds) == 2
    assert folds[0].values["w"] == pytest.approx(h - s, abs=1e-8) and folds[0].values["P"] == pytest.approx(peak, abs=1e-11)
    assert folds[1].values["w"] == pytest.approx(h + s, abs=1e-8) and folds[1].values["P"] == pytest.approx(-peak, abs=1e-11)
    (flat,) = [sp for sp in branch.special_points if sp.name == "bars_flat"]
    assert flat.values["w"] == pytest.approx(h, abs=1e-9) and flat.values["P"] == pytest.approx(0.0, abs=1e-9)


def discrete_bratu_fold(intervals: int) -> float:
    """Fold of the central-difference Bratu problem by scipy's fsolve on the fold system F = 0, J phi = 0, |phi| = 1."""
    n, h2 = intervals - 1, 1.0 / intervals**2
    x = np.arange(1, intervals) / intervals
    second = (np.diag(-2.0 * np.ones(n)) + np.diag(np.ones(n - 1), 1) + np.diag(np.ones(n - 1), -1)) / h2

    def equations(z):
        u, lam, phi = z[:n], z[n], z[n + 1 :]
        jac = second + lam * np.diag(np.exp(u))
        return np.concatenate([second @ u + lam * np.exp(u), jac @ phi, [phi @ phi - 1.0]])

    guess = np.concatenate([4.75 * x * (1 - x), [3.5], np.sin(np.pi * x) * math.sqrt(2.0 / n)])
    solution, info, status, message = fsolve(equations, guess, full_output=True, xtol=1e-13)
    assert status == 1, message
    return float(solution[n])


def test_pellet_ignition_limit():
    problem, branch = traced("pellet_ignition")
    intervals = 2 * len(problem.system.unknowns)  # half-slab grid = Bratu grid with twice the intervals
    (fold,) = kinds(branch, "fold")
    assert fold.values["delta"] == pytest.approx(discrete_bratu_fold(intervals) / 4, abs=1e-8)
    # Second-order grid: within 1e-3 of the continuum limit lambda_c / 4 = 0.8784576798.
    assert abs(fold.values["delta"] - BRATU_FOLD / 4) < 1e-3
    # Centre temperature at the limit tends to 2 ln cosh(eta) = 1.186842169 (same source).
    assert fold.values["t0"] == pytest.approx(1.186842169, abs=2e-3)
    assert len(branch.at) == 2  # two steady states below the limit, cold and hot
