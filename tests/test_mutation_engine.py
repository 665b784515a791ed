"""Engine behaviours that one-line breaks of the source used to slip past (found by mutation testing).

Each test names the break it catches; every expected value is exact (derived in the comment) or a
central finite difference computed in the test.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

import contin


UNIT_CIRCLE = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 - 1.0], ["u"], {"p": 0.0})


def line_system():
    # u - p = 0: the branch is the diagonal u = p, traced with p increasing (exact).
    return contin.CallableSystem(lambda u, p: [u[0] - p[0]], ["u"], {"p": 0.0},
                                 jacobian=lambda u, p: [[1.0]], parameter_jacobian=lambda u, p: [[-1.0]])


@pytest.mark.parametrize("direction, expected", [(-1, [1.0]), (1, [2.0]), (0, [1.0, 2.0])])
def test_event_direction_selects_falling_or_rising_crossings(direction, expected):
    # g = (u - 1)(u - 2) falls through zero at u = 1 and rises through it at u = 2 (exact).
    event = contin.Event("g", lambda u, p: (u[0] - 1.0) * (u[0] - 2.0), direction=direction)
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (-0.5, 3.0)},
                          events=[event])
    found = [sp.values["u"] for sp in branch.special("event")]
    assert found == pytest.approx(expected, abs=1e-10)


def test_an_event_function_that_raises_ends_the_trace_and_says_so():
    def g(u, p):
        if u[0] > 1.0:
            raise ZeroDivisionError("no value past u = 1")
        return u[0] - 5.0

    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (-0.5, 3.0)},
                          events=[contin.Event("g", g)])
    assert branch.status is contin.Status.INTERRUPTED
    assert isinstance(branch.cause, ZeroDivisionError)
    assert branch.message == ("interrupted: the trace was stopped before it finished: event 'g' raised "
                              "ZeroDivisionError: no value past u = 1")
    assert branch.column("u").max() <= 1.0 + 0.1 + 1e-12  # stopped within one step of the failure


def test_a_requested_value_at_the_start_point_is_reported():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (-0.5, 1.0)},
                          at={"p": [0.0, 0.5]})
    assert [sp.values["p"] for sp in branch.at] == pytest.approx([0.0, 0.5], abs=1e-14)
    assert branch.at[0].index == 0


def test_status_table():
    labels = [status.label for status in contin.Status]
    assert len(labels) == len(set(labels))
    for status in contin.Status:
        assert "\n" not in status.message and status.message.strip() == status.message
        assert str(status) == status.label
    completed = {s for s in contin.Status if s.success}
    assert completed == {contin.Status.COMPLETED, contin.Status.BOUND_REACHED, contin.Status.MAX_POINTS,
                         contin.Status.CLOSED_LOOP, contin.Status.TERMINAL_EVENT}


def test_max_points_is_a_success():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, max_points=5)
    assert branch.status is contin.Status.MAX_POINTS
    assert branch.success
    assert len(branch) == 5
    assert "\n" not in branch.message and "(5)" in branch.message


def test_bounds_on_a_fixed_parameter_are_checked_against_its_value():
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0] - p[1]], ["u"], {"p": 0.0, "q": 0.0})
    with pytest.raises(contin.InputError, match=r"parameter 'q' is fixed at 0\.0, outside its bounds \[1\.0, 2\.0\]"):
        contin.trace(system, {"u": 0.0}, free="p", bounds={"q": (1.0, 2.0)})
    # Inside its bounds it is accepted and changes nothing.
    branch = contin.trace(system, {"u": 0.0}, free="p", bounds={"q": (-1.0, 1.0), "p": (-1.0, 0.5)})
    assert branch.status is contin.Status.BOUND_REACHED


def helix(pitch):
    # u = (x, y), p = theta/(2 pi) ... as an implicit system: x = cos(2 pi z), y = sin(2 pi z) with the
    # free parameter z = p; but the loop test needs the start approached again, so the third
    # coordinate is the free parameter w with x = cos(s), y = sin(s), w = pitch * s (a helix of the
    # given pitch per radian): F = [x - cos(w / pitch), y - sin(w / pitch)].
    def residual(u, p):
        s = p[0] / pitch
        return [u[0] - math.cos(s), u[1] - math.sin(s)]

    def parameter_jacobian(u, p):
        s = p[0] / pitch
        return [[math.sin(s) / pitch], [-math.cos(s) / pitch]]

    return contin.CallableSystem(residual, ["x", "y"], {"w": 0.0}, jacobian=lambda u, p: np.eye(2),
                                 parameter_jacobian=parameter_jacobian)


def test_a_helix_that_passes_near_its_start_is_not_a_closed_loop():
    # After one turn the helix is 2 pi * pitch above its start: more than the step's sagitta allows
    # (0.25 L theta ~ 6e-4 for steps of 0.05), less than twenty times it. No loop: the bound ends it.
    pitch = 1e-3
    branch = contin.trace(helix(pitch), {"x": 1.0, "y": 0.0}, free="w", step=0.05, max_step=0.05,
                          bounds={"w": (-1.0, 1.5 * 2 * math.pi * pitch)})
    assert branch.status is contin.Status.BOUND_REACHED
    assert not branch.special("closed_loop")
    assert branch.column("w")[-1] == pytest.approx(1.5 * 2 * math.pi * pitch, abs=1e-12)


def eight(eps):
    # A closed space curve (x, y, w) = (sin 2s, 2 sin s, eps cos s): its projection on (x, y) is a
    # figure eight whose two passes through the origin cross at right angles, 2 eps apart in w.
    # Implicitly, with x, w unknown and y free: x = y w / eps, (y / 2)^2 + (w / eps)^2 = 1.
    return contin.CallableSystem(
        lambda u, p: [u[0] - p[0] * u[1] / eps, (p[0] / 2) ** 2 + (u[1] / eps) ** 2 - 1.0],
        ["x", "w"], {"y": 0.0},
        jacobian=lambda u, p: [[1.0, -p[0] / eps], [0.0, 2 * u[1] / eps**2]],
        parameter_jacobian=lambda u, p: [[-u[1] / eps], [p[0] / 2]])


def test_a_loop_closes_only_where_the_start_is_passed_the_same_way():
    # Start at s = 0, (x, w, y) = (0, eps, 0). Half-way round (s = pi) the curve passes 2 eps from
    # the start (within the closing test's reach) heading across it at right angles: not a loop
    # yet. It closes after the whole turn, through both folds of y (y = 2 at s = pi/2, -2 at 3pi/2).
    eps = 1e-8
    branch = contin.trace(eight(eps), {"x": 0.0, "w": eps}, free="y", step=0.05, max_step=0.1)
    assert branch.status is contin.Status.CLOSED_LOOP
    assert [round(sp.values["y"], 9) for sp in branch.special("fold")] == [2.0, -2.0]
    # It went all the way round: w / eps = cos s took the value -1 (s = pi) before closing.
    assert branch.column("w").min() / eps == pytest.approx(-1.0, abs=1e-3)


def two_parameter_fold_system():
    # F = [x^2 - lam + q y, 2 y - x + q]: dF/du = [[2x, q], [-1, 2]] is not symmetric. Eliminating
    # y = (x - q) / 2 gives lam = x^2 + q (x - q) / 2, with a fold at x = -q/4, lam* = -9 q^2 / 16, so
    # d lam* / dq = -9 q / 8 (exact). At the fold the left null vector is (2, -1) and the right one
    # (2, 1) for q = 1: only the left one gives -9/8.
    return contin.CallableSystem(
        lambda u, p: [u[0] ** 2 - p[0] + p[1] * u[1], 2 * u[1] - u[0] + p[1]], ["x", "y"],
        {"lam": 0.0, "q": 1.0},
        jacobian=lambda u, p: [[2 * u[0], p[1]], [-1.0, 2.0]],
        parameter_jacobian=lambda u, p: [[-1.0, u[1]], [0.0, 1.0]],
    )


def _trace_fold_system(q):
    system = two_parameter_fold_system()
    # Start on the branch at x = 1: y = (1 - q) / 2, lam = 1 + q (1 - q) / 2.
    start = {"x": 1.0, "y": (1.0 - q) / 2}
    return system, contin.trace(system, start, free="lam", parameters={"q": q, "lam": 1 + q * (1 - q) / 2},
                                direction=-1, step=0.05, bounds={"lam": (-2.0, 3.0), "x": (-3.0, 3.0)})


def _solve_at(system, lam, q, guess):
    u = np.array(guess, dtype=float)
    for _ in range(30):
        p = np.array([lam, q])
        residual, ju, _ = system.linearise(u, p, 0)
        u = u - np.linalg.solve(ju, residual)
    return u


def test_sensitivities_of_a_two_unknown_non_symmetric_system_match_finite_differences():
    system, branch = _trace_fold_system(1.0)
    result = contin.sensitivities(branch, system)
    assert result.parameters == ("q",)
    h = 1e-5
    checked = 0
    for i, row in enumerate(branch.points):
        if not np.all(np.isfinite(result.points[i])):
            continue
        lam = row[-1]
        up = _solve_at(system, lam, 1.0 + h, row[:-1])
        down = _solve_at(system, lam, 1.0 - h, row[:-1])
        assert result.points[i][:, 0] == pytest.approx((up - down) / (2 * h), rel=1e-6, abs=1e-6)
        checked += 1
    assert checked >= 10
    (fold,) = result.folds
    assert fold["free"]["q"] == pytest.approx(-9.0 / 8.0, abs=1e-8)
    assert fold["index"] == branch.special("fold")[0].index and fold["name"] == "fold in lam"
    # Against re-traced branches at q +- h: the fold's lam moves by the same amount.
    folds = [_trace_fold_system(q)[1].special("fold") for q in (1.0 + h, 1.0 - h)]
    assert [len(f) for f in folds] == [1, 1]
    difference = (folds[0][0].values["lam"] - folds[1][0].values["lam"]) / (2 * h)
    assert fold["free"]["q"] == pytest.approx(difference, abs=1e-5)


def test_restart_in_another_parameter_keeps_the_direction():
    system = two_parameter_fold_system()
    _, branch = _trace_fold_system(1.0)
    fold = branch.special("fold")[0].index

    def first_step(index, direction):
        again = contin.restart(branch, index, system, free="q", direction=direction, step=0.05,
                               max_points=4)
        assert again.free == "q"
        assert again.column("q")[0] == pytest.approx(1.0, abs=1e-14)
        return again.points[1] - again.points[0]

    # From a regular point q moves the asked way.
    for direction in (1, -1):
        assert np.sign(first_step(3, direction)[-1]) == direction
    # From the fold (singular dF/du: a fold in q too, so q grows either way) the two directions
    # leave along opposite sides: x moves opposite ways.
    up, down = first_step(fold, 1), first_step(fold, -1)
    assert np.sign(up[0]) == -np.sign(down[0]) != 0


def test_status_messages_say_how_the_trace_ended():
    # Every message starts with its verdict, so a reader of a log line knows at once.
    for status in contin.Status:
        if status is contin.Status.INTERRUPTED:
            assert status.message.startswith("interrupted: ")
        elif status.success:
            assert status.message.startswith("completed: ")
        else:
            assert status.message.startswith("stopped: ")


def test_crossing_test_edge_cases():
    from contin.systems._events import crossed

    # A zero exactly at the first end was counted by the previous step; non-finite values never cross.
    assert not crossed(0.0, 1.0) and not crossed(0.0, -1.0)
    assert crossed(-1.0, 0.0, 1) and crossed(1.0, 0.0, -1) and not crossed(1.0, 0.0, 1)
    for bad in (math.nan, math.inf, -math.inf):
        assert not crossed(bad, 1.0) and not crossed(-1.0, bad)


@pytest.mark.parametrize("keywords, message", [
    (dict(terminal="yes"), r"^event 'g': terminal='yes' must be True or False$"),
    (dict(direction=2), r"^event 'g': direction=2 must be -1, 0 or 1$"),
    (dict(direction=True), r"^event 'g': direction=True must be -1, 0 or 1$"),
    (dict(kind=""), r"^event 'g': kind must be a non-empty string$"),
])
def test_bad_event_arguments_are_named(keywords, message):
    with pytest.raises(contin.InputError, match=message):
        contin.Event("g", lambda u, p: 0.0, **keywords)


def test_crossing_gaps_out_of_order_are_named():
    with pytest.raises(contin.InputError,
                       match=r"^crossing gaps must satisfy 0 < smallest_gap \(0\.001\) <= gap \(0\.5\) < near \(0\.1\)$"):
        contin.Crossing(coordinates=["u"], near=0.1, gap=0.5, smallest_gap=1e-3)


def test_a_bound_names_its_coordinate():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"u": (-1.0, 0.35)})
    (bound,) = branch.special("bound")
    assert bound.info["coordinate"] == "u" and bound.name == "u = 0.35"
    assert bound.values["u"] == pytest.approx(0.35, abs=1e-12)


def test_a_given_tangent_across_the_branch_is_named_in_the_message():
    # The branch u = p runs along (1, 1); a start tangent (1, -1) makes [dF/dx; tangent] singular.
    with pytest.raises(contin.InputError, match=r"^the bordered Jacobian \[dF/dx; tangent\] is singular at the "
                                                r"start point \(u = 0, p = 0\): start away"):
        contin.trace(line_system(), {"u": 0.0}, free="p", tangent=[1.0, -1.0])


def test_restart_and_record_messages_are_whole_and_exact(tmp_path):
    _, branch = _trace_fold_system(1.0)
    last = len(branch) - 1
    with pytest.raises(contin.InputError, match=rf"^--restart-at {last + 1}: the branch has points 0 to {last}$"):
        contin.restart(branch, last + 1, two_parameter_fold_system())
    missing = tmp_path / "none.json"
    with pytest.raises(contin.InputError, match="^" + re.escape(f"run record {str(missing)!r} does not exist") + "$"):
        contin.read_record(missing)


# -- the double-turn test inside a step ------------------------------------------------------------

def _hermite_turns(value_a, value_b, slope_a, slope_b, length):
    """Zeros inside (0, 1) of the derivative of the cubic Hermite interpolant (ends value_a, value_b,
    derivatives along the arc slope_a, slope_b, arc = length), from numpy's polynomial roots."""
    d0, d1, delta = slope_a * length, slope_b * length, value_b - value_a
    # p(s) = h00 value_a + h10 d0 + h01 value_b + h11 d1 (the Hermite basis); p'(s) by numpy
    basis = [np.polynomial.Polynomial(c) for c in ([1, 0, -3, 2], [0, 1, -2, 1], [0, 0, 3, -2], [0, 0, -1, 1])]
    curve = value_a * basis[0] + d0 * basis[1] + value_b * basis[2] + d1 * basis[3]
    roots = curve.deriv().roots()
    return [r.real for r in roots if abs(r.imag) < 1e-12 and 0.0 < r.real < 1.0], delta


