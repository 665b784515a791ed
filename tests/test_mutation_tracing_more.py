"""Tracing behaviours that one-line breaks of the driver slipped past (a third sampled mutation run).

Each test names the break it catches; the expected values are exact (derived in the comment).
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest

import contin


def line_system():
    # u - p = 0: the branch is the diagonal u = p (exact).
    return contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0},
                                 jacobian=lambda u, p: [[1.0]], parameter_jacobian=lambda u, p: [[-1.0]])


def test_setup_seconds_are_the_clock_alone_for_a_system_without_its_own(monkeypatch):
    # Catches a system without setup_seconds counted as 1 s of setup. With the clock stopped the
    # measured part is exactly 0, so the reported setup is the system's own figure, here none.
    monkeypatch.setattr(time, "perf_counter", lambda: 100.0)
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (-0.5, 0.5)})
    assert branch.stats["setup_seconds"] == 0.0


def test_rejections_are_counted_by_reason_without_the_details():
    # Catches the rejection counter keyed by the whole reason (with its parenthesised figures): one
    # Newton iteration per step cannot correct onto the circle u^2 + p^2 = 1, so steps are rejected
    # for "no convergence (in 1 Newton iterations)", counted under "no convergence".
    system = contin.SymbolicSystem({"f": "u**2 + p**2 - 1"}, {"u": 1.0}, {"p": 0.0})
    branch = contin.trace(system, free="p", step=0.3, max_iterations=1, max_points=50)
    rejections = branch.stats["rejections"]
    assert rejections.get("no convergence", 0) >= 1
    assert all("(" not in reason for reason in rejections)


def test_a_start_on_a_bound_heading_out_ends_at_once():
    # Catches the outward test asking for a tangent component above 1: the unit tangent of u = p
    # heading to lower p has p-component -1/sqrt(2), so the start p = 0 on the bound p >= 0 is left
    # outwards and the trace is that one point.
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, direction=-1, bounds={"p": (0.0, 1.0)})
    assert branch.status is contin.Status.BOUND_REACHED
    assert len(branch) == 1
    (bound,) = branch.special("bound")
    assert bound.values["p"] == 0.0 and bound.index == 0


def test_a_requested_value_crossed_three_times_within_one_long_step_is_reported_three_times():
    # Catches the double-turn subdivision switched off: u = p^3 - 0.03 p rises, turns at p = -0.1,
    # falls, turns at p = 0.1 and rises again, so u = 0 is crossed at p = -sqrt(0.03), 0, sqrt(0.03)
    # (exact). A step of 0.6 from p = -0.3 to 0.3 has rising end slopes (the tangent is the same at
    # both ends, so the turn check passes it) and shows one crossing only; max_correction is opened so
    # that such a step is taken at all.
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0] ** 3 + 0.03 * p[0]], ["u"], {"p": -0.3},
                                   jacobian=lambda u, p: [[1.0]],
                                   parameter_jacobian=lambda u, p: [[-3.0 * p[0] ** 2 + 0.03]])
    branch = contin.trace(system, {"u": -0.3 ** 3 + 0.009}, free="p", step=0.6, max_step=0.6, max_correction=10.0,
                          bounds={"p": (-0.3, 0.3)}, at={"u": [0.0]})
    root = math.sqrt(0.03)
    assert [sp.values["p"] for sp in branch.at] == pytest.approx([-root, 0.0, root], abs=1e-9)


def test_branches_crossing_at_a_shallow_angle_give_their_branch_point_from_the_determinants_trend():
    # Catches the trend of log |det [dF/dx; t]| never recorded (the magnitude left unset where the
    # solver's factors give the sign): (u - lam^2)(u + 0.03 lam - lam^2) = 0 are two parabolas crossing
    # at the origin only (exact), so close beside each other that a default step hops from one to the
    # other across the crossing with no sign change; only the determinant's falling trend shows it.
    system = contin.SymbolicSystem({"f": "(u - lam**2)*(u + 0.03*lam - lam**2)"}, {"u": 0.25}, {"lam": -0.5})
    branch = contin.trace(system, free="lam", bounds={"lam": (-0.5, 0.5)}, max_points=400)
    (point,) = branch.special("branch_point")
    assert abs(point.values["lam"]) <= 1e-10 and abs(point.values["u"]) <= 1e-10
    lam, u = branch.column("lam"), branch.column("u")
    assert np.abs(u - lam ** 2).max() <= 1e-5  # never left the traced parabola


def test_at_one_point_an_event_is_reported_before_the_bound_that_ends_the_trace():
    # Catches a stop hiding what was located at the stop itself: the event g = p - 1 is zero exactly
    # on the bound p <= 1 of u = p (exact), where the step lands. Both are one point, so their order
    # is the kinds' (what only reports, then what stops), not the round-off in their positions: the
    # event is a row and a special point, then the bound ends the trace.
    event = contin.Event("g", lambda u, p: p[0] - 1.0)
    for step in (0.1, 0.3, 0.45):
        branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=step, bounds={"p": (-0.5, 1.0)}, events=[event])
        assert branch.status is contin.Status.BOUND_REACHED
        assert [(sp.kind, sp.values["p"]) for sp in branch.special_points] == [("event", pytest.approx(1.0, abs=1e-12)), ("bound", 1.0)]
        assert [sp.index for sp in branch.special_points] == [len(branch.points) - 2, len(branch.points) - 1]


def test_a_terminal_event_on_a_bound_is_reported_and_the_bound_ends_the_trace():
    # Both stop the trace at one point (exact, as above): the bound gives the status, the terminal
    # event is still a special point of its own, and nothing is reported twice.
    event = contin.Event("g", lambda u, p: p[0] - 1.0, terminal=True)
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.3, bounds={"p": (-0.5, 1.0)}, events=[event])
    assert branch.status is contin.Status.BOUND_REACHED
    assert branch.message == "completed: the branch reached a bound p = 1 at u = 1, p = 1"
    assert [sp.kind for sp in branch.special_points] == ["bound", "event"]
    assert [sp.values["p"] for sp in branch.special_points] == pytest.approx([1.0, 1.0], abs=1e-12)


def test_a_double_zero_of_the_branch_point_test_is_stepped_past_not_retried():
    # Catches the trend check without its agreement test (two lines through |det| that disagree on
    # where it vanishes): on u = lam, (u - lam)(u^2 + lam^2) has gradient 2 lam^2 (1, -1), a double zero
    # at the origin with no sign change and no second branch (exact). The prediction runs ahead of
    # every step there, so the steps are taken, not retried down to min_step.
    system = contin.SymbolicSystem({"f": "(u - lam)*(u**2 + lam**2)"}, {"u": -0.5}, {"lam": -0.5})
    branch = contin.trace(system, free="lam", bounds={"lam": (-0.5, 0.5)}, max_points=400)
    assert branch.status is contin.Status.BOUND_REACHED
    assert branch.column("lam")[-1] == pytest.approx(0.5, abs=1e-12)
    assert np.abs(branch.column("u") - branch.column("lam")).max() <= 1e-12
    assert branch.stats["rejections"].get("special point not located", 0) == 0
