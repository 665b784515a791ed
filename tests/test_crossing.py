"""The engine's passage of a singular crossing: a second solution family meeting the branch.

The model problem is exact: F = d * g(a, d, p) with g1 = a - p - d and g2 = a + p - 1 + d^2. Every
point with d = 0 solves F = 0 (the second family, two-dimensional, like K = 1 at a mixture critical
point), and the branch g = 0, a = p + d, p = (1 - d - d^2) / 2, crosses it at a = p = 1/2, where
dF/dx vanishes altogether.
"""

import math

import numpy as np
import pytest

import contin
from contin import CallableSystem, Crossing, InputError, Landing, trace


def residual(u, p):
    a, d = u
    return np.array([d * (a - p[0] - d), d * (a + p[0] - 1.0 + d * d)])


def jacobian(u, p):
    a, d = u
    return np.array([[d, a - p[0] - 2.0 * d], [d, a + p[0] - 1.0 + 3.0 * d * d]])


def parameter_jacobian(u, p):
    a, d = u
    return np.array([[-d], [d]])


SYSTEM = CallableSystem(residual, ["a", "d"], {"p": 0.0}, jacobian=jacobian, parameter_jacobian=parameter_jacobian)


def on_branch(d):
    p = (1.0 - d - d * d) / 2.0
    return np.array([p + d, d]), p


def exact_land(before, after):
    return Landing(np.array([0.5, 0.0, 0.5]), located_to=0.0, info={"method": "exact"})


def start(d=-0.8):
    u, p = on_branch(d)
    return dict(start=u, parameters={"p": p})


@pytest.mark.parametrize("max_step", [0.05, 0.3, 1.0])
def test_the_branch_is_followed_across_the_second_family_on_one_branch(max_step):
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]},
                   max_step=max_step, **start())
    assert branch.status.label == "bound_reached"
    d = branch.column("d")
    assert d[0] < 0.0 < d[-1] and branch.special("bound")[0].values["d"] == pytest.approx(0.9)
    (critical,) = branch.special("critical")
    # The singular point is a row with exactly its values, between the rows on either side.
    assert branch.points[critical.index] == pytest.approx([0.5, 0.0, 0.5], abs=0.0)
    assert d[critical.index - 1] < 0.0 < d[critical.index + 1]
    assert critical.info["method"] == "exact" and critical.info["coordinate"] == "d"
    # the Jacobian is singular there: its tangent is the unit chord between its neighbours
    assert critical.info["tangent"] == "the chord between the points around it (the Jacobian is singular there)"
    chord = branch.points[critical.index + 1] - branch.points[critical.index - 1]
    assert branch.tangents[critical.index] == pytest.approx(chord / np.linalg.norm(chord), abs=1e-15)
    # the jump over it went from d = -gap to d = +gap, and the point says which gap
    assert critical.info["gap"] == crossing.gap == 0.02
    assert [d[critical.index - 1], d[critical.index + 1]] == pytest.approx([-0.02, 0.02], rel=1e-9)
    assert critical.residual_norm == 0.0  # measured in the branch's equations: F = 0 on d = 0
    # Every other row is on the branch g = 0, none on the second family.
    others = np.delete(branch.points, critical.index, axis=0)
    assert np.all(np.abs(others[:, 1]) >= 0.0025 * (1 - 1e-9))
    assert others[:, 0] == pytest.approx(others[:, 2] + others[:, 1], abs=1e-8)
    assert others[:, 2] == pytest.approx((1.0 - others[:, 1] - others[:, 1] ** 2) / 2.0, abs=1e-8)


def test_without_a_land_function_the_singular_point_is_an_estimate_that_says_so():
    branch = trace(SYSTEM, free="p", crossing=Crossing(["d"]), direction=1, bounds={"d": [-0.9, 0.9]},
                   **start())
    (crossing,) = branch.special("crossing")
    assert "estimate" in crossing.info
    assert crossing.values["d"] == 0.0
    assert crossing.point == pytest.approx([0.5, 0.0, 0.5], abs=2e-3)  # the midpoint of d = +-gap
    assert crossing.located_to > 0.0  # the jump's length, not a claim of exactness