@pytest.mark.parametrize("value_b, slope_a, slope_b, twice", [
    (0.0, 1.0, 1.0, True),     # up, back down to the same value, up again: two turns
    (0.1, 0.5, 0.5, True),     # slopes below 1 in size (a product below 1) turn twice as well
    (-0.05, 2.0, 3.0, True),   # a small net fall between rising ends
    (1.0, 1.0, 1.0, False),    # a straight rise: no turn
    (0.9, 0.8, 1.1, False),    # a gentle rise
    (0.5, 1.0, 1.0, False),    # a rise to half the end slopes' reach: p' dips to 1/4, no turn
    (0.6, 2.0, 1.0, False),    # steep then gentle: p' stays positive
    (-1.0, -1.0, -1.0, False), # a straight fall
    (0.0, -0.5, -0.5, True),   # falling ends with no net change: two turns
    (1.0, 1.0, -1.0, False),   # slopes of opposite signs: one turn, seen by the end slopes
    (0.0, 1.0, 0.0, False),    # the end is a turn (slope 0): seen by the end slopes, not a second one
    (0.0, 0.0, 1.0, False),    # the start is a turn: likewise
])
def test_a_coordinate_that_turns_twice_inside_a_step_is_seen(value_b, slope_a, slope_b, twice):
    from contin.tracing._trace import _turns_twice

    roots, _ = _hermite_turns(0.0, value_b, slope_a, slope_b, 1.0)
    assert (len(roots) == 2 and slope_a * slope_b > 0) is twice  # the independent count agrees
    assert _turns_twice(0.0, value_b, slope_a, slope_b, 1.0) is twice
    # the answer is the same for any arc length with the slopes scaled to keep the shape
    assert _turns_twice(3.0, 3.0 + value_b, slope_a / 4.0, slope_b / 4.0, 4.0) is twice
    assert _turns_twice(0.0, value_b, slope_a, slope_b, 0.0) is False  # a step of no length


