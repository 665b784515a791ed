"""Simple branch points: detection, location, switching onto the other branch, and every bad input."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from catalogue import (catalogue, pitchfork_normal_form, symmetric_pitchfork_two_unknowns,
                       transcritical_normal_form)


def residual_at(system, branch, row):
    p = system.parameter_vector(branch.parameters)
    p[system.parameters.index(branch.free)] = row[-1]
    return float(np.max(np.abs(system.residual(row[:-1], p))))


def assert_every_point_solves(system, branch):
    assert len(branch) > 3
    for row in branch.points:
        assert residual_at(system, branch, row) <= 1e-10


@pytest.mark.parametrize("problem", [pitchfork_normal_form(), transcritical_normal_form(),
                                     symmetric_pitchfork_two_unknowns()], ids=lambda p: p.name)
def test_branch_point_is_found_and_located(problem):
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    assert branch.success, branch.message
    found = branch.special("branch_point")
    assert len(found) == len(problem.extra["branch_points"])
    for point, expected in zip(found, problem.extra["branch_points"], strict=True):
        for name, value in expected.items():
            assert point.values[name] == pytest.approx(value, abs=1e-9), (problem.source, name)
        assert point.located_to <= 1e-9
        assert point.residual_norm <= 1e-10
        # The special point is a row of the branch, in branch order.
        assert branch.points[point.index] == pytest.approx(point.point, abs=0.0)
    assert branch.special("fold") == ()
    assert_every_point_solves(problem.system, branch)


def test_pitchfork_switching_finds_both_halves_of_u_squared_equals_p():
    # u (p - u^2): the other branch is u^2 = p (Kuznetsov, Elements of Applied Bifurcation Theory, ch. 7).
    problem = pitchfork_normal_form()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    point = branch.special("branch_point")[0]
    upper = contin.switch_branch(branch, point, problem.system, bounds={"p": (-1.0, 1.0)}, step=0.05)
    lower = contin.switch_branch(branch, point, problem.system, direction=-1, bounds={"p": (-1.0, 1.0)}, step=0.05)
    for new, sign in ((upper, 1.0), (lower, -1.0)):
        assert new.status is contin.Status.BOUND_REACHED, new.message
        u, p = new.column("u"), new.column("p")
        assert np.all(sign * u > 0.0)
        assert u**2 == pytest.approx(p, abs=1e-9)  # residual u (p - u^2) <= 1e-10 with |u| >= 0.05
        assert new.points[-1] == pytest.approx([sign * 1.0, 1.0], abs=1e-12)  # reached p = 1 at u = +-1
        assert_every_point_solves(problem.system, new)
        assert new.special("branch_point") == ()


@pytest.mark.parametrize("start, other", [({"u": 0.0}, "u = p"), ({"u": -1.0}, "u = 0")])
def test_transcritical_switching_finds_the_other_line(start, other):
    # u (p - u): the lines u = 0 and u = p cross at (0, 0) (Kuznetsov, Elements of Applied Bifurcation
    # Theory, ch. 7). Traced along either line, switching lands on the other.
    problem = transcritical_normal_form()
    branch = contin.trace(problem.system, start, **problem.trace)
    point = branch.special("branch_point")[0]
    assert point.values == pytest.approx({"u": 0.0, "p": 0.0}, abs=1e-9)
    new = contin.switch_branch(branch, point, problem.system, bounds={"p": (-1.0, 1.0)}, step=0.05)
    u, p = new.column("u"), new.column("p")
    if other == "u = p":
        assert u == pytest.approx(p, abs=1e-10)
        assert np.all(np.abs(u) > 1e-3)
    else:
        assert u == pytest.approx(0.0, abs=1e-10)
        assert np.ptp(p) > 0.5
    assert_every_point_solves(problem.system, new)


def test_symmetry_breaking_pitchfork_switches_onto_the_asymmetric_branch():
    # Asymmetric branch x^2 = (2p - 1)/8, y = (6p + 1)/8 (exact, see the catalogue entry).
    problem = symmetric_pitchfork_two_unknowns()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    point = branch.special("branch_point")[0]
    new = contin.switch_branch(branch, point, problem.system, bounds={"p": (-0.5, 1.5)}, step=0.02)
    x, y, p = new.column("x"), new.column("y"), new.column("p")
    assert new.status is contin.Status.BOUND_REACHED, new.message
    assert np.all(x > 0.0)
    assert x**2 == pytest.approx((2 * p - 1) / 8, abs=1e-9)
    assert y == pytest.approx((6 * p + 1) / 8, abs=1e-9)
    assert new.points[-1, -1] == pytest.approx(1.5)
    assert_every_point_solves(problem.system, new)


@pytest.mark.parametrize("problem", catalogue(), ids=lambda p: p.name)
def test_folds_are_not_branch_points(problem):
    # u^2 + p, the cubic S-curve, the circle, the two-unknown S-curve: folds only (exact answers in the
    # catalogue); the determinant of [dF/dx; t] keeps its sign through a fold.
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    assert branch.special("branch_point") == ()
    assert len(branch.special("fold")) == len(problem.folds)
    assert "notes" not in branch.stats


def test_the_local_corrector_finds_the_same_branch_point():
    problem = pitchfork_normal_form()
    branch = contin.trace(problem.system, problem.start, corrector="local", **problem.trace)
    (point,) = branch.special("branch_point")
    assert point.values == pytest.approx({"u": 0.0, "p": 0.0}, abs=1e-9)  # Kuznetsov, ch. 7


def test_symbolic_system_with_exact_jacobian():
    # The same pitchfork from text: compiled exact Jacobians (Kuznetsov, ch. 7: branch point at p = 0).
    system = contin.SymbolicSystem({"balance": "u*(p - u**2)"}, {"u": 0.0}, {"p": -1.0}, cache=False)
    branch = contin.trace(system, free="p", step=0.05, bounds={"p": (-1.0, 1.0)})
    (point,) = branch.special("branch_point")
    assert point.values["p"] == pytest.approx(0.0, abs=1e-12)
    assert point.name == "branch point"
    new = contin.switch_branch(branch, point, system, bounds={"p": (-1.0, 1.0)})
    assert new.column("u") ** 2 == pytest.approx(new.column("p"), abs=1e-9)


def test_detect_without_branch_point_leaves_them_out():
    problem = pitchfork_normal_form()
    branch = contin.trace(problem.system, problem.start, detect=("fold",), **problem.trace)
    assert branch.special("branch_point") == ()
    assert branch.status is contin.Status.BOUND_REACHED


def test_detect_without_fold_leaves_folds_out():
    # u^2 + p has a fold at (0, 0) (Kuznetsov, ch. 3); asking only for branch points skips it.
    problem = catalogue()[0]
    branch = contin.trace(problem.system, problem.start, detect=("branch_point",), **problem.trace)
    assert branch.special("fold") == ()
    assert branch.special("branch_point") == ()


def test_branch_point_in_json_output():
    problem = pitchfork_normal_form()
    document = contin.trace(problem.system, problem.start, **problem.trace).to_dict()
    kinds = [sp["kind"] for sp in document["special_points"]]
    assert kinds == ["branch_point", "bound"]
    assert document["special_points"][0]["values"]["p"] == pytest.approx(0.0, abs=1e-9)


@settings(derandomize=True, max_examples=25, deadline=None)
@given(st.floats(min_value=-3.0, max_value=3.0, allow_nan=False))
def test_shifted_pitchfork_has_its_branch_point_at_c(c):
    # u (p - c - u^2): the pitchfork normal form shifted by c (Kuznetsov, ch. 7): branch point at p = c.
    system = contin.CallableSystem(
        lambda u, p: [u[0] * (p[0] - p[1] - u[0] ** 2)], ["u"], {"p": c - 1.0, "c": c},
        jacobian=lambda u, p: [[p[0] - p[1] - 3 * u[0] ** 2]], parameter_jacobian=lambda u, p: [[u[0], -u[0]]],
    )
    branch = contin.trace(system, {"u": 0.0}, free="p", step=0.1, max_step=0.3, bounds={"p": (c - 1.0, c + 1.0)})
    (point,) = branch.special("branch_point")
    assert point.values["p"] == pytest.approx(c, abs=1e-9)
    assert point.values["u"] == 0.0


# -- bad input ----------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def traced():
    problem = pitchfork_normal_form()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    return problem.system, branch, branch.special("branch_point")[0]


def test_switch_refuses_something_that_is_not_a_branch(traced):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=r"branch must be a contin Branch \(from contin.trace\), got dict"):
        contin.switch_branch({}, point, system)


def test_switch_refuses_a_point_of_another_kind(traced):
    system, branch, point = traced
    bound = branch.special("bound")[0]
    with pytest.raises(contin.InputError, match=r"point must be a branch point of the branch .* got a 'bound' point"):
        contin.switch_branch(branch, bound, system)


def test_switch_refuses_an_index_for_a_point(traced):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=r"point must be a branch point .*got int"):
        contin.switch_branch(branch, 3, system)


def test_switch_refuses_a_system_with_other_columns(traced):
    system, branch, point = traced
    other = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["w"], {"p": 0.0})
    with pytest.raises(contin.InputError, match=r"system does not match the branch: the branch has columns u, p, "
                                                r"the system gives w, p"):
        contin.switch_branch(branch, point, other)


def test_switch_refuses_a_system_that_is_not_singular_there(traced):
    system, branch, point = traced
    other = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0})
    with pytest.raises(contin.InputError, match=r"not singular at the given point .* not a branch point of this system"):
        contin.switch_branch(branch, point, other)


def test_switch_refuses_a_bad_direction(traced):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=r"direction=0 must be 1 or -1"):
        contin.switch_branch(branch, point, system, direction=0)


@pytest.mark.parametrize("name", ["start", "free", "parameters", "tangent"])
def test_switch_refuses_keywords_it_sets_itself(traced, name):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=rf"switch_branch sets {name!r} itself \(from the branch point\); leave it out"):
        contin.switch_branch(branch, point, system, **{name: 1.0})


def test_switch_refuses_an_unknown_keyword_with_a_suggestion(traced):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=r"keyword 'stpe', which contin.trace does not take; did you mean 'step'\?"):
        contin.switch_branch(branch, point, system, stpe=0.1)


def test_switch_refuses_a_bad_step(traced):
    system, branch, point = traced
    with pytest.raises(contin.InputError, match=r"step=-0.1 must be a positive finite number"):
        contin.switch_branch(branch, point, system, step=-0.1)


def test_detect_unknown_name_suggests_the_right_one():
    problem = pitchfork_normal_form()
    with pytest.raises(contin.InputError, match=r"detect names 'branchpoint', which is not a special point the trace "
                                                r"can look for \(use any of branch_point, fold, hopf\); did you mean 'branch_point'\?"):
        contin.trace(problem.system, problem.start, detect=("fold", "branchpoint"), **problem.trace)


def test_detect_refuses_a_bare_string():
    problem = pitchfork_normal_form()
    with pytest.raises(contin.InputError, match=r"detect='fold' must be a sequence of names, e.g. detect=\('fold',\)"):
        contin.trace(problem.system, problem.start, detect="fold", **problem.trace)


def test_detect_refuses_something_that_is_not_a_sequence():
    problem = pitchfork_normal_form()
    with pytest.raises(contin.InputError, match=r"detect must be a sequence of names from branch_point, fold, hopf, got int"):
        contin.trace(problem.system, problem.start, detect=3, **problem.trace)


def test_detect_refuses_hopf_on_an_algebraic_system():
    problem = pitchfork_normal_form()
    with pytest.raises(contin.InputError, match=r"Hopf points belong to ODE systems .* this system is 'algebraic'"):
        contin.trace(problem.system, problem.start, detect=("hopf",), **problem.trace)


def test_detect_without_fold_refuses_fold_coordinates():
    problem = symmetric_pitchfork_two_unknowns()
    with pytest.raises(contin.InputError, match=r"folds names 'x' but detect leaves out 'fold'; add 'fold' to detect or drop folds"):
        contin.trace(problem.system, problem.start, detect=("branch_point",), folds=("x",), **problem.trace)


def test_switch_branch_is_public():
    assert "switch_branch" in contin.__all__
    assert list(contin.__all__) == sorted(contin.__all__)
