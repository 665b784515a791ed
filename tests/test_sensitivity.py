"""Sensitivities of branch points and folds to the fixed parameters."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin


def cubic(a: float):
    # u^3 - a u + p = 0: folds at u = ±sqrt(a/3), p = ±2 a^(3/2) / (3 sqrt 3), so dp*/da = ±sqrt(a/3) (exact).
    return contin.CallableSystem(lambda u, p: [u[0] ** 3 - p[1] * u[0] + p[0]], ["u"], {"p": -1.0, "a": a},
                                 jacobian=lambda u, p: [[3 * u[0] ** 2 - p[1]]],
                                 parameter_jacobian=lambda u, p: [[1.0, -u[0]]])


@settings(max_examples=15, deadline=None, derandomize=True)
@given(a=st.floats(0.5, 2.0))
def test_fold_moves_as_the_exact_formula_says(a):
    system = cubic(a)
    start = {"u": 2.0}
    branch = contin.trace(system, start, free="p", parameters={"p": -(8.0 - 2.0 * a)}, step=0.05,
                          bounds={"p": (-10.0, 10.0), "u": (-2.5, 2.5)})
    result = contin.sensitivities(branch, system)
    assert result.parameters == ("a",)
    moves = sorted(fold["free"]["a"] for fold in result.folds)
    assert moves == pytest.approx([-math.sqrt(a / 3), math.sqrt(a / 3)], rel=1e-7)


def test_regular_points_follow_the_implicit_function_theorem():
    # u^2 + p - c = 0 on the upper branch u = sqrt(c - p): du/dc = 1 / (2u) (exact).
    system = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] - p[1]], ["u"], {"p": -1.0, "c": 0.0})
    branch = contin.trace(system, {"u": 1.0}, free="p", step=0.05, bounds={"p": (-1.0, -0.01)})
    result = contin.sensitivities(branch, system)
    u = branch.column("u")
    assert result.points[:, 0, 0] == pytest.approx(1.0 / (2.0 * u), rel=1e-7)
    assert result.at(0) == {"u": {"c": pytest.approx(0.5, rel=1e-7)}}


def test_singular_points_are_not_given_a_sensitivity():
    system = cubic(1.0)
    branch = contin.trace(system, {"u": 2.0}, free="p", parameters={"p": -6.0}, step=0.05, bounds={"p": (-10, 10), "u": (-2.5, 2.5)})
    result = contin.sensitivities(branch, system)
    for fold in branch.special("fold"):
        assert np.all(np.isnan(result.points[fold.index]))


def test_bad_input_is_refused():
    system = cubic(1.0)
    branch = contin.trace(system, {"u": 2.0}, free="p", parameters={"p": -6.0}, step=0.05, bounds={"p": (-10, 10)})
    other = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["x"], {"p": 0.0, "a": 1.0})
    with pytest.raises(contin.InputError, match="not traced on this system"):
        contin.sensitivities(branch, other)
    lonely = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0]], ["u"], {"p": -1.0})
    lonely_branch = contin.trace(lonely, {"u": 1.0}, free="p", step=0.1, bounds={"p": (-1.0, -0.1)})
    with pytest.raises(contin.InputError, match="no parameter other than the free one"):
        contin.sensitivities(lonely_branch, lonely)
