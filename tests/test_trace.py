"""The pseudo-arclength driver: known answers, statuses, special points, and every bad input."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from catalogue import catalogue, circle, cubic_s_curve, fold_normal_form


def assert_on_branch(problem, branch):
    """Every returned point satisfies the residual tolerance (asserted over the whole branch)."""
    system = problem.system
    p = system.parameter_vector()
    free = system.parameters.index(branch.free)
    for row in branch.points:
        u = row[:-1]
        q = p.copy()
        q[free] = row[-1]
        assert np.max(np.abs(system.residual(u, q))) <= 1e-10
    assert np.all(branch.residual_norms <= 1e-10)


@pytest.mark.parametrize("corrector", ["arclength", "local"])
@pytest.mark.parametrize("problem", catalogue(), ids=lambda p: p.name)
def test_catalogue_folds_are_found_and_located(problem, corrector):
    # Keller's pseudo-arclength corrector and Rheinboldt's local parametrisation find the same folds,
    # and neither adds a false branch point (or a note of an unlocated branch-point test change) there.
    branch = contin.trace(problem.system, problem.start, corrector=corrector, **problem.trace)
    assert branch.success, branch.message
    assert not branch.special("branch_point")
    assert not branch.stats.get("notes"), branch.stats["notes"]
    folds = branch.special("fold")
    assert len(folds) == len(problem.folds)
    for found, expected in zip(folds, problem.folds, strict=True):
        for name, value in expected.items():
            assert found.values[name] == pytest.approx(value, abs=1e-9), (problem.source, name)
        assert found.located_to <= 1e-10
        assert abs(found.tangent[-1]) <= 1e-8  # the free parameter's tangent component vanishes there
    assert_on_branch(problem, branch)
    if problem.closed_loop:
        assert branch.status is contin.Status.CLOSED_LOOP
    else:
        assert branch.status is contin.Status.BOUND_REACHED


def test_cubic_folds_exact_values():
    # u^3 - u + p = 0: folds at p = ±2/(3 sqrt 3) (exact).
    branch = contin.trace(cubic_s_curve().system, {"u": 1.3247179572447460}, free="p", step=0.05,
                          bounds={"p": (-1, 1)})
    ps = sorted(sp.values["p"] for sp in branch.special("fold"))
    assert ps == pytest.approx([-2 / (3 * math.sqrt(3)), 2 / (3 * math.sqrt(3))], abs=1e-12)


def test_circle_closes_after_one_turn():
    # u^2 + p^2 = 1 (exact): back at the start after one turn, exactly on the start point.
    branch = contin.trace(circle().system, {"u": 1.0}, free="p", step=0.1)
    assert branch.status is contin.Status.CLOSED_LOOP
    assert branch.points[-1] == pytest.approx(branch.points[0], abs=1e-14)
    arclength = branch.steps.sum()
    assert arclength == pytest.approx(2 * math.pi, rel=2e-2)  # the chords of one turn round the unit circle
    assert [sp.kind for sp in branch.special_points] == ["fold", "fold", "closed_loop"]


def test_direction_chooses_the_way_the_free_parameter_moves():
    problem = fold_normal_form()
    up = contin.trace(problem.system, {"u": 1.0}, free="p", step=0.05, bounds={"p": (-1.5, 0.5)})
    down = contin.trace(problem.system, {"u": 1.0}, free="p", step=0.05, bounds={"p": (-1.5, 0.5)}, direction=-1)
    assert up.points[1, 1] > up.points[0, 1]
    assert down.points[1, 1] < down.points[0, 1]
    assert down.special("fold") == ()
    assert down.points[-1, 1] == pytest.approx(-1.5)


def test_folds_along_another_coordinate():
    # On the circle u^2 + p^2 = 1 the coordinate u turns at p = ±1... and p turns at u = 0; asking
    # for folds in u too finds the points where u turns: (u, p) = (±1, 0).
    branch = contin.trace(circle().system, {"u": 0.6}, free="p", parameters={"p": 0.8}, step=0.1, folds=("u",))
    in_u = [sp for sp in branch.special("fold") if sp.info["coordinate"] == "u"]
    assert sorted(round(sp.values["u"], 9) for sp in in_u) == [-1.0, 1.0]
    for sp in in_u:
        assert sp.values["p"] == pytest.approx(0.0, abs=1e-9)


def test_events_with_direction_and_terminal():
    problem = cubic_s_curve()
    zero_u = contin.Event("u crosses zero", lambda u, p: u[0])
    rising = contin.Event("u rises through 0.5", lambda u, p: u[0] - 0.5, direction=1)
    branch = contin.trace(problem.system, problem.start, events=[zero_u, rising], **problem.trace)
    crossings = branch.special("event")
    assert [sp.name for sp in crossings] == ["u crosses zero"]  # u only decreases along this branch
    assert crossings[0].values["u"] == pytest.approx(0.0, abs=1e-10)
    assert crossings[0].values["p"] == pytest.approx(0.0, abs=1e-10)  # u = 0 solves u^3 - u + p = 0 at p = 0
    stop = contin.Event("stop at u = 0", lambda u, p: u[0], terminal=True, kind="marker")
    stopped = contin.trace(problem.system, problem.start, events=[stop], **problem.trace)
    assert stopped.status is contin.Status.TERMINAL_EVENT
    assert stopped.success
    assert stopped.special_points[-1].kind == "marker"
    assert stopped.points[-1] == pytest.approx([0.0, 0.0], abs=1e-10)
    assert "stop at u = 0" in stopped.message


def test_output_at_requested_values_is_exact():
    problem = cubic_s_curve()
    values = [0.1, 0.2, 0.3]
    branch = contin.trace(problem.system, problem.start, at={"p": values}, **problem.trace)
    got = [sp.values["p"] for sp in branch.at]
    # The S-curve passes p = 0.1, 0.2, 0.3 three times each (three solution branches of the cubic).
    assert len(got) == 9
    assert sorted(set(round(v, 12) for v in got)) == values
    for sp in branch.at:
        u, p = sp.values["u"], sp.values["p"]
        assert abs(u**3 - u + p) <= 1e-10
    assert branch.at[0].kind == "at"


def test_at_values_of_an_unknown():
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, at={"u": [0.0]}, **problem.trace)
    assert len(branch.at) == 1
    assert branch.at[0].values["p"] == pytest.approx(0.0, abs=1e-12)


def test_max_points_status():
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, free="p", step=0.01, max_step=0.01, max_points=5)
    assert branch.status is contin.Status.MAX_POINTS
    assert len(branch) == 5


def test_start_point_not_converged_reports_residual():
    system = contin.CallableSystem(lambda u, p: [math.exp(u[0]) + p[0]], ["u"], {"p": 1.0})
    branch = contin.trace(system, {"u": 0.0}, free="p")
    assert branch.status is contin.Status.START_NOT_CONVERGED
    assert not branch.success
    assert "largest residual" in branch.message
    with pytest.raises(contin.TraceError) as caught:
        contin.trace(system, {"u": 0.0}, free="p", throw=True)
    assert caught.value.branch.status is contin.Status.START_NOT_CONVERGED


def test_step_too_small_says_where_and_why():
    # The residual is undefined (NaN) beyond p = 0.5: no step can cross, the step shrinks to min_step.
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0] + (math.nan if p[0] > 0.5 else 0.0)], ["u"], {"p": 0.0})
    branch = contin.trace(system, {"u": 0.0}, free="p", step=0.1, min_step=1e-4)
    assert branch.status is contin.Status.STEP_TOO_SMALL
    assert "after the point u = 0.4999" in branch.message and "p = 0.4999" in branch.message
    assert "non-finite residual" in branch.message
    assert branch.points[-1, 1] == pytest.approx(0.5, abs=2e-4)


def test_exception_in_a_callback_returns_the_partial_branch():
    calls = {"n": 0}

    def residual(u, p):
        calls["n"] += 1
        if p[0] > 0.3:
            raise RuntimeError("the model broke")
        return [u[0] - p[0]]

    system = contin.CallableSystem(residual, ["u"], {"p": 0.0})
    branch = contin.trace(system, {"u": 0.0}, free="p", step=0.05, max_step=0.05)
    assert branch.status is contin.Status.INTERRUPTED
    assert isinstance(branch.cause, RuntimeError)
    assert branch.message == ("interrupted: the trace was stopped before it finished: the residual raised "
                              "RuntimeError: the model broke")
    assert len(branch) >= 6 and branch.points[-1, 1] <= 0.3
    with pytest.raises(contin.TraceError) as caught:
        contin.trace(system, {"u": 0.0}, free="p", step=0.05, max_step=0.05, throw=True)
    assert isinstance(caught.value.__cause__, RuntimeError)
    assert len(caught.value.branch) == len(branch)


def test_keyboard_interrupt_keeps_what_was_traced():
    def on_point(index, x, special_points):
        if index == 10:
            raise KeyboardInterrupt

    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, on_point=on_point, **problem.trace)
    assert branch.status is contin.Status.INTERRUPTED
    assert isinstance(branch.cause, KeyboardInterrupt)
    assert len(branch) == 11


def test_branch_json_and_csv_layout(tmp_path):
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, at={"p": [0.1]}, **problem.trace)
    document = json.loads(branch.to_json(tmp_path / "branch.json"))
    assert list(document)[:7] == ["status", "message", "columns", "points", "special_points", "at", "stats"]
    assert document["columns"] == ["u", "p"]
    assert document["status"] == "bound_reached"
    assert len(document["points"]) == len(branch)
    fold = document["special_points"][0]
    assert fold["kind"] == "fold" and set(fold["values"]) == {"u", "p"}
    assert branch.points[fold["index"]] == pytest.approx([fold["values"]["u"], fold["values"]["p"]])
    assert len(document["at"]) == 3 and all(len(row) == 2 for row in document["at"])
    for key in ("setup_seconds", "trace_seconds", "newton_iterations", "jacobian_evaluations"):
        assert key in document["stats"]
    assert json.loads((tmp_path / "branch.json").read_text()) == document
    text = branch.to_csv(tmp_path / "branch.csv")
    lines = [line for line in text.splitlines() if not line.startswith("#")]
    assert lines[0] == "u,p"
    assert len(lines) == len(branch) + 1
    assert float(lines[1].split(",")[0]) == branch.points[0, 0]  # full precision round trip


def test_stats_count_steps_and_evaluations():
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    stats = branch.stats
    assert stats["accepted_steps"] >= len(branch) - 1 - len(branch.special_points)
    assert stats["jacobian_evaluations"] >= stats["accepted_steps"]
    assert stats["residual_evaluations"] >= stats["jacobian_evaluations"]
    assert np.all(branch.newton_iterations >= 1)


def test_finite_difference_jacobian_gives_the_same_folds():
    exact = cubic_s_curve()
    plain = contin.CallableSystem(lambda u, p: [u[0] ** 3 - u[0] + p[0]], ["u"], {"p": -1.0})
    a = contin.trace(exact.system, exact.start, **exact.trace)
    b = contin.trace(plain, exact.start, **exact.trace)
    for x, y in zip(a.special("fold"), b.special("fold"), strict=True):
        assert x.values["p"] == pytest.approx(y.values["p"], abs=1e-9)


@settings(max_examples=25, deadline=None, derandomize=True)
@given(shift=st.floats(-2.0, 2.0), scale=st.floats(0.5, 3.0))
def test_fold_of_shifted_scaled_normal_form(shift, scale):
    # Law: s (u - c)^2 + p = 0 has its only fold at u = c, p = 0 for every shift c and scale s > 0.
    system = contin.CallableSystem(lambda u, p: [scale * (u[0] - shift) ** 2 + p[0]], ["u"], {"p": -1.0})
    start = {"u": shift + 1.0 / math.sqrt(scale)}
    branch = contin.trace(system, start, free="p", step=0.05, bounds={"p": (-2.0, 0.5)})
    (fold,) = branch.special("fold")
    assert fold.values["u"] == pytest.approx(shift, abs=1e-8)
    assert fold.values["p"] == pytest.approx(0.0, abs=1e-10)


# -- bad input: each with its message ------------------------------------------------------------

def test_wrong_residual_size_is_refused():
    system = contin.CallableSystem(lambda u, p: [u[0], u[0]], ["u"], {"p": 0.0})
    with pytest.raises(contin.InputError, match="residual returned 2 values but the system has 1 unknown"):
        contin.trace(system, {"u": 0.0}, free="p")


def test_non_finite_start_is_refused():
    with pytest.raises(contin.InputError, match="start value of 'u' is not finite"):
        contin.trace(cubic_s_curve().system, {"u": math.nan}, free="p")
    with pytest.raises(contin.InputError, match="free parameter 'p' has no finite start value"):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="p", parameters={"p": math.inf})


def test_free_parameter_not_a_parameter_is_refused():
    with pytest.raises(contin.InputError, match=r"free='q' is not a parameter of this system .*did you mean 'p'"):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="q")


def test_singular_start_jacobian_is_refused():
    # u^2 + p = 0 at u = 0 is the fold itself: dF/du = 0 there.
    with pytest.raises(contin.InputError, match="Jacobian dF/du is singular at the start point"):
        contin.trace(fold_normal_form().system, {"u": 0.0}, free="p", parameters={"p": 0.0})


def test_bounds_with_lower_not_below_upper_are_refused():
    with pytest.raises(contin.InputError, match="bounds for 'p': lower 1.0 must be below upper 1.0"):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="p", bounds={"p": (1.0, 1.0)})
    with pytest.raises(contin.InputError, match="bounds names 'w'"):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="p", bounds={"w": (0.0, 1.0)})


@pytest.mark.parametrize("option, value, message", [
    ("step", 0.0, "step=0.0 must be positive"),
    ("step", -0.1, "step=-0.1 must be positive"),
    ("min_step", -1e-3, "min_step=-0.001 must be positive"),
    ("max_step", 0.0, "max_step=0.0 must be positive"),
    ("tolerance", 0.0, "tolerance=0.0 must be positive"),
    ("step", math.nan, "step=nan must be a finite number"),
    ("max_points", 1, "max_points=1 must be a whole number of at least 2"),
    ("direction", 0, "direction=0 must be 1 or -1"),
    ("corrector", "secant", "corrector='secant' is not known"),
])
def test_bad_step_options_are_refused(option, value, message):
    with pytest.raises(contin.InputError, match=message.replace("(", r"\(").replace(")", r"\)")):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="p", **{option: value})


def test_step_outside_its_limits_is_refused():
    with pytest.raises(contin.InputError, match="step=1.0 must lie between min_step"):
        contin.trace(cubic_s_curve().system, {"u": 1.0}, free="p", step=1.0, max_step=0.5)


def test_start_outside_bounds_is_refused():
    with pytest.raises(contin.InputError, match=r"start point has p = -1.0, outside its bounds \[0.0, 1.0\]"):
        contin.trace(cubic_s_curve().system, {"u": 1.3}, free="p", bounds={"p": (0.0, 1.0)})


def test_start_of_wrong_length_and_unknown_name_are_refused():
    with pytest.raises(contin.InputError, match="start has 2 values but the system has 1 unknown$"):
        contin.trace(cubic_s_curve().system, [1.0, 2.0], free="p")
    with pytest.raises(contin.InputError, match="start names 'v', which is not an unknown; did you mean 'u'"):
        contin.trace(cubic_s_curve().system, {"v": 1.0}, free="p")


def test_bad_events_are_refused():
    with pytest.raises(contin.InputError, match="direction=2 must be -1, 0 or 1"):
        contin.Event("e", lambda u, p: u[0], direction=2)
    with pytest.raises(contin.InputError, match="function must be callable"):
        contin.Event("e", 3.0)
    with pytest.raises(contin.InputError, match="two events share one name"):
        e = contin.Event("e", lambda u, p: u[0])
        contin.trace(cubic_s_curve().system, {"u": 1.3}, free="p", events=[e, e])


def test_options_and_keywords_together_are_refused():
    with pytest.raises(contin.InputError, match="not both"):
        contin.trace(cubic_s_curve().system, {"u": 1.3}, free="p", step=0.2, options=contin.TraceOptions())


def test_jacobian_of_the_wrong_shape_is_refused():
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0}, jacobian=lambda u, p: [[1.0, 2.0]])
    with pytest.raises(contin.InputError, match=r"jacobian returned an array of shape \(1, 2\); it must have shape \(1, 1\)"):
        contin.trace(system, {"u": 0.0}, free="p")
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0},
                                   parameter_jacobian=lambda u, p: [[1.0], [2.0]])
    with pytest.raises(contin.InputError, match=r"parameter_jacobian returned an array of shape \(2, 1\)"):
        contin.trace(system, {"u": 0.0}, free="p")


def test_messages_describe_points_in_the_callers_words_and_fall_back_when_that_fails():
    # u = exp(s) traced in the logarithm s: the caller says where the trace ended in u itself
    system = contin.SymbolicSystem({"f": "s - log(q)"}, {"s": 0.0}, {"q": 1.0})
    words = contin.trace(system, free="q", bounds={"q": (0.5, 2.0)}, step=0.1,
                         describe=lambda x: f"u = {math.exp(x[0]):.6g} at q = {x[1]:.6g}")
    assert words.status is contin.Status.BOUND_REACHED
    assert words.message.endswith("q = 2 at u = 2 at q = 2")

    def broken(x):
        raise ValueError("no words")

    plain = contin.trace(system, free="q", bounds={"q": (0.5, 2.0)}, step=0.1, describe=broken)
    assert plain.message.endswith("q = 2 at s = 0.693147, q = 2")