# -- start values, a successful trace's cause, the corrector's reach, branch-point notes -----------

def test_a_start_mapping_without_an_unknown_that_has_no_default_is_named():
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0], u[1] - 2 * p[0]], ["u", "v"], {"p": 0.0})
    with pytest.raises(contin.InputError, match=r"^start gives no value for unknown 'v' \(and the system has no default\)$"):
        contin.trace(system, {"u": 0.0}, free="p")


def test_a_trace_that_succeeds_has_no_cause():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, max_points=5)
    assert branch.success and branch.cause is None


def test_the_corrector_may_not_move_further_than_max_correction_of_the_step():
    # On the unit circle the second-order predictor misses by about h^3/8 (h the step): a reach of
    # 1e-6 of the step forces steps far below the asked 0.1; with the default reach 0.5 it is kept.
    tight = contin.trace(UNIT_CIRCLE, {"u": -1.0}, free="p", step=0.1, max_step=0.1, max_points=30, max_correction=1e-6)
    loose = contin.trace(UNIT_CIRCLE, {"u": -1.0}, free="p", step=0.1, max_step=0.1, max_points=30)
    assert np.median(loose.steps[1:]) > 0.09
    assert tight.steps.max() < 0.02
    on_circle = tight.column("u") ** 2 + tight.column("p") ** 2
    assert np.allclose(on_circle, 1.0, rtol=0, atol=1e-9)