def test_a_land_function_that_fails_or_lands_elsewhere_leaves_an_estimate_and_a_note():
    def far_away(before, after):
        return Landing(np.array([3.0, 0.0, -2.0]), located_to=0.0)

    def raising(before, after):
        raise RuntimeError("no convergence")

    def misshapen(before, after):
        return Landing(np.array([0.5, 0.0]), located_to=0.0)  # two coordinates of three

    def not_finite(before, after):
        return Landing(np.array([0.5, math.nan, 0.5]), located_to=0.0)

    for land in (misshapen, not_finite):
        branch = trace(SYSTEM, free="p", crossing=Crossing(["d"], land=land), direction=1,
                       bounds={"d": [-0.9, 0.9]}, **start())
        assert branch.status.label == "bound_reached"
        assert "estimate" in branch.special("crossing")[0].info
        assert [note.endswith("does not lie between the points around it; its position is estimated")
                for note in branch.stats["notes"]] == [True]
    for land in (far_away, raising):
        branch = trace(SYSTEM, free="p", crossing=Crossing(["d"], land=land), direction=1,
                       bounds={"d": [-0.9, 0.9]}, **start())
        assert branch.status.label == "bound_reached"
        assert "estimate" in branch.special("crossing")[0].info
        assert any("estimated" in note for note in branch.stats["notes"])
        if land is far_away:
            assert branch.stats["notes"] == ["the singular crossing solved at a = 3, d = 0, p = -2 does not lie "
                                             "between the points around it; its position is estimated"]


def test_folds_near_the_crossing_are_located_on_converged_points():
    # On this branch p(d) = (1 - d - d^2)/2 has its fold at d = -1/2: a fold in p on the approach.
    crossing = Crossing(["d"], near=0.6, gap=0.02, land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start())
    (fold,) = branch.special("fold")
    assert fold.values["d"] == pytest.approx(-0.5, abs=1e-7)
    assert fold.values["p"] == pytest.approx(0.625, abs=1e-12)
    assert fold.residual_norm <= 1e-10


@pytest.mark.parametrize("arguments, message", [
    (dict(coordinates=[]), "non-empty sequence"),
    (dict(coordinates="d"), "non-empty sequence"),
    (dict(coordinates=["d"], near=0.01, gap=0.02), "smallest_gap"),
    (dict(coordinates=["d"], gap=float("nan")), "finite number"),
    (dict(coordinates=["d"], land=3), "callable"),
    (dict(coordinates=["d"], kind=""), "kind"),
])
def test_bad_crossings_are_refused(arguments, message):
    with pytest.raises(InputError, match=message):
        Crossing(**arguments)


def test_a_crossing_coordinate_that_is_not_a_column_is_refused():
    with pytest.raises(InputError, match="crossing names 'q'"):
        trace(SYSTEM, free="p", crossing=Crossing(["q"]), **start())
    with pytest.raises(InputError, match="must be a contin.Crossing"):
        trace(SYSTEM, free="p", crossing={"coordinates": ["d"]}, **start())


def test_crossing_is_public():
    assert contin.Crossing is Crossing and contin.Landing is Landing


# A branch that meets the second family d = 0 twice: the circle d^2 + p^2 = 1/4 with a = p, where
# F = [d (a - p), d (d^2 + p^2 - 1/4)]. At both meetings (p = +-1/2) p also turns, so a fold of p
# lies inside each jump: the gap is halved to the smallest, and the fold is reported at the singular
# point (exact values).
def circle_residual(u, p):
    a, d = u
    return np.array([d * (a - p[0]), d * (d * d + p[0] ** 2 - 0.25)])


def circle_jacobian(u, p):
    a, d = u
    return np.array([[d, a - p[0]], [0.0, 3.0 * d * d + p[0] ** 2 - 0.25]])


CIRCLE = CallableSystem(circle_residual, ["a", "d"], {"p": 0.0}, jacobian=circle_jacobian,
                        parameter_jacobian=lambda u, p: np.array([[-u[1]], [2.0 * u[1] * p[0]]]))


