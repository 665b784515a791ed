"""The 1-D Bratu problem as a generated problem file with 100 interior grid unknowns, traced through its fold.

u'' + lambda e^u = 0, u(0) = u(1) = 0, central differences on 101 intervals. The fold of the discrete
system must agree with the callable-based engine path on the same discretisation, and the folds of
refined grids tend to lambda_c = 3.513830719 (Boundary Value Problems 2013:142).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import fsolve

import contin
from contin.systems._problem import load_problem
from contin.studies._run import run_problem

LAMBDA_C = 3.51383071912516  # Boundary Value Problems 2013:142 (fold of the continuous problem)
MAX_U_AT_FOLD = 1.186842169  # 2 ln cosh(eta), eta = coth(eta); same source
TRACE = {"free": "lam", "direction": 1, "step": 0.1, "max_step": 0.5, "tolerance": 1e-11}


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


def bratu_file(interior: int) -> str:
    """Problem-file text; each equation is the difference balance times h^2 (constant h2)."""
    lines = ["[unknowns]", *[f"u{i} = 0.0" for i in range(interior)], "[parameters]", "lam = 0.0", "[constants]",
             f"h2 = {1.0 / (interior + 1) ** 2!r}", "[equations]"]
    for i in range(interior):
        left = f"u{i - 1}" if i > 0 else "0"
        right = f"u{i + 1}" if i < interior - 1 else "0"
        lines.append(f'node{i} = "{left} - 2*u{i} + {right} + h2*lam*exp(u{i})"')
    lines += ["[trace]", 'free = "lam"', "direction = 1", "step = 0.1", "max_step = 0.5", "tolerance = 1e-11",
              f"bounds = {{ lam = [-0.1, 4.0], u{interior // 2} = [-1.0, 2.0] }}"]
    return "\n".join(lines) + "\n"


def callable_bratu(interior: int) -> contin.CallableSystem:
    h2 = 1.0 / (interior + 1) ** 2
    second = np.diag(-2.0 * np.ones(interior)) + np.diag(np.ones(interior - 1), 1) + np.diag(np.ones(interior - 1), -1)

    def residual(u, p):
        return second @ u + h2 * p[0] * np.exp(u)

    def jacobian(u, p):
        return second + np.diag(h2 * p[0] * np.exp(u))

    def parameter_jacobian(u, p):
        return (h2 * np.exp(u)).reshape(-1, 1)

    return contin.CallableSystem(residual, interior, {"lam": 0.0}, jacobian=jacobian,
                                 parameter_jacobian=parameter_jacobian, start=np.zeros(interior))


def fold_of(branch) -> contin.SpecialPoint:
    (fold,) = [sp for sp in branch.special_points if sp.kind == "fold"]
    return fold


def callable_fold(interior: int) -> float:
    system = callable_bratu(interior)
    branch = contin.trace(system, free="lam", direction=1, step=0.1, max_step=0.5, tolerance=1e-11,
                          bounds={"lam": (-0.1, 4.0), f"u{interior // 2}": (-1.0, 2.0)})
    return fold_of(branch).values["lam"]


def fold_system_solution(interior: int) -> float:
    """Independent: scipy's fsolve on F = 0, J phi = 0, |phi| = 1 for the same discretisation."""
    n, h2 = interior, 1.0 / (interior + 1) ** 2
    x = np.arange(1, n + 1) / (n + 1)
    second = np.diag(-2.0 * np.ones(n)) + np.diag(np.ones(n - 1), 1) + np.diag(np.ones(n - 1), -1)

    def equations(z):
        u, lam, phi = z[:n], z[n], z[n + 1:]
        return np.concatenate([second @ u + h2 * lam * np.exp(u), (second + np.diag(h2 * lam * np.exp(u))) @ phi,
                               [phi @ phi - 1.0]])

    guess = np.concatenate([4.75 * x * (1 - x), [3.5], np.sin(np.pi * x) * math.sqrt(2.0 / n)])
    solution, _, status, message = fsolve(equations, guess, full_output=True, xtol=1e-13)
    assert status == 1, message
    return float(solution[n])


def test_generated_file_traces_through_the_fold(tmp_path):
    path = tmp_path / "bratu100.toml"
    path.write_text(bratu_file(100))
    problem = load_problem(path)
    assert len(problem.system.unknowns) == 100
    assert problem.system.structure_summary()["jacobian_nonzeros"] == 3 * 100 - 2
    branch = run_problem(problem)
    assert branch.status.success, branch.message
    fold = fold_of(branch)
    # The branch turns back: after the fold lambda decreases while u grows (the upper solution).
    assert fold.index < len(branch.points) - 1 and branch.points[-1][-1] < fold.values["lam"]
    reference = callable_fold(100)
    assert fold.values["lam"] == pytest.approx(reference, abs=1e-8)
    assert fold.values["lam"] == pytest.approx(fold_system_solution(100), abs=1e-8)
    # Second order in h: within about 2e-4 of lambda_c for h = 1/101 (error of the discrete fold ~ c h^2).
    assert abs(fold.values["lam"] - LAMBDA_C) < 2e-4
    assert max(fold.values[f"u{i}"] for i in range(100)) == pytest.approx(MAX_U_AT_FOLD, abs=1e-3)
    assert branch.stats["structure"]["blocks"] == 1


def test_discrete_folds_tend_to_the_published_value():
    errors = [abs(callable_fold(n) - LAMBDA_C) for n in (12, 25, 50)]
    assert errors[0] > errors[1] > errors[2]
    # Halving h quarters the error (second-order central differences): ratios near (26/13)^2 = 4, (51/26)^2 = 3.85.
    assert errors[0] / errors[1] == pytest.approx(4.0, rel=0.1)
    assert errors[1] / errors[2] == pytest.approx((51 / 26) ** 2, rel=0.1)