def test_folds_without_branch_points_leave_no_branch_point_note():
    # u^3 - u + p = 0 has two folds (u = -+1/sqrt 3, p = -+2/(3 sqrt 3)) and no branch point (exact).
    fold = contin.CallableSystem(lambda u, p: [u[0] ** 3 - u[0] + p[0]], ["u"], {"p": 0.0})
    branch = contin.trace(fold, {"u": -1.5}, free="p", step=0.1, bounds={"p": (-2.0, 2.0)}, direction=-1)
    assert [sp.kind for sp in branch.special_points] == ["fold", "fold", "bound"]
    assert [sp.values["p"] for sp in branch.special("fold")] == pytest.approx(
        [-2 / (3 * math.sqrt(3)), 2 / (3 * math.sqrt(3))], abs=1e-9)
    assert not any("branch-point" in note for note in branch.stats.get("notes", []))


def test_requested_values_beyond_one_in_size_are_reported_once_exactly():
    # The step lands on a requested value by fixing that coordinate: p = 1.5 and -2.5 exactly, once each.
    for direction, values in ((1, [1.5, 2.5]), (-1, [-1.5, -2.5])):
        branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (-3.0, 3.0)},
                              at={"p": values}, direction=direction)
        assert [sp.values["p"] for sp in branch.at] == values
        assert [sp.values["u"] for sp in branch.at] == pytest.approx(values, abs=1e-12)
        assert [sp.located_to for sp in branch.at] == [0.0, 0.0]