def circle_land(before, after):
    side = math.copysign(0.5, before[2])
    return Landing(np.array([side, 0.0, side]), located_to=0.0, info={"method": "exact"})


def test_a_branch_that_meets_the_second_family_twice_passes_it_twice():
    crossing = Crossing(["d"], kind="critical", name="critical point", land=circle_land)
    # an event that vanishes on the second family itself falls inside each jump too
    on_family = contin.Event("d = 0", lambda u, p: u[1])
    branch = trace(CIRCLE, start=[-0.3, -0.4], parameters={"p": -0.3}, free="p", crossing=crossing,
                   max_step=0.1, max_points=400, events=[on_family])
    assert branch.status.label == "closed_loop"
    critical = branch.special("critical")
    assert [sp.values["p"] for sp in critical] == [0.5, -0.5]
    assert [sp.info["gap"] for sp in critical] == [crossing.smallest_gap] * 2  # halved from 0.02
    folds = branch.special("fold")
    assert [sp.index for sp in folds] == [sp.index for sp in critical]
    assert [(sp.name, sp.info["coordinate"]) for sp in folds] == [("fold in p", "p"), ("fold in p", "p")]
    events = branch.special("event")
    assert [(sp.index, sp.name, sp.info["terminal"]) for sp in events] == [(sp.index, "d = 0", False) for sp in critical]
    # a note for each of them, each time: the fold, then the event
    assert [note.split(" lies within")[0] for note in branch.stats["notes"] if "lies within" in note] == [
        "the fold in p", "the event 'd = 0'"] * 2
    assert [note for note in branch.stats["notes"] if "lies within" in note][0].startswith(
        "the fold in p lies within 0.0025 in d of the critical point")
    d = branch.column("d")
    for sp in critical:
        assert abs(d[sp.index - 1]) == pytest.approx(0.0025, rel=1e-9) and d[sp.index - 1] == pytest.approx(-d[sp.index + 1], rel=1e-9)
    # every row but the two singular ones lies on the circle
    others = np.delete(branch.points, [sp.index for sp in critical], axis=0)
    assert np.allclose(others[:, 1] ** 2 + others[:, 2] ** 2, 0.25, rtol=0, atol=1e-9)
    # each passage began where |d| reached the default near = 0.1, on both sides of both meetings
    assert np.sum(np.abs(np.abs(d) - 0.1) < 1e-9) == 4


