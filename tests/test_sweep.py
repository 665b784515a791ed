"""Natural-parameter stepping: right where the branch is a graph over the parameter, and honest when not."""

from __future__ import annotations

import math

import numpy as np
import pytest

import contin
from catalogue import cubic_s_curve, fold_normal_form


def test_sweep_solves_on_the_given_grid():
    problem = fold_normal_form()  # u^2 + p = 0: u = sqrt(-p) on the upper branch (exact)
    grid = np.linspace(-1.0, -0.1, 10)
    branch = contin.sweep(problem.system, {"u": 1.0}, free="p", values=grid)
    assert branch.status is contin.Status.COMPLETED
    assert branch.column("p") == pytest.approx(grid, abs=0)
    assert branch.column("u") == pytest.approx(np.sqrt(-grid), abs=1e-10)
    assert branch.stats["jacobian_evaluations"] > 0


def test_sweep_cannot_turn_at_a_fold_and_says_so():
    # Past the fold at p = 0 there is no real solution: the sweep stops with not_converged there.
    problem = fold_normal_form()
    branch = contin.sweep(problem.system, {"u": 1.0}, free="p", values=[-0.5, -0.1, 0.1, 0.2])
    assert branch.status is contin.Status.NOT_CONVERGED
    assert "p = 0.1" in branch.message
    assert len(branch) == 2


def test_sweep_stalls_past_the_fold_of_the_s_curve_where_the_trace_turns():
    # u^3 - u + p = 0 stepped in p from -1 to 1: the upper branch ends at the fold p = 2/(3 sqrt 3)
    # = 0.3849 (exact); Newton from the last upper-branch answer then cycles and the sweep stops at
    # the first grid value past the fold. The trace turns there and finds both folds.
    problem = cubic_s_curve()
    grid = np.linspace(-1.0, 1.0, 41)
    branch = contin.sweep(problem.system, {"u": 1.3247179572447460}, free="p", values=grid, max_iterations=50)
    assert branch.status is contin.Status.NOT_CONVERGED
    assert branch.column("p")[-1] == pytest.approx(0.35)
    assert "p = 0.4" in branch.message
    turned = contin.trace(problem.system, problem.start, **problem.trace)
    assert len(turned.special("fold")) == 2


def test_bad_sweep_input_is_refused():
    problem = fold_normal_form()
    with pytest.raises(contin.InputError, match="values must be a non-empty sequence of finite numbers"):
        contin.sweep(problem.system, {"u": 1.0}, free="p", values=[])
    with pytest.raises(contin.InputError, match="values must be a non-empty sequence of finite numbers"):
        contin.sweep(problem.system, {"u": 1.0}, free="p", values=[0.0, math.nan])
    with pytest.raises(contin.InputError, match="free='x' is not a parameter"):
        contin.sweep(problem.system, {"u": 1.0}, free="x", values=[0.0])