# -- events: a frozen, checked configuration --------------------------------------------------------

def test_an_event_is_frozen_and_refuses_an_empty_name_or_a_function_that_is_not_callable():
    import dataclasses

    event = contin.Event("g", lambda u, p: 0.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        event.direction = 5  # checked at construction only, so it may not change afterwards
    for name in ("", 3):
        with pytest.raises(contin.InputError, match=rf"^event name {name!r} must be a non-empty string$"):
            contin.Event(name, lambda u, p: 0.0)
    with pytest.raises(contin.InputError, match=r"^event 'g': function must be callable as g\(u, p\)$"):
        contin.Event("g", 1.0)


# -- location: the Illinois bracket and a coordinate level -----------------------------------------

def _run_bracket(f, tolerance=1e-12):
    from contin.tracing._locate import IllinoisBracket

    bracket = IllinoisBracket(f(0.0), f(1.0), 1.0, tolerance)
    trials = []
    for _ in range(100):
        s = bracket.trial()
        trials.append(s)
        if f(s) == 0.0 or bracket.update(s, f(s)):
            break
    return bracket, trials


def test_the_illinois_bracket_takes_the_chord_zero_of_a_straight_line_first():
    # Regula falsi on f(s) = 4 s - 1 (from f(0) = -1, f(1) = 3): the first trial is the zero 1/4 (exact).
    bracket, trials = _run_bracket(lambda s: 4.0 * s - 1.0)
    assert trials[0] == 0.25


@pytest.mark.parametrize("f", [lambda s: math.exp(6.0 * s) - 2.0,        # convex: plain regula falsi keeps s = 1
                               lambda s: 2.0 - math.exp(6.0 * (1.0 - s)),  # the mirror image: it keeps s = 0
                               lambda s: math.log(1.0 + 9.0 * s) - 1.0])   # concave
def test_the_illinois_bracket_shrinks_from_both_sides_to_the_tolerance(f):
    # Plain regula falsi on a convex or concave function keeps one end for ever and closes in from one
    # side only; Illinois halves the stale end's value, so the bracket's width itself falls below the
    # tolerance, within a few trials, around the true zero (found here by bisection, independently).
    bracket, trials = _run_bracket(f)
    low, high = 0.0, 1.0
    for _ in range(200):
        middle = 0.5 * (low + high)
        low, high = (middle, high) if (f(middle) < 0) == (f(0.0) < 0) else (low, middle)
    assert bracket.low <= low and high <= bracket.high
    assert bracket.width <= 1e-12 and bracket.located_to <= 1e-12
    assert 0.0 < bracket.low and bracket.high < 1.0  # both ends moved
    assert len(trials) <= 15


def test_a_level_of_a_coordinate_is_located_on_the_branch_between_two_points():
    from contin.tracing._locate import locate_level
    from contin.tracing._options import TraceOptions

    # The unit circle u^2 + p^2 = 1 between the points at angles 0.2 and 1.2 (x = (u, p) = (cos, sin)):
    # p = 0.5 is at angle pi/6, at chord fraction (0.5 - sin 0.2) / (sin 1.2 - sin 0.2) of the chord's
    # projection, u = sqrt(3)/2 (exact).
    extended, (xa, ta), (xb, tb) = _unit_circle()
    for level in (0.5, float(xb[1]) - 1e-6):
        located = locate_level(extended, (xa, ta), (xb, tb), 1, level, TraceOptions())
        assert located.x[1] == pytest.approx(level, abs=1e-12)
        assert located.x[0] == pytest.approx(math.sqrt(1.0 - level**2), abs=1e-10)
        chord = xb - xa
        assert located.fraction == pytest.approx(float((located.x - xa) @ chord) / float(chord @ chord), abs=1e-12)
        assert 0.0 < located.fraction < 1.0
        assert located.located_to == 0.0
        assert abs(located.tangent @ np.array([located.x[1], -located.x[0]])) == pytest.approx(1.0, abs=1e-9)


def test_a_start_on_a_bound_heading_out_ends_there_at_once():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, bounds={"p": (0.0, 1.0)}, direction=-1)
    assert branch.status is contin.Status.BOUND_REACHED and len(branch) == 1
    (bound,) = branch.special("bound")
    assert (bound.index, bound.name, bound.values) == (0, "p = 0", {"u": 0.0, "p": 0.0})
    assert bound.residual_norm == branch.residual_norms[0] and bound.located_to == 0.0