def test_a_crossing_gap_may_not_reach_near_and_a_landing_is_frozen():
    import dataclasses

    with pytest.raises(InputError, match=r"^crossing gaps must satisfy 0 < smallest_gap \(0\.0025\) <= gap \(0\.1\) "
                                         r"< near \(0\.1\)$"):
        Crossing(["d"], near=0.1, gap=0.1)
    landing = Landing(np.zeros(3), located_to=0.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        landing.located_to = 1.0


# A passage step that fails. The residual is not a number where the approach side's d lies in a band
# (as an equation of state may fail to give a root there); the passage must then bring its levels of d
# closer to the last point, and give up with a message once they cannot come closer.
def banded(lower, upper, once=False):
    tried = []

    def residual_with_a_band(u, p):
        d = u[1]
        if lower < d < upper and not (once and tried):
            tried.append(float(d))
            return np.full(2, np.nan)
        return residual(u, p)

    system = CallableSystem(residual_with_a_band, ["a", "d"], {"p": 0.0}, jacobian=jacobian,
                            parameter_jacobian=parameter_jacobian)
    return system, tried


def test_a_passage_step_that_fails_is_retried_with_levels_closer_to_the_last_point():
    # The first approach level, d = -0.1 * 0.6 = -0.06, fails once; the retry goes a quarter of the
    # way less, to -0.1 * 0.8 = -0.08 (the ratio brought halfway to one), and the passage then goes on.
    system, tried = banded(-0.07, -0.05, once=True)
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(system, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start())
    assert branch.status.label == "bound_reached"
    assert tried == [pytest.approx(-0.06, rel=1e-12)]
    d = branch.column("d")
    begins = int(np.flatnonzero(np.abs(d + 0.1) < 1e-12)[0])
    assert d[begins + 1] == pytest.approx(-0.08, rel=1e-12)
    # after a success the ratio moves back from 0.8 by 1.25 times its distance to one: 0.75
    assert d[begins + 2] == pytest.approx(-0.06, rel=1e-12)
    assert branch.special("critical")[0].point == pytest.approx([0.5, 0.0, 0.5], abs=0.0)


def test_a_passage_that_cannot_come_closer_stops_with_a_message_naming_the_last_point():
    # Every level in (-0.0795, -0.03) fails. From d = -0.08 the passage tries -0.06 (ratio 0.75),
    # -0.07 (0.875), -0.075 (0.9375), -0.0775 (0.96875): the ratio has reached 0.95, so it stops.
    system, tried = banded(-0.0795, -0.03)
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(system, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start())
    assert branch.status.label == "step_too_small"
    assert tried == pytest.approx([-0.06, -0.06, -0.07, -0.075, -0.0775], rel=1e-12)
    assert branch.column("d")[-1] == pytest.approx(-0.08, rel=1e-12)
    assert branch.message == ("stopped: the step size fell below min_step: the passage of the critical point "
                              "failed after the point a = 0.4568, d = -0.08, p = 0.5368: non-finite residual "
                              "at the predicted point")
    assert branch.stats["rejections"] == {"non-finite residual at the predicted point": 5}
    assert branch.special("critical") == ()


def test_a_passage_that_cannot_even_begin_stops_once_its_ratio_reaches_the_limit():
    # Every level in (-0.0999, -0.03) fails from the start of the passage at d = -0.1: the levels tried
    # are -0.06 (ratio 0.6), -0.08 (0.8), -0.09 (0.9) and -0.095 (0.95): at the limit of 0.95 it stops.
    system, tried = banded(-0.0999, -0.03)
    branch = trace(system, free="p", crossing=Crossing(["d"], land=exact_land), direction=1,
                   bounds={"d": [-0.9, 0.9]}, **start())
    assert branch.status.label == "step_too_small"
    assert tried == pytest.approx([-0.06, -0.08, -0.09, -0.095], rel=1e-12)
    assert branch.column("d")[-1] == pytest.approx(-0.1, rel=1e-12)
    assert "the passage of the singular crossing failed after the point" in branch.message


@pytest.mark.parametrize("arguments, message", [
    (dict(coordinates=[]), "crossing coordinates must be a non-empty sequence of coordinate names"),
    (dict(coordinates="d"), "crossing coordinates must be a non-empty sequence of coordinate names"),
    (dict(coordinates=["d"], near=True), "crossing near=True must be a finite number"),
    (dict(coordinates=["d"], gap=float("nan")), "crossing gap=nan must be a finite number"),
    (dict(coordinates=["d"], smallest_gap="0.1"), "crossing smallest_gap='0.1' must be a finite number"),
    (dict(coordinates=["d"], smallest_gap=0.0),
     r"crossing gaps must satisfy 0 < smallest_gap \(0.0\) <= gap \(0.02\) < near \(0.1\)"),
    (dict(coordinates=["d"], land=3), r"crossing land must be callable as land\(before, after\)"),
    (dict(coordinates=["d"], kind=""), "crossing kind must be a non-empty string"),
])
def test_bad_crossings_are_refused_with_the_whole_message(arguments, message):
    with pytest.raises(InputError, match=f"^{message}$"):
        Crossing(**arguments)


def test_a_crossing_keeps_its_defaults_its_coordinates_as_a_tuple_and_cannot_be_changed():
    import dataclasses

    crossing = Crossing(["d"], gap=0.02, smallest_gap=0.02)  # the smallest gap may equal the gap
    assert crossing.coordinates == ("d",) and isinstance(crossing.coordinates, tuple)
    assert (crossing.near, crossing.kind, crossing.name, crossing.land) == (0.1, "crossing", "singular crossing", None)
    with pytest.raises(dataclasses.FrozenInstanceError):
        crossing.near = 0.5
    assert Landing(np.zeros(3), located_to=0.0).info == {}


def test_a_trace_that_starts_near_the_second_family_heading_to_it_begins_its_passage_at_the_start():
    # From d = -0.05, p falls as d rises (the fold of p is at d = -1/2): direction -1 heads to d = 0.
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=-1, bounds={"d": [-0.9, 0.9]}, **start(-0.05))
    assert branch.status.label == "bound_reached"
    (critical,) = branch.special("critical")
    assert branch.points[critical.index] == pytest.approx([0.5, 0.0, 0.5], abs=0.0)
    d = branch.column("d")
    # the passage steps fix d at levels shrinking by 0.6 from the start: -0.03, then the gap -0.02
    assert d[1] == pytest.approx(-0.03, rel=1e-12) and d[2] == pytest.approx(-0.02, rel=1e-12)
    assert d[critical.index + 1] == pytest.approx(0.02, rel=1e-12)
    assert branch.special("bound")[0].values["d"] == pytest.approx(0.9)


