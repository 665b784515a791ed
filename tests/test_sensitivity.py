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
    with pytest.raises(contin.InputError) as refused:
        contin.sensitivities(branch, other)
    assert str(refused.value) == "the branch was not traced on this system (its columns and free parameter differ)"
    lonely = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0]], ["u"], {"p": -1.0})
    lonely_branch = contin.trace(lonely, {"u": 1.0}, free="p", step=0.1, bounds={"p": (-1.0, -0.1)})
    with pytest.raises(contin.InputError) as refused:
        contin.sensitivities(lonely_branch, lonely)
    assert str(refused.value) == "the system has no parameter other than the free one ('p') to differentiate by"


def test_the_results_cannot_be_changed():
    system = cubic(1.0)
    branch = contin.trace(system, {"u": 2.0}, free="p", parameters={"p": -6.0}, step=0.05, bounds={"p": (-10, 10)})
    result = contin.sensitivities(branch, system)
    with pytest.raises(AttributeError):
        result.folds = ()


def coupled_fold_system():
    # F1 = x^2 - lam + q y, F2 = 2 y - x + q lam: y = (x - q lam) / 2, so lam = (x^2 + q x / 2) / (1 + q^2 / 2),
    # with a fold of lam at x = -q/4, lam* = -q^2 / (16 + 8 q^2), d lam* / dq = -32 q / (16 + 8 q^2)^2
    # (-1/18 at q = 1, exact). The free parameter lam enters dF/dq = (y, lam): the sensitivities must
    # be evaluated at each point's own lam.
    return contin.CallableSystem(
        lambda u, p: [u[0] ** 2 - p[0] + p[1] * u[1], 2 * u[1] - u[0] + p[1] * p[0]], ["x", "y"],
        {"lam": 0.0, "q": 1.0},
        jacobian=lambda u, p: [[2 * u[0], p[1]], [-1.0, 2.0]],
        parameter_jacobian=lambda u, p: [[-1.0, u[1]], [p[1], p[0]]],
    )


def test_a_fold_moves_by_the_formula_when_the_free_parameter_enters_the_derivatives():
    system = coupled_fold_system()
    # start at x = 1: lam = 1.5 / 1.5 = 1, y = (1 - 1) / 2 = 0; an event at x = 0 comes before the fold
    branch = contin.trace(system, {"x": 1.0, "y": 0.0}, free="lam", parameters={"lam": 1.0, "q": 1.0}, direction=-1,
                          step=0.05, bounds={"lam": (-2.0, 3.0), "x": (-3.0, 3.0)},
                          events=[contin.Event("x zero", lambda u, p: u[0])])
    assert [sp.kind for sp in branch.special_points] == ["event", "fold", "bound"]
    result = contin.sensitivities(branch, system)
    (fold,) = result.folds
    assert fold["free"] == {"q": pytest.approx(-1.0 / 18.0, abs=1e-9)}
    # Regular points: at fixed lam, dF/du du/dq = -dF/dq with dF/du = [[2x, q], [-1, 2]] and
    # dF/dq = (y, lam) at q = 1, solved here from each row's own values.
    checked = 0
    for i, (x, y, lam) in enumerate(branch.points):
        if abs(x + 0.25) < 1e-3:
            continue  # beside the fold dF/du is nearly singular
        exact = np.linalg.solve([[2 * x, 1.0], [-1.0, 2.0]], [-y, -lam])
        assert result.points[i][:, 0] == pytest.approx(exact, rel=1e-9, abs=1e-12)
        checked += 1
    assert checked >= 10


def test_a_point_is_singular_below_1e_8_of_the_whole_jacobians_size():
    # F = 100 (u^3 - 3u + p): dF/du = 300 (u^2 - 1) and dF/dp = 100, so beside the fold at u = 1 the
    # smallest singular value of dF/du over |[dF/du, dF/dp]| is 3 (u^2 - 1) = 6 delta for u = 1 + delta.
    # Rows on u = 1 + 2.5e-9 (ratio 1.5e-8) get a sensitivity, rows on u = 1 + 8.3e-10 (5e-9) do not.
    system = contin.CallableSystem(lambda u, p: [100.0 * (u[0] ** 3 - p[1] * u[0] + p[0])], ["u"], {"p": -20.0, "a": 3.0},
                                   jacobian=lambda u, p: [[100.0 * (3 * u[0] ** 2 - p[1])]],
                                   parameter_jacobian=lambda u, p: [[100.0, -100.0 * u[0]]])
    regular, singular = 1.0 + 2.5e-9, 1.0 + 0.5e-8 / 6
    branch = contin.trace(system, {"u": 3.0}, free="p", step=0.05, bounds={"p": (-20.0, 20.0), "u": (-3.0, 3.0)},
                          at={"u": [regular, singular]})
    rows = {sp.values["u"]: sp.index for sp in branch.at}
    assert set(rows) == {regular, singular}
    result = contin.sensitivities(branch, system)
    assert result.points[rows[regular], 0, 0] == pytest.approx(regular / (3 * regular**2 - 3), rel=1e-6)
    assert np.isnan(result.points[rows[singular], 0, 0])