def _unit_circle(angle_a=0.2, angle_b=1.2):
    """u^2 + p^2 = 1 as the driver's extended system, and its points (x, tangent) at two angles."""
    from contin.tracing._extended import Counters, Extended

    extended = Extended(UNIT_CIRCLE, np.array([0.0]), 0, Counters())

    def point(angle):
        return np.array([math.cos(angle), math.sin(angle)]), np.array([-math.sin(angle), math.cos(angle)])

    return extended, point(angle_a), point(angle_b)


def test_a_level_starts_newton_from_the_linear_interpolate_and_an_end_level_is_that_end():
    from contin.tracing._locate import locate_level
    from contin.tracing._options import TraceOptions

    extended, a, b = _unit_circle()
    # From the interpolate (u = 0.9, p = 0.5) Newton on u^2 = 3/4 meets the tolerance in 4 iterations;
    # any other start (outside the chord, or at an end) needs more or lands on the other root.
    located = locate_level(extended, a, b, 1, 0.5, TraceOptions())
    assert located.iterations == 4 and located.x[0] == pytest.approx(math.sqrt(0.75), abs=1e-12)
    # A level equal to an end's coordinate is that end: fraction 0 or 1 exactly, one Newton iteration.
    for end, fraction in ((a, 0.0), (b, 1.0)):
        located = locate_level(extended, a, b, 1, float(end[0][1]), TraceOptions())
        assert (located.fraction, located.located_to, located.iterations) == (fraction, 0.0, 1)
        assert located.x == pytest.approx(end[0], abs=1e-15)


def test_a_zero_is_located_in_few_trials_and_none_when_no_point_can_be_corrected():
    import dataclasses

    from contin.tracing._extended import Counters, Extended
    from contin.tracing._locate import locate_zero
    from contin.tracing._options import TraceOptions

    extended, a, b = _unit_circle()
    calls = []

    def test(x, t):
        calls.append(x[1])
        return math.exp(6.0 * x[1]) - 20.0

    located = locate_zero(extended, (*a, test(*a)), (*b, test(*b)), test, TraceOptions())
    assert located.x[1] == pytest.approx(math.log(20.0) / 6.0, abs=1e-12)
    assert located.located_to <= TraceOptions().location_tolerance
    assert len(calls) == 2 + 11  # the two ends, then the Illinois trials: it stops once located
    assert located.info == {}
    with pytest.raises(dataclasses.FrozenInstanceError):
        located.located_to = 1.0
    # A system with no solution inside the chord: the first correction fails and there is nothing.
    nowhere = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 + 1.0], ["u"], {"p": 0.0})
    broken = Extended(nowhere, np.array([0.0]), 0, Counters())
    assert locate_zero(broken, (*a, -1.0), (*b, 1.0), lambda x, t: 0.0, TraceOptions()) is None
    assert locate_zero(extended, (*a, -1.0), (a[0], a[1], 1.0), test, TraceOptions()) is None  # no chord