def test_a_trace_that_starts_near_the_second_family_heading_away_leaves_by_ordinary_steps():
    # Before the fix the passage began at the start whatever the heading, and its first step, planned
    # towards d = 0, failed four times: "the passage of the critical point failed".
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start(-0.05))
    assert branch.status.label == "bound_reached", branch.message
    assert branch.special("critical") == ()
    assert branch.special("bound")[0].values["d"] == pytest.approx(-0.9)
    (fold,) = branch.special("fold")
    assert fold.values["d"] == pytest.approx(-0.5, abs=1e-7)


def test_one_step_over_the_whole_passage_region_still_begins_the_passage_on_the_near_side():
    # near = 0.03 is far narrower than the steps: the first step, from d = -0.15, lands at d = +0.097,
    # beyond the region. The passage then begins where d reaches -near in that step, located like a
    # bound, and the step's far end is dropped.
    crossing = Crossing(["d"], near=0.03, gap=0.02, land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=-1, bounds={"d": [-0.9, 0.9]},
                   step=0.3, max_step=1.0, **start(-0.15))
    assert branch.status.label == "bound_reached"
    d = branch.column("d")
    assert d[:6] == pytest.approx([-0.15, -0.03, -0.02, 0.0, 0.02, 0.03], rel=1e-12, abs=0.0)
    assert np.sum(np.abs(d + 0.03) < 1e-12) == 1 and np.sum(np.abs(d - 0.03) < 1e-12) == 1
    (critical,) = branch.special("crossing")
    assert branch.points[critical.index] == pytest.approx([0.5, 0.0, 0.5], abs=0.0)
    others = np.delete(branch.points, critical.index, axis=0)
    assert others[:, 2] == pytest.approx((1.0 - others[:, 1] - others[:, 1] ** 2) / 2.0, abs=1e-8)


def test_a_small_loop_that_goes_only_twice_near_away_between_its_meetings_passes_both():
    # The circle d^2 + p^2 = r^2 with r = 0.2: between its meetings with d = 0 the branch goes out to
    # |d| = 0.2 only, beyond the 1.5 near (0.15) that re-arms the passage, and no farther.
    r = 0.2

    def residual_small(u, p):
        a, d = u
        return np.array([d * (a - p[0]), d * (d * d + p[0] ** 2 - r * r)])

    def jacobian_small(u, p):
        a, d = u
        return np.array([[d, a - p[0]], [0.0, 3.0 * d * d + p[0] ** 2 - r * r]])

    small = CallableSystem(residual_small, ["a", "d"], {"p": 0.0}, jacobian=jacobian_small,
                           parameter_jacobian=lambda u, p: np.array([[-u[1]], [2.0 * u[1] * p[0]]]))

    def land(before, after):
        side = math.copysign(r, before[2])
        return Landing(np.array([side, 0.0, side]), located_to=0.0)

    crossing = Crossing(["d"], kind="critical", name="critical point", land=land)
    p0 = -0.12
    branch = trace(small, start=[p0, -math.sqrt(r * r - p0 * p0)], parameters={"p": p0}, free="p",
                   crossing=crossing, max_step=0.05, max_points=400)
    assert branch.status.label == "closed_loop", branch.message
    assert sorted(sp.values["p"] for sp in branch.special("critical")) == [-r, r]
    others = np.delete(branch.points, [sp.index for sp in branch.special("critical")], axis=0)
    assert np.allclose(others[:, 1] ** 2 + others[:, 2] ** 2, r * r, rtol=0, atol=1e-9)


