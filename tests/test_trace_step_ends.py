"""What a step reports about points between its two ends when it cannot do better, and how it words it.

The systems are exact (the branch is given in each comment); a residual that jumps in a slab of p
stands in for a model whose equations switch to another solution family there (as an equation of
state's root choice may).
"""

from __future__ import annotations

import numpy as np
import pytest
from test_crossing import exact_land, jacobian, parameter_jacobian, residual, start

import contin


def parabola_with_a_slab(jump):
    # u = p^2, except for |p| < 0.01 where the residual's zero is u = p^2 + jump (another family).
    def slab(u, p):
        return [u[0] - p[0] ** 2 - (jump if abs(p[0]) < 0.01 else 0.0)]

    return contin.CallableSystem(slab, ["u"], {"p": 0.0}, jacobian=lambda u, p: [[1.0]],
                                 parameter_jacobian=lambda u, p: [[-2.0 * p[0]]])


P_ZERO = contin.Event("p zero", lambda u, p: p[0])


def test_an_event_located_on_another_family_in_a_forced_step_is_kept_with_a_note_naming_it():
    # Steps of exactly 0.1 (min_step = max_step: every step is forced) from p = -0.25. The step over
    # p = 0 locates the event inside the slab, where the corrector finds u = 0.05, not u = 0: off the
    # branch by half the step, which the arc test refuses; a forced step cannot be shortened, so the
    # point is kept and a note says so.
    branch = contin.trace(parabola_with_a_slab(0.05), {"u": 0.0625}, parameters={"p": -0.25}, free="p",
                          step=0.1, min_step=0.1, max_step=0.1, events=[P_ZERO], bounds={"p": (-1.0, 0.2)})
    assert branch.status.label == "bound_reached"
    (event,) = branch.special("event")
    assert event.values["u"] == pytest.approx(0.05, abs=1e-9) and event.values["p"] == pytest.approx(0.0, abs=1e-9)
    (note,) = branch.stats["notes"]
    assert note.startswith("the event 'p zero' located at u = 0.05, p = ")
    assert note.endswith(" lies off the branch between the points around it (another solution family nearby?)")


def test_a_forced_first_step_that_cannot_locate_an_event_reports_it_on_the_start():
    # From p = -0.05 one forced step of 0.1 crosses p = 0; the corrector in the slab would move by
    # 10, more than the chord, so the event cannot be located. It is reported on the nearer end,
    # the start (|p| = 0.05 there against 0.0505 at the end), located to the step's length. (A start
    # on a special point is not a new one, but this estimate is the crossing's only report.)
    branch = contin.trace(parabola_with_a_slab(10.0), {"u": 0.0025}, parameters={"p": -0.05}, free="p",
                          step=0.1, min_step=0.1, max_step=0.1, events=[P_ZERO], bounds={"p": (-1.0, 0.2)})
    (event,) = branch.special("event")
    assert event.index == 0 and np.array_equal(event.point, branch.points[0])
    assert event.point == pytest.approx([0.0025, -0.05], abs=1e-15)
    chord = branch.points[1] - branch.points[0]
    assert event.located_to == pytest.approx(float(np.linalg.norm(chord)), rel=1e-12)
    # the chord is 0.1005 long (the step is 0.1 along the tangent)
    assert branch.stats["notes"] == [("the event 'p zero' between u = 0.0025, p = -0.05 and u = 0.00255064, "
                                      "p = 0.0505038 could not be located at min_step: reported at the nearer end, "
                                      "located to 0.101")]


def test_a_requested_value_within_rounding_of_the_start_is_a_row_of_its_own():
    # u = p from p = 0: p = 1e-12 lies inside the first step, nearer the start than a start's own
    # special point may be (1e-9), and is still reported, once, on its own row.
    line = contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0}, jacobian=lambda u, p: [[1.0]],
                                 parameter_jacobian=lambda u, p: [[-1.0]])
    branch = contin.trace(line, {"u": 0.0}, free="p", step=0.1, at={"p": [1e-12, 0.25]}, bounds={"p": (-0.5, 0.5)})
    assert [point.name for point in branch.at] == ["p = 1e-12", "p = 0.25"]
    assert branch.at[0].index == 1 and branch.points[1] == pytest.approx([1e-12, 1e-12], abs=1e-24)


def test_a_large_system_is_described_by_its_largest_unknown_even_the_last():
    # u_i = (i + 1) p for 60 unknowns: the last unknown is the largest; a message names it.
    n = 60
    scale = np.arange(1.0, n + 1.0)
    system = contin.CallableSystem(lambda u, p: u - scale * p[0], [f"u{i}" for i in range(n)], {"p": 0.0},
                                   jacobian=lambda u, p: np.eye(n), parameter_jacobian=lambda u, p: -scale[:, None])
    branch = contin.trace(system, np.zeros(n), free="p", step=0.01, bounds={"p": (-1.0, 0.02)})
    assert branch.message == ("completed: the branch reached a bound p = 0.02 at u0 = 0.02, u1 = 0.04, u2 = 0.06, "
                              "... of 60 unknowns, the largest u59 = 1.2, p = 0.02")


def test_a_passage_step_rejection_is_counted_by_its_reason_without_the_details():
    # The passage's first approach level d = -0.06 lies in a band where the residual flips by 1e-3 at
    # each call: Newton cannot settle there, and each rejected passage step is counted under its
    # reason's words, not its figures (which differ from one rejection to the next).
    calls = []

    def flickering(u, p):
        value = residual(u, p)
        if -0.07 < u[1] < -0.05:
            calls.append(1)
            return value + 1e-3 * (-1) ** len(calls)
        return value

    system = contin.CallableSystem(flickering, ["a", "d"], {"p": 0.0}, jacobian=jacobian,
                                   parameter_jacobian=parameter_jacobian)
    crossing = contin.Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = contin.trace(system, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start())
    assert branch.status.label == "step_too_small"
    rejections = branch.stats["rejections"]
    assert set(rejections) == {"Newton stalled near rounding", "corrector moved too far from the predictor"}
    assert sum(rejections.values()) == 5
