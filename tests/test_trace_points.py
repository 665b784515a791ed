"""What a trace's rows and special points hold: measured residuals, one row per point, exact names,
and the checks made between the two ends of a step at coordinates far from 1.

Each expected value is exact or derived in the comment beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from contin.tracing._locate import Located
from contin.tracing._trace import _in_branch_order, _same_point, _turns_twice


def line(slope: float = 1.0):
    # u = slope * p: a straight branch (exact).
    return contin.CallableSystem(lambda u, p: [u[0] - slope * p[0]], ["u"], {"p": 0.0},
                                 jacobian=lambda u, p: [[1.0]], parameter_jacobian=lambda u, p: [[-slope]])


def parabola_with_a_hole(centre: float = 0.25):
    # u = p^2, except that the residual is not a number within 0.001 of p = centre: a step can cross
    # the hole, a location inside it cannot converge.
    def residual(u, p):
        return [u[0] - p[0] ** 2 + (math.nan if abs(p[0] - centre) < 0.001 else 0.0)]

    return contin.CallableSystem(residual, ["u"], {"p": 0.0}, jacobian=lambda u, p: [[1.0]],
                                 parameter_jacobian=lambda u, p: [[-2.0 * p[0]]])


CIRCLE = contin.SymbolicSystem({"f": "u**2 + p**2 - 1"}, {"u": 1.0}, {"p": 0.0})
QUARTER = contin.Event("quarter", lambda u, p: p[0] - 0.25)


def largest_residual(system, branch, x) -> float:
    n = len(system.unknowns)
    values = dict(branch.parameters, **{branch.free: x[n]})
    parameters = np.array([values[name] for name in system.parameters], dtype=float)
    return float(np.abs(np.asarray(system.residual(x[:n], parameters), dtype=float)).max())


TRACES = {
    # a loop from a guess off the curve: the start's residual (2.8e-14) is not zero, so a closing row
    # that kept its own or took another row's would show
    "closed loop": (CIRCLE, dict(start={"u": 1.3}, free="p", step=0.1)),
    "requested values, an event and a bound": (CIRCLE, dict(
        free="p", step=0.3, at={"u": [0.5, 1.0], "p": [0.0, 0.3]}, bounds={"u": (-0.9, 2.0)},
        events=[contin.Event("e", lambda u, p: u[0] + p[0] - 0.2)])),
    "a start on its bound": (CIRCLE, dict(free="p", step=0.2, bounds={"p": (0.0, 2.0)}, direction=-1)),
    "two folds": (contin.SymbolicSystem({"f": "u**3 - u - p"}, {"u": -1.5}, {"p": -1.875}),
                  dict(free="p", step=0.2, bounds={"p": (-2.0, 2.0)}, folds=["u"])),
    # every step is at min_step, so an event that cannot be located in the hole is reported at the
    # nearer end of its step
    "a forced step": (parabola_with_a_hole(), dict(start={"u": 0.01}, free="p", step=0.1, min_step=0.1,
                                                   events=[QUARTER], bounds={"p": (-1.0, 0.5)})),
    # the same with the event and the hole at p = 0.24, nearer the start of that step (0.197)
    "a forced step, nearer its start": (parabola_with_a_hole(0.24), dict(
        start={"u": 0.01}, free="p", step=0.1, min_step=0.1, bounds={"p": (-1.0, 0.5)},
        events=[contin.Event("near start", lambda u, p: p[0] - 0.24)])),
}


@pytest.mark.parametrize("case", sorted(TRACES))
def test_every_residual_reported_is_the_one_measured_at_its_point(case):
    system, keywords = TRACES[case]
    branch = contin.trace(system, **keywords)
    assert branch.status in (contin.Status.CLOSED_LOOP, contin.Status.BOUND_REACHED), branch.message
    assert len(branch) >= 1
    measured = [largest_residual(system, branch, x) for x in branch.points]
    assert branch.residual_norms.tolist() == measured
    for point in branch.special_points + branch.at:
        assert point.residual_norm == largest_residual(system, branch, point.point), point.name
        if point.kind != "at" and branch.points[point.index].tolist() == point.point.tolist():
            # reported on a row: the row's own Newton iterations, not another point's
            assert point.newton_iterations == branch.newton_iterations[point.index], point.name


def test_a_closing_row_is_the_start_with_the_starts_own_residual():
    system, keywords = TRACES["closed loop"]
    branch = contin.trace(system, **keywords)
    assert branch.status is contin.Status.CLOSED_LOOP
    assert branch.residual_norms[0] > 0.0  # measured: the guess 1.3 is corrected to rounding level
    assert branch.points[-1].tolist() == branch.points[0].tolist()
    assert branch.residual_norms[-1] == branch.residual_norms[0]
    assert branch.residual_norms[-2] != branch.residual_norms[0]


def test_an_event_reported_on_the_start_of_a_forced_step_is_that_row():
    # The event p = 0.24 in its hole is nearer the step's first point (p = 0.197, |g| = 0.043; the end,
    # p = 0.288, has 0.048): it is reported on that row, with that row's Newton iterations.
    system, keywords = TRACES["a forced step, nearer its start"]
    branch = contin.trace(system, **keywords)
    (event,) = branch.special("event")
    assert event.values["p"] == pytest.approx(0.1971889730, abs=1e-9)
    assert branch.points[event.index].tolist() == event.point.tolist()
    assert event.newton_iterations == branch.newton_iterations[event.index] > 0
    assert len(np.unique(branch.points, axis=0)) == len(branch)


def test_an_event_reported_on_the_end_of_a_forced_step_is_one_row():
    # The event p = 0.25 lies in the hole: its step (p = 0.197 to 0.288) is at min_step, so it is
    # reported on the nearer end, p = 0.288 (|g| = 0.038 there, 0.053 at the start of the step), located
    # to the step's length. That end is one row of the branch, not two.
    system, keywords = TRACES["a forced step"]
    branch = contin.trace(system, **keywords)
    (event,) = branch.special("event")
    assert branch.points[event.index].tolist() == event.point.tolist()
    assert event.values["p"] == pytest.approx(0.2881207816, abs=1e-9)
    step = float(np.linalg.norm(branch.points[event.index] - branch.points[event.index - 1]))
    assert event.located_to == pytest.approx(step, rel=1e-12)
    assert np.all(branch.steps[1:] > 0.0), "two rows are the same point"
    assert len(np.unique(branch.points, axis=0)) == len(branch)


def test_bounds_and_requested_values_are_named_with_every_digit_they_need():
    # %g writes 1000000.5 as 1e+06; the names keep the value, and short values stay short.
    branch = contin.trace(line(), {"u": 1e6}, free="p", parameters={"p": 1e6}, step=1.0, max_step=1.0,
                          at={"u": [1e6 + 0.25, 1e6 + 1.0]}, bounds={"p": (0.0, 1e6 + 1.5)})
    assert sorted(point.name for point in branch.at) == ["u = 1000000.25", "u = 1000001.0"]
    (bound,) = branch.special("bound")
    assert bound.name == "p = 1000001.5"
    assert branch.message.startswith("completed: the branch reached a bound p = 1000001.5 at ")
    short = contin.trace(line(), {"u": 0.0}, free="p", step=0.1, at={"u": [0.25]}, bounds={"p": (-1.0, 0.5)})
    assert [point.name for point in short.at] == ["u = 0.25"]
    assert short.special("bound")[0].name == "p = 0.5"


def test_a_requested_value_just_past_a_start_on_another_is_aimed_at():
    # The start u = 2 is itself a requested value; the next, 2.5, lies within the first step (1.0 along
    # u = p moves u by 0.707), so that step lands on it exactly: its point is a row of the branch.
    branch = contin.trace(line(), {"u": 2.0}, free="p", parameters={"p": 2.0}, step=1.0, max_step=1.0,
                          at={"u": [2.0, 2.5]}, bounds={"p": (0.0, 3.2)})
    assert [(point.name, point.index) for point in branch.at] == [("u = 2", 0), ("u = 2.5", 1)]
    assert branch.points[1].tolist() == [2.5, 2.5]
    assert [point.located_to for point in branch.at] == [0.0, 0.0]  # both are rows, exactly


def test_an_event_that_dips_and_returns_inside_one_step_far_from_zero_is_found_twice():
    # g = (p - 1e6)^2 - 0.01 is negative only for |p - 1e6| < 0.1: a step of 1 on u = p from
    # p = 1e6 - 0.5 can pass both zeros with g > 0 at its ends. Its slope along the branch changes sign at
    # p = 1e6, which splits the step, but only if the difference step is large enough to be seen
    # beside p ~ 1e6 (a step scaled down by the coordinates' size is below their rounding).
    dip = contin.Event("dip", lambda u, p: (p[0] - 1e6) ** 2 - 0.01)
    branch = contin.trace(line(), {"u": 1e6 - 0.5}, free="p", parameters={"p": 1e6 - 0.5}, step=1.0,
                          max_step=1.0, events=[dip], bounds={"p": (0.0, 1e6 + 0.5)})
    zeros = [point.values["p"] - 1e6 for point in branch.special("event")]
    assert zeros == pytest.approx([-0.1, 0.1], abs=1e-8)


def test_a_point_located_on_a_straight_branch_far_from_zero_is_on_its_step():
    # On u = p near 1e6 the Newton tolerance reaches 1e3 * 1e-10 * 1e6 = 0.1, more than 1 % of a step of
    # 1: an event located exactly on the chord still lies on the step's arc, so the step is kept at
    # once (no rejection, no note) and the event is located to rounding.
    mid = contin.Event("mid", lambda u, p: p[0] - 1e6 - 0.3)
    branch = contin.trace(line(), {"u": 1e6}, free="p", parameters={"p": 1e6}, step=1.0, max_step=1.0,
                          min_step=1e-6, events=[mid], bounds={"p": (0.0, 1e6 + 2.0)})
    assert branch.stats["rejections"] == {}
    assert "notes" not in branch.stats
    (event,) = branch.special("event")
    assert event.values["p"] == pytest.approx(1e6 + 0.3, abs=1e-8)
    assert event.located_to < 1e-9


def test_a_helix_that_passes_near_its_start_is_not_a_closed_loop():
    # u = cos(w / e), v = sin(w / e): after one turn (u, v) is back and w has moved by 2 pi e = 5e-5.
    # A step of 0.005 turns the tangent by 0.005, so the arc lies within 0.25 * 0.005 * 0.005 = 6e-6 of
    # its chord: a start 5e-5 away was not passed. The trace goes on to its bound.
    e = 5e-5 / (2.0 * math.pi)

    def residual(u, p):
        return [u[0] - math.cos(p[0] / e), u[1] - math.sin(p[0] / e)]

    def jacobian(u, p):
        return [[1.0, 0.0], [0.0, 1.0]]

    def parameter_jacobian(u, p):
        return [[math.sin(p[0] / e) / e], [-math.cos(p[0] / e) / e]]

    helix = contin.CallableSystem(residual, ["u", "v"], {"w": 0.0}, jacobian=jacobian,
                                  parameter_jacobian=parameter_jacobian)
    branch = contin.trace(helix, [1.0, 0.0], free="w", step=0.005, max_step=0.005, max_points=3000,
                          bounds={"w": (-1.0, 7.5e-5)})
    assert branch.status is contin.Status.BOUND_REACHED, branch.message
    assert branch.special("closed_loop") == ()
    assert branch.points[-1, 2] == 7.5e-5


def test_a_turn_of_the_interpolant_beyond_the_step_is_not_a_turn_inside_it():
    # p'(s) = 2.15 - 3 s + s^2 (values 0 and 5.9/6, slopes 2.15 and 0.15 over a length of 1): its
    # minimum (-0.1) is at s = 1.5, past the step, and p' > 0 on [0, 1], so nothing turns inside.
    assert not _turns_twice(0.0, 5.9 / 6.0, 2.15, 0.15, 1.0)
    # p'(s) = 2.1 - 6 s + 4 s^2 (values 0 and 2.6/6, slopes 2.1 and 0.1): zeros at s = 0.556 and 0.944,
    # both inside, with the end slopes of one sign: a turn and a return inside the step.
    assert _turns_twice(0.0, 2.6 / 6.0, 2.1, 0.1, 1.0)


def test_a_large_systems_point_is_described_by_a_few_coordinates_and_its_largest():
    # 60 unknowns u_i = c_i p with the largest |c| at u41: a message names u0, u1, u2, the count, the
    # largest and the free parameter, not 61 values.
    c = np.ones(60)
    c[41] = -7.0
    system = contin.CallableSystem(lambda u, p: u - c * p[0], [f"u{i}" for i in range(60)], {"p": 1.0},
                                   jacobian=lambda u, p: np.eye(60), parameter_jacobian=lambda u, p: -c[:, None])
    branch = contin.trace(system, c * 1.0, free="p", step=0.1, max_points=2)
    assert branch.status is contin.Status.MAX_POINTS
    (x,) = branch.points[-1:]
    assert branch.message == (
        f"completed: the maximum number of points was reached (2) at u0 = {x[0]:.6g}, u1 = {x[1]:.6g}, u2 = {x[2]:.6g}, ... of 60 "
        f"unknowns, the largest u41 = {x[41]:.6g}, p = {x[60]:.6g}")
    # the largest among the first three is not named twice
    c[41], c[1] = 1.0, -7.0
    branch = contin.trace(system, c * 1.0, free="p", step=0.1, max_points=2)
    x = branch.points[-1]
    assert branch.message.endswith(f"u2 = {x[2]:.6g}, ... of 60 unknowns, p = {x[60]:.6g}")


def test_a_requested_value_located_inside_a_step_is_a_row_of_its_own():
    # Near the fold of u^2 + p^2 = 1 at p = 1 (exact) the branch crosses p = 0.99999 too flatly to aim
    # a step at it, so both crossings, u = +-sqrt(1 - 0.99999^2) (exact), are located inside steps.
    # Each is a row holding exactly those values, not the row before it (the second would be the
    # fold's).
    branch = contin.trace(CIRCLE, [1.0], free="p", at={"p": [0.99999]}, bounds={"p": [-2.0, 2.0]}, max_step=0.2)
    root = math.sqrt(1.0 - 0.99999 ** 2)
    # u is known to the Newton tolerance over |df/du| = 2|u|: 1e-10 / 0.009, about 1.1e-8
    assert [sp.values["u"] for sp in branch.at] == pytest.approx([root, -root], abs=2e-8)
    for sp in branch.at:
        assert branch.points[sp.index] == pytest.approx([sp.values["u"], sp.values["p"]], abs=0.0)
    fold = branch.special("fold")[0]
    assert fold.values["p"] == pytest.approx(1.0, abs=1e-12)
    assert [sp.index for sp in branch.at] == [fold.index - 1, fold.index + 1]


def test_a_start_is_noted_as_moved_beyond_a_thousandth_of_its_size():
    # u = p^2 at p = 1 from u = 1 + d: the start correction at fixed p moves it by d exactly. The note
    # is made past 1e-3 (1 + max |x0|) = 1e-3 (2 + d): at d = 0.0025, not at d = 0.0015.
    square = contin.CallableSystem(lambda u, p: [u[0] - p[0] ** 2], ["u"], {"p": 1.0},
                                   jacobian=lambda u, p: [[1.0]], parameter_jacobian=lambda u, p: [[-2.0 * p[0]]])
    moved = contin.trace(square, [1.0025], free="p", bounds={"p": [0.0, 2.0]})
    assert moved.stats["notes"] == ["the start was moved by 0.0025 to reach the curve, to u = 1, p = 1"]
    assert "notes" not in contin.trace(square, [1.0015], free="p", bounds={"p": [0.0, 2.0]}).stats


def _item(fraction, kind, payload, x):
    return (fraction, kind, payload, Located(fraction, np.array(x, dtype=float), np.array([1.0, 0.0]), 0.0, 1, 1e-10))


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.permutations(range(5)), st.lists(st.floats(-1e-12, 1e-12), min_size=5, max_size=5))
def test_points_located_at_one_point_are_ordered_by_kind_whatever_the_round_off(order, jitter):
    # A fold, a requested value, an event that only reports, a bound and a terminal event at one point
    # (their fractions and coordinates differ by round-off only), and an event a little earlier on the
    # branch: the earlier event first, then the reporting kinds by name, the bound, the terminal event.
    stop = contin.Event("stop", lambda u, p: p[0], terminal=True)
    note = contin.Event("note", lambda u, p: p[0])
    at_one = [("fold", 0), ("at", (0, 0.5)), ("event", note), ("bound", (1, 0.5)), ("event", stop)]
    items = [_item(0.5 + jitter[k], *at_one[k], [0.5 + jitter[k], 0.5]) for k in order]
    items.append(_item(0.4, "event", note, [0.4, 0.4]))
    ordered = [(kind, getattr(payload, "name", None)) for _, kind, payload, _ in _in_branch_order(items, 1e-10)]
    assert ordered == [("event", "note"), ("at", None), ("event", "note"), ("fold", None), ("bound", None),
                       ("event", "stop")]


@pytest.mark.parametrize(("unknowns", "shortened"), [(49, False), (50, True)])
def test_a_point_is_described_in_full_up_to_fifty_coordinates(unknowns, shortened):
    # 49 unknowns and the free parameter are 50 coordinates, all named; one more and the message names
    # the first three, the count and the parameter (u_i = p, exact).
    system = contin.CallableSystem(lambda u, p: u - p[0], [f"u{i}" for i in range(unknowns)], {"p": 1.0},
                                   jacobian=lambda u, p: np.eye(unknowns),
                                   parameter_jacobian=lambda u, p: -np.ones((unknowns, 1)))
    branch = contin.trace(system, np.ones(unknowns), free="p", step=0.5, max_points=2)
    where = branch.message.split(" at ", 1)[1]
    value = f"{branch.points[-1][-1]:.6g}"  # every coordinate has moved by the same amount
    assert value != "1"
    if shortened:
        assert where == f"u0 = {value}, u1 = {value}, u2 = {value}, ... of {unknowns} unknowns, p = {value}"
    else:
        assert where == ", ".join([f"u{i} = {value}" for i in range(unknowns)] + [f"p = {value}"])


def test_a_start_on_a_bound_heading_out_ends_there_with_the_starts_own_figures():
    # u = p from p = 1 on the bound p <= 1, heading up: the trace ends at its start, and the bound's
    # point is that row, exactly (located_to 0), with the start correction's residual and iterations.
    branch = contin.trace(line(), {"u": 1.0}, free="p", parameters={"p": 1.0}, bounds={"p": (0.0, 1.0)}, direction=1)
    assert branch.message == "completed: the branch reached a bound p = 1 at u = 1, p = 1"
    (bound,) = branch.special_points
    assert (bound.kind, bound.index, bound.located_to) == ("bound", 0, 0.0)
    assert bound.residual_norm == branch.residual_norms[0] == 0.0
    assert bound.newton_iterations == branch.newton_iterations[0]


def test_a_coordinate_whose_slope_only_touches_zero_inside_a_step_does_not_turn():
    # Hermite data u(0) = 0, u(1) = 1, slopes 1 and 1, over a length 3: the derivative along the step
    # is 3 - 12 s + 12 s^2 = 12 (s - 1/2)^2 (exact in floating point), zero at s = 1/2 without a sign
    # change: an inflexion, not a turn and a return.
    assert not _turns_twice(0.0, 1.0, 1.0, 1.0, 3.0)
    assert _turns_twice(0.0, 0.999, 1.0, 1.0, 3.0)  # a little less rise: the slope dips below zero


def test_a_start_that_does_not_converge_says_how_far_it_got_in_one_line():
    # exp(u) + 1 = 0 has no solution: Newton from u = 0 diverges; the message gives the residual and
    # the iterations of the row it keeps, and advice.
    system = contin.CallableSystem(lambda u, p: [math.exp(u[0]) + p[0]], ["u"], {"p": 1.0})
    branch = contin.trace(system, {"u": 0.0}, free="p")
    assert branch.message == (f"stopped: Newton did not converge at the start point: largest residual "
                              f"{branch.residual_norms[0]:.3g} after {branch.newton_iterations[0]} iterations "
                              "(Newton diverged); give a better start guess")
    assert branch.residual_norms[0] >= 1.0 and branch.newton_iterations[0] >= 1


def test_a_closed_loop_says_after_how_many_points():
    system, keywords = TRACES["closed loop"]
    branch = contin.trace(system, **keywords)
    assert branch.message == f"completed: the branch came back to its start (a closed loop) after {len(branch.points)} points"


def test_the_default_largest_step_is_one_half():
    # On a straight branch the step grows to max_step and stays there (u = p, exact).
    branch = contin.trace(line(), {"u": 0.0}, free="p", bounds={"p": (-1.0, 20.0)})
    assert max(branch.steps) == pytest.approx(0.5, rel=1e-12)
    assert sum(step == pytest.approx(0.5, rel=1e-12) for step in branch.steps) >= 20


def test_a_large_systems_largest_unknown_is_named_from_the_fourth_on():
    # 60 unknowns u_i = c_i p, the largest |c| at u3 (the first not shown anyway): it is named.
    c = np.ones(60)
    c[3] = 5.0
    system = contin.CallableSystem(lambda u, p: u - c * p[0], [f"u{i}" for i in range(60)], {"p": 1.0},
                                   jacobian=lambda u, p: np.eye(60), parameter_jacobian=lambda u, p: -c[:, None])
    branch = contin.trace(system, c * 1.0, free="p", step=0.1, max_points=2)
    x = branch.points[-1]
    assert branch.message.endswith(f"u2 = {x[2]:.6g}, ... of 60 unknowns, the largest u3 = {x[3]:.6g}, p = {x[60]:.6g}")


def test_a_flat_coordinates_requested_values_do_not_stop_another_from_being_aimed_at():
    # On a = 0.001 p the branch is nearly flat in a (|t_a| < 0.01 |t|), so a's requested values are
    # located afterwards, not aimed at; p's (looked at after a's: by name) are aimed at all the same:
    # with an a value that is never reached, the trace is the one with p's value alone, row for row.
    flat = contin.CallableSystem(lambda u, p: [u[0] - 0.001 * p[0]], ["a"], {"p": 0.0},
                                 jacobian=lambda u, p: [[1.0]], parameter_jacobian=lambda u, p: [[-0.001]])
    alone = contin.trace(flat, {"a": 0.0}, free="p", at={"p": [0.75]}, bounds={"p": (-1.0, 2.0)})
    both = contin.trace(flat, {"a": 0.0}, free="p", at={"a": [5.0], "p": [0.75]}, bounds={"p": (-1.0, 2.0)})
    assert np.array_equal(both.points, alone.points)
    assert [(sp.name, sp.located_to) for sp in both.at] == [("p = 0.75", 0.0)]
    (row,) = [i for i, p in enumerate(both.column("p")) if p == 0.75]
    assert both.at[0].index == row and both.steps[row] < 0.5  # a step shortened to land on it


def test_turning_once_inside_a_step_is_not_turning_twice():
    # Hermite data with end slopes 1 and -0.5 (one sign change: a single turn, which the end slopes
    # show), u(1) - u(0) = -0.5: the derivative 1 - 6 s + 4.5 s^2 has its minimum, -1, at s = 2/3, yet
    # there is one turn, not two.
    assert not _turns_twice(0.0, -0.5, 1.0, -0.5, 1.0)


@pytest.mark.parametrize(("x", "on"), [((-0.04, 0.0), True), ((-0.06, 0.0), False), ((-0.5, 0.0), False),
                                       ((1.04, 0.0), True), ((1.06, 0.0), False),
                                       ((0.5, 0.005), True), ((0.5, -0.02), False)])
def test_a_located_point_is_on_a_straight_steps_arc_within_five_percent_along_and_one_across(x, on):
    # A step of length 1 along (1, 0) with both end tangents along the chord (phi = 0): its arc is the
    # chord, with 5 % of slack along it, 1 % across it, and the Newton tolerance's reach.
    from types import SimpleNamespace

    from contin.tracing._trace import _Run

    run = SimpleNamespace(options=contin.TraceOptions())
    a, b = (np.zeros(2), np.array([1.0, 0.0])), (np.array([1.0, 0.0]), np.array([1.0, 0.0]))
    assert _Run._on_arc(run, np.array(x), a, b) is on


def test_a_step_that_lands_exactly_on_a_branch_point_is_retried_shorter_and_the_point_still_found():
    # u (u^2 - p) = 0 along u = 0 from p = -1: a first step of 1 lands exactly on the pitchfork at the
    # origin, where [dF/dx; t] = [[0, 0], [0, 1]] is singular (exact). The step is refused for that,
    # retried shorter, and the branch point is located between two regular points.
    pitchfork = contin.CallableSystem(lambda u, p: [u[0] * (u[0] ** 2 - p[0])], ["u"], {"p": -1.0},
                                      jacobian=lambda u, p: [[3 * u[0] ** 2 - p[0]]],
                                      parameter_jacobian=lambda u, p: [[-u[0]]])
    branch = contin.trace(pitchfork, [0.0], free="p", step=1.0, max_step=1.0, bounds={"p": (-1.0, 0.5)})
    assert branch.stats["rejections"] == {"singular bordered Jacobian": 1}
    assert [(sp.kind, sp.values) for sp in branch.special_points] == [
        ("branch_point", {"u": 0.0, "p": pytest.approx(0.0, abs=1e-10)}), ("bound", {"u": 0.0, "p": 0.5})]


def test_the_trace_time_is_measured_within_the_call():
    import time

    began = time.perf_counter()
    branch = contin.trace(CIRCLE, {"u": 1.0}, free="p", step=0.1)
    wall = time.perf_counter() - began
    assert 0.0 < branch.stats["trace_seconds"] <= wall  # (setup_seconds is the system's, made earlier)


@pytest.mark.parametrize(("distance", "same"), [(1.9e-9, True), (2.1e-9, False), (2.9e-9, False)])
def test_two_located_points_are_one_within_1e_9_of_their_size(distance, same):
    # at |x| = 1 with a location tolerance of 0 the reach is 1e-9 (1 + 1) = 2e-9
    a = Located(0.5, np.array([1.0, 0.0]), np.array([1.0, 0.0]), 0.0, 1, 0.0)
    b = Located(0.5, np.array([1.0, distance]), np.array([1.0, 0.0]), 0.0, 1, 0.0)
    assert _same_point(a, b, 0.0) is same
    assert _same_point(a, b, 1e-10) is True  # ten times the tolerance on top: 1e-9 more


@pytest.mark.parametrize(("x", "on"), [((1.05 + 0.5e-9, 0.0), True), ((1.05 + 2e-9, 0.0), False),
                                       ((0.5, 0.01 + 0.5e-9), True), ((0.5, 0.01 + 2e-9), False)])
@pytest.mark.parametrize("length", [1.0, 1e-3])
def test_the_arcs_slack_includes_a_billionth_of_the_step(x, on, length):
    # as above, with a Newton tolerance of 0: the only reach is 1e-9 of the step's length, for a
    # short step as for a long one (the whole picture scaled by the length)
    from types import SimpleNamespace

    from contin.tracing._trace import _Run

    run = SimpleNamespace(options=SimpleNamespace(tolerance=0.0))
    a, b = (np.zeros(2), np.array([1.0, 0.0])), (np.array([length, 0.0]), np.array([1.0, 0.0]))
    assert _Run._on_arc(run, length * np.array(x), a, b) is on


def test_two_real_eigenvalues_crossing_inside_one_step_are_both_located_and_noted_once():
    # u1' = (0.3 - p) u1 - u1^3, u2' = (0.35 - p) u2 - u2^3 along u = 0: two pitchforks, at p = 0.3 and
    # p = 0.35 (exact). A step over both leaves the branch-point test's sign as it was, but the count
    # of eigenvalues with positive real part falls from 2 to 0, more than the crossings located: the
    # step is retried shorter until each is located. The neutral saddle between them (eigenvalues
    # -+0.025 at p = 0.325) is noted once, however often the retries meet it in a row.
    with pytest.warns(contin.StructureWarning, match="splits into 2 independent subsystems"):
        system = contin.SymbolicSystem({"f1": "(0.3 - p)*u1 - u1**3", "f2": "(0.35 - p)*u2 - u2**3"},
                                       {"u1": 0.0, "u2": 0.0}, {"p": 0.0}, kind="ode")
    branch = contin.trace(system, free="p", step=0.2, max_step=0.5, bounds={"p": (0.0, 1.0)})
    assert [(sp.kind, sp.values["p"]) for sp in branch.special_points] == [
        ("branch_point", pytest.approx(0.3, abs=1e-9)), ("branch_point", pytest.approx(0.35, abs=1e-9)), ("bound", 1.0)]
    # the system's own structure is handed on with the branch
    assert branch.stats["structure"] == system.structure_summary()
    assert branch.stats["structure"]["independent_subsystems"] == 2
    notes = branch.stats["notes"]
    assert len(notes) == len(set(notes)) >= 1
    assert notes[0].startswith("neutral saddle (real eigenvalues -0.025 and 0.025) at u1 = 0, u2 = 0, p = 0.325")


def test_a_closed_loop_ends_on_its_start_row_with_the_starts_own_figures_after_a_step_no_longer_than_the_rest():
    system, keywords = TRACES["closed loop"]
    branch = contin.trace(system, **keywords, max_step=0.1)
    assert branch.status is contin.Status.CLOSED_LOOP
    assert np.array_equal(branch.points[-1], branch.points[0])
    assert np.array_equal(branch.tangents[-1], branch.tangents[0])
    assert branch.residual_norms[-1] == branch.residual_norms[0]
    assert branch.newton_iterations[-1] == branch.newton_iterations[0]
    assert branch.steps[-1] == pytest.approx(float(np.linalg.norm(branch.points[-1] - branch.points[-2])), rel=1e-15)
    # the start was passed inside the last step, not ahead of it: that step is no longer than the others
    assert branch.steps[-1] <= max(branch.steps[1:-1])
    (closing,) = branch.special("closed_loop")
    assert (closing.index, closing.name) == (len(branch.points) - 1, "back at the start")


def test_one_point_reaches_ten_location_tolerances():
    # at x = 0 with a location tolerance of 1e-8 the reach is 1e-7 + 1e-9
    a = Located(0.5, np.zeros(2), np.array([1.0, 0.0]), 0.0, 1, 0.0)
    for distance, same in ((1.0e-7, True), (1.05e-7, False)):
        b = Located(0.5, np.array([0.0, distance]), np.array([1.0, 0.0]), 0.0, 1, 0.0)
        assert _same_point(a, b, 1e-8) is same


def test_a_fixed_parameter_exactly_on_its_bound_is_inside_them():
    # bounds on a parameter that is not traced are checked against its value: its ends belong to it
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0] * p[1]], ["u"], {"p": 0.0, "q": 2.0},
                                   jacobian=lambda u, p: [[1.0]])
    for bounds in ((0.0, 2.0), (2.0, 3.0)):
        branch = contin.trace(system, [0.0], free="p", bounds={"q": bounds, "p": (-1.0, 1.0)})
        assert branch.status is contin.Status.BOUND_REACHED
    with pytest.raises(contin.InputError, match=r"^parameter 'q' is fixed at 2.0, outside its bounds \[2.5, 3.0\]$"):
        contin.trace(system, [0.0], free="p", bounds={"q": (2.5, 3.0)})


def test_a_trace_interrupted_by_ctrl_c_keeps_its_rows_and_says_so():
    calls = []

    def residual(u, p):
        calls.append(1)
        if len(calls) > 12:
            raise KeyboardInterrupt
        return [u[0] - p[0]]

    system = contin.CallableSystem(residual, ["u"], {"p": 0.0}, jacobian=lambda u, p: [[1.0]],
                                   parameter_jacobian=lambda u, p: [[-1.0]])
    branch = contin.trace(system, {"u": 0.0}, free="p", step=0.1)
    assert branch.status is contin.Status.INTERRUPTED and not branch.success
    assert branch.message == f"{contin.Status.INTERRUPTED.message}: keyboard interrupt"
    assert len(branch.points) >= 2 and isinstance(branch.cause, KeyboardInterrupt)


def test_a_terminal_event_names_itself_and_where_and_a_clean_trace_has_no_cause():
    event = contin.Event("half", lambda u, p: p[0] - 0.5, terminal=True)
    branch = contin.trace(line(), {"u": 0.0}, free="p", step=0.3, events=[event])
    assert branch.message == "completed: stopped by a terminal event 'half' at u = 0.5, p = 0.5"
    assert branch.cause is None


def test_a_start_on_a_requested_value_is_a_requested_point_of_kind_at():
    branch = contin.trace(line(), {"u": 0.25}, free="p", parameters={"p": 0.25}, at={"p": [0.25]},
                          bounds={"p": (0.0, 1.0)})
    assert [(sp.kind, sp.name, sp.index) for sp in branch.at][0] == ("at", "p = 0.25", 0)


def test_a_systems_own_setup_time_is_counted_in_the_setup():
    system = line()
    system.setup_seconds = 5.0
    branch = contin.trace(system, {"u": 0.0}, free="p", max_points=3)
    assert 5.0 <= branch.stats["setup_seconds"] < 6.0


def test_options_may_be_given_as_one_object_or_as_keywords_but_not_both():
    branch = contin.trace(line(), {"u": 0.0}, free="p", bounds={"p": (-1.0, 3.0)},
                          options=contin.TraceOptions(max_step=0.25, step=0.25))
    assert max(branch.steps) == pytest.approx(0.25, rel=1e-12)
    with pytest.raises(contin.InputError) as caught:
        contin.trace(line(), {"u": 0.0}, free="p", options=contin.TraceOptions(), step=0.1)
    assert str(caught.value) == "give either options=TraceOptions(...) or the step/tolerance keywords, not both"


@pytest.mark.parametrize("sign", ["", "-"])
def test_a_shallow_crossing_is_found_by_the_determinants_trend_whatever_its_sign(sign):
    # (u - lam^2)(u + 0.03 lam - lam^2) = 0, and its negative: two parabolas crossing at the origin at a
    # shallow angle (exact). Negating F flips the sign of det [dF/dx; t] along the branch; the trend
    # that finds a hop across the crossing must work with either sign.
    system = contin.SymbolicSystem({"f": f"{sign}(u - lam**2)*(u + 0.03*lam - lam**2)"}, {"u": 0.25}, {"lam": -0.5})
    branch = contin.trace(system, free="lam", bounds={"lam": (-0.5, 0.5)}, max_points=400)
    (point,) = branch.special("branch_point")
    assert abs(point.values["lam"]) <= 1e-10 and abs(point.values["u"]) <= 1e-10