# Two coordinates that vanish on the second family: e = d / 2 along the branch (F3 = e - d / 2 holds
# everywhere, so d = e = 0, any a and p, is the second family). The passage must run along the one
# that reaches near last, d, whatever the order the coordinates are given in.
def pair_residual(u, p):
    a, d, e = u
    return np.array([d * (a - p[0] - d), d * (a + p[0] - 1.0 + d * d), e - 0.5 * d])


PAIR = CallableSystem(pair_residual, ["a", "d", "e"], {"p": 0.0})


def pair_land(before, after):
    return Landing(np.array([0.5, 0.0, 0.0, 0.5]), located_to=0.0)


@pytest.mark.parametrize("d0, direction, near", [(-0.8, 1, 0.1), (-0.05, -1, 0.1), (-0.15, -1, 0.03)])
def test_of_two_crossing_coordinates_the_passage_runs_along_the_one_that_enters_last(d0, direction, near):
    u, p = on_branch(d0)
    crossing = Crossing(["e", "d"], near=near, kind="critical", name="critical point", land=pair_land)
    # from d = -0.15 one step of 0.3 lands at d = +0.097: over the whole region |d|, |e| <= 0.03
    step = dict(step=0.3, max_step=1.0) if d0 == -0.15 else {}
    branch = trace(PAIR, start=[u[0], u[1], 0.5 * u[1]], parameters={"p": p}, free="p", crossing=crossing,
                   direction=direction, bounds={"d": [-0.9, 0.9]}, **step)
    assert branch.status.label == "bound_reached", branch.message
    (critical,) = branch.special("critical")
    assert critical.info["coordinate"] == "d"
    d, e = branch.column("d"), branch.column("e")
    assert d[critical.index - 1] == pytest.approx(-0.02, rel=1e-12) and d[critical.index + 1] == pytest.approx(0.02, rel=1e-12)
    # the passage began where d (not e, which is there already) reached near
    if d0 != -0.05:
        assert np.sum(np.abs(d + near) < 1e-12) == 1 and np.sum(np.abs(e + near) < 1e-12) == 0
    others = np.delete(np.arange(len(d)), critical.index)
    assert e[others] == pytest.approx(0.5 * d[others], abs=1e-12)


def test_what_the_jump_crosses_is_reported_at_the_singular_point_in_kind_order_with_a_note_each():
    # From d = -0.8 the branch rises in p to 0.625 at d = -0.5 (the fold), then falls through
    # p = 1/2 and a = p + d = 1/2 only at the singular point d = 0 (exact: p = (1 - d - d^2)/2,
    # a = (1 + d - d^2)/2). So the bound p >= 0.5, the event a - 1/2 and the terminal event p - 1/2
    # all change sign inside the jump: each is reported on the singular point's row, what only
    # reports first, then the bound (which gives the status), then the terminal event; none is
    # reported where it is not zero (e.g. at the passage's entry, after a step over the whole region).
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    a_half = contin.Event("a half", lambda u, p: u[0] - 0.5)
    p_half = contin.Event("p half", lambda u, p: p[0] - 0.5, terminal=True)
    for max_step in (0.05, 0.3):
        branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, max_step=max_step,
                       bounds={"d": [-0.9, 0.9], "p": [0.5, 1.0]}, events=[p_half, a_half], **start())
        assert branch.message == "completed: the branch reached a bound p = 0.5 at a = 0.5, d = 0, p = 0.5"
        (critical,) = branch.special("critical")
        assert critical.index == len(branch.points) - 1
        after = [(sp.kind, sp.name) for sp in branch.special_points if sp.index == critical.index]
        assert after == [("critical", "critical point"), ("event", "a half"), ("bound", "p = 0.5"), ("event", "p half")]
        assert [sp.kind for sp in branch.special_points if sp.index != critical.index] == ["fold"]
        jump = branch.special("bound")[0].located_to
        assert 0.02 < jump < 0.06  # the jump from d = +-gap: a chord of about 2 gap sqrt(1 + (da/dd)^2 + ...)
        assert branch.stats["notes"] == [
            f"the event 'a half' lies within 0.02 in d of the critical point: reported there, located to {jump:.3g}",
            f"the bound p = 0.5 lies within 0.02 in d of the critical point: reported there, located to {jump:.3g}",
            f"the terminal event 'p half' lies within 0.02 in d of the critical point: reported there, located to {jump:.3g}"]