def _bracket_trials(f, length, tolerance):
    """The Illinois bracket on f over a chord of ``length``, run until it says located (an exact zero
    at a trial is handed to it like any other value): the bracket and its trials."""
    from contin.tracing._locate import IllinoisBracket

    bracket, trials = IllinoisBracket(f(0.0), f(1.0), length, tolerance), []
    for _ in range(100):
        s = bracket.trial()
        trials.append(s)
        if bracket.update(s, f(s)):
            break
    return bracket, trials


def test_the_illinois_bracket_measures_its_width_and_moves_in_lengths_along_the_chord():
    def f(s):
        return math.exp(6.0 * s) - 2.0

    bracket, trials = _bracket_trials(f, 10.0, 1e-10)
    # on a chord of length 10 the tolerance 1e-10 is 1e-11 in the fraction
    assert len(trials) == 14
    assert bracket.width == pytest.approx(10.0 * (bracket.high - bracket.low), rel=1e-15)
    assert bracket.located_to == min(bracket.width, bracket.moved) <= 1e-10
    assert bracket.low < math.log(2.0) / 6.0 < bracket.high


def test_a_fixed_parameter_exactly_on_a_bound_of_its_own_is_accepted():
    # a bound on a parameter that is not free must hold its fixed value; its ends count as inside
    system = contin.CallableSystem(lambda u, p: [u[0] - p[0] - p[1]], ["u"], {"p": 0.0, "q": 0.25})
    branch = contin.trace(system, {"u": 0.25}, free="p", step=0.1, bounds={"p": (0.0, 1.0), "q": (0.25, 1.0)})
    assert branch.status is contin.Status.BOUND_REACHED
    assert branch.column("u")[-1] == pytest.approx(1.25, abs=1e-12)


def test_a_tangent_of_zeros_is_refused_naming_the_coordinates():
    with pytest.raises(contin.InputError, match=r"^tangent must be 2 finite numbers, not all zero \(coordinates: u, p\)$"):
        contin.trace(line_system(), {"u": 0.0}, free="p", tangent=[0.0, 0.0])


def test_the_stop_at_max_points_says_so_with_the_limit_and_the_point():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, max_step=0.1, max_points=4)
    assert branch.status is contin.Status.MAX_POINTS and len(branch) == 4
    assert branch.message == "completed: the maximum number of points was reached (4) at u = 0.212132, p = 0.212132"  # 3 steps of 0.1 along the diagonal


def test_a_start_that_does_not_converge_is_one_row_with_a_zero_tangent_of_full_length():
    system = contin.CallableSystem(lambda u, p: [u[0] ** 2 + 1.0 + p[0]], ["u"], {"p": 0.0})
    branch = contin.trace(system, {"u": 0.5}, free="p")
    assert branch.status is contin.Status.START_NOT_CONVERGED and len(branch) == 1
    assert branch.tangents.shape == (1, 2) and not np.any(branch.tangents)


def test_a_trace_and_its_options_share_their_defaults():
    import inspect

    from contin.tracing._options import TraceOptions

    options = TraceOptions()
    assert (options.max_points, options.max_iterations) == (2000, 8)
    defaults = inspect.signature(contin.trace).parameters
    assert (defaults["max_points"].default, defaults["max_iterations"].default) == (2000, 8)


@pytest.mark.parametrize("direction, values", [(1, [0.2, 0.25, 0.7]), (-1, [0.3, 0.7, 0.75])])
def test_a_step_that_would_pass_a_requested_value_lands_on_it_and_the_next_starts_there(direction, values):
    # Along u = p with steps of 0.1 in arclength (0.1 / sqrt 2 in p): each requested value is an ordinary
    # step's end (aimed at, not located inside a longer step), and the steps go on from it, also when
    # the next value lies within one step (0.25 after 0.2; 0.7 after 0.75 going down).
    start = 0.0 if direction > 0 else 1.0
    branch = contin.trace(line_system(), {"u": start}, free="p", parameters={"p": start}, step=0.1, max_step=0.1,
                          bounds={"p": (0.0, 1.0)}, at={"p": values}, direction=direction)
    h = 0.1 / math.sqrt(2.0) * direction
    targets = sorted(values, reverse=direction < 0) + [1.0 - start]
    expected, p = [start], start
    for target in targets:
        while (target - (p + h)) * direction > 1e-12:
            p += h
            expected.append(p)
        p = target
        expected.append(p)
    assert branch.column("p") == pytest.approx(expected, abs=1e-12)
    assert branch.stats["accepted_steps"] == len(expected) - 1