def test_a_requested_value_inside_the_jump_is_reported_at_the_singular_point():
    # p = 1/2 only at d = 0 (exact, above), p = 0.55 at d = (-1 + sqrt(0.6)) / 2 on the near side.
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]},
                   at={"p": [0.5, 0.55]}, **start())
    (critical,) = branch.special("critical")
    assert [(sp.name, sp.index) for sp in branch.at] == [("p = 0.55", branch.at[0].index), ("p = 0.5", critical.index)]
    assert branch.at[0].values["d"] == pytest.approx((-1.0 + math.sqrt(0.6)) / 2.0, abs=1e-9)
    assert branch.points[branch.at[0].index][2] == 0.55
    assert branch.at[1].values == {"a": 0.5, "d": 0.0, "p": 0.5} and branch.at[1].kind == "at"
    assert branch.stats["notes"] == [
        f"the requested value p = 0.5 lies within 0.02 in d of the critical point: reported there, located to "
        f"{branch.at[1].located_to:.3g}"]


def test_a_terminal_event_inside_the_jump_stops_the_trace_at_the_singular_point():
    # p - 1/2 vanishes on this branch only at the singular point (exact, above): the trace stops there.
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    p_half = contin.Event("p half", lambda u, p: p[0] - 0.5, terminal=True)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, events=[p_half], **start())
    assert branch.message == "completed: stopped by a terminal event 'p half' at a = 0.5, d = 0, p = 0.5"
    assert [(sp.kind, sp.index) for sp in branch.special_points][1:] == [("critical", len(branch.points) - 1),
                                                                           ("event", len(branch.points) - 1)]


def test_every_row_of_a_passage_is_told_to_the_caller_once_in_order():
    # on_point hears of each accepted point as it is made: the entry, the passage steps, the singular
    # point, the point after the jump and the rest, each once, with the special points found so far.
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    heard = []
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, at={"p": [0.5]},
                   on_point=lambda index, x, special: heard.append((index, x.tolist(), [sp.kind for sp in special])),
                   **start())
    told = [index for index, _, _ in heard]
    assert told == sorted(set(told)) and told[0] == 0  # the start too, each once, in order
    assert all(x == branch.points[index].tolist() for index, x, _ in heard)
    # only the rows of points located inside an ordinary step (here the fold and the bound that ends
    # the trace) are not accepted points
    assert set(range(len(branch.points))) - set(told) == {sp.index for sp in branch.special_points
                                                           if sp.kind in ("fold", "bound")}
    (critical,) = branch.special("critical")
    assert heard[critical.index][2] == ["fold", "critical"]


def test_a_requested_value_on_the_far_end_of_the_jump_is_that_row():
    # The jump lands on d = +gap exactly (the passage fixes d), so d = gap is the row after the
    # singular point, not a point located inside the jump; d = -gap is the row before it.
    crossing = Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]},
                   at={"d": [-0.02, 0.02]}, **start())
    (critical,) = branch.special("critical")
    assert critical.info["gap"] == 0.02
    assert [(sp.name, sp.index, sp.located_to) for sp in branch.at] == [
        ("d = -0.02", critical.index - 1, 0.0), ("d = 0.02", critical.index + 1, 0.0)]
    assert [branch.points[sp.index][1] for sp in branch.at] == [-0.02, 0.02]
    assert [sp.kind for sp in branch.at] == ["at", "at"]
    assert not [note for note in branch.stats.get("notes", ()) if "requested value" in note]