def test_a_level_whose_newton_lands_outside_the_chord_is_found_inside_it_by_the_bracket():
    from contin.tracing._locate import locate_level
    from contin.tracing._options import TraceOptions

    # On the unit circle from angle 1.45 to 1.95, p = 0.99 is crossed at angle pi - asin(0.99), inside;
    # Newton from the linear interpolate (u = 0.099) goes to the other crossing, asin(0.99), before the
    # first point. The level is then bracketed on the chord, and found inside.
    extended, a, b = _unit_circle(1.45, 1.95)
    located = locate_level(extended, a, b, 1, 0.99, TraceOptions())
    angle = math.pi - math.asin(0.99)
    assert located.x == pytest.approx([math.cos(angle), 0.99], abs=1e-9)
    assert 0.0 < located.fraction < 1.0 and located.located_to <= TraceOptions().location_tolerance


def test_the_illinois_bracket_stops_on_its_width_or_on_a_trial_that_no_longer_moves():
    # f = s - 0.3 on a chord of length 10, tolerance 1 (a distance): the first trial hits the zero
    # exactly, so that end's value is 0 and the next trials bisect towards it; the bracket stops when
    # its width, 0.075 of the chord (0.75 in length), falls below the tolerance.
    bracket, trials = _bracket_trials(lambda s: s - 0.3, 10.0, 1.0)
    assert trials == pytest.approx([0.3, 0.15, 0.225], abs=1e-15) and bracket.width == pytest.approx(0.75, rel=1e-12)
    # exp(6 s) - 2 with a tolerance of 1e-3: a trial that moves less than the tolerance from the one
    # before stops it while the bracket is still 8e-3 wide, at the tenth trial.
    bracket, trials = _bracket_trials(lambda s: math.exp(6.0 * s) - 2.0, 1.0, 1e-3)
    assert len(trials) == 10 and bracket.moved <= 1e-3 < bracket.width
    # A zero at 0.999 (tolerance 0.01): the first trial has moved 1.999 from the start (taken as -1,
    # off the chord), so it is not located at once, however near it lies to the end 1.
    bracket, trials = _bracket_trials(lambda s: s - 0.999, 1.0, 0.01)
    assert len(trials) == 8


def test_a_bound_on_a_name_that_is_no_coordinate_is_refused_naming_the_coordinates():
    with pytest.raises(contin.InputError, match=r"^bounds names 'q', which is not an unknown or the free parameter "
                                                r"\(coordinates: u, p\)"):
        contin.trace(line_system(), {"u": 0.0}, free="p", bounds={"q": (0.0, 1.0)})


def test_the_statistics_of_a_trace_have_their_documented_keys_and_counts():
    branch = contin.trace(line_system(), {"u": 0.0}, free="p", step=0.1, max_step=0.1, bounds={"p": (0.0, 1.0)},
                          at={"p": [0.5]})
    keys = {"setup_seconds", "trace_seconds", "newton_iterations", "jacobian_evaluations", "residual_evaluations",
            "accepted_steps", "rejected_steps", "rejections", "points", "linear_solver"}
    assert keys <= set(branch.stats)
    assert branch.stats["rejected_steps"] == 0 and branch.stats["points"] == len(branch)
    # a requested value is a row, listed with its name and values
    (at,) = branch.at
    assert (at.kind, at.name) == ("at", "p = 0.5") and at.values["p"] == pytest.approx(0.5, abs=1e-12)


def test_each_step_is_the_distance_from_the_point_before_also_where_a_loop_closes():
    branch = contin.trace(UNIT_CIRCLE, {"u": 1.0}, free="p", step=0.3, max_step=0.3)
    assert branch.status is contin.Status.CLOSED_LOOP
    assert branch.points[-1] == pytest.approx(branch.points[0], abs=0.0)  # ends exactly on the start
    distances = np.linalg.norm(np.diff(branch.points, axis=0), axis=1)
    assert branch.steps[0] == 0.0 and branch.steps[1:] == pytest.approx(distances, rel=1e-12)
