"""The trace's limits, counts and reach, each at a setting where a different value shows.

Every system here is exact (its branch is given in the comment), so each figure asserted follows
from the documented rule and nothing else.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from test_crossing import PAIR, SYSTEM, exact_land, on_branch, pair_land, start
from test_mutation_engine import helix

import contin


def tenth_power():
    # u^10 = p at p = 1e-30: Newton from u = 1 divides u by 10/9 each iteration (a root of
    # multiplicity ten), so it is still converging, slowly, when the iterations run out.
    return contin.CallableSystem(lambda u, p: [u[0] ** 10 - p[0]], ["u"], {"p": 1e-30},
                                 jacobian=lambda u, p: [[10.0 * u[0] ** 9]], parameter_jacobian=lambda u, p: [[-1.0]])


@pytest.mark.parametrize("max_iterations", [4, 5])
def test_the_start_gets_four_times_the_iterations_of_a_step(max_iterations):
    branch = contin.trace(tenth_power(), {"u": 1.0}, free="p", max_iterations=max_iterations, max_points=3)
    spent = 4 * max_iterations
    assert branch.status.label == "start_not_converged"
    assert branch.points[0, 0] == pytest.approx(0.9**spent, rel=1e-12)
    # A residual still falling fast is not called a stall, however small it has become (7e-10 after
    # twenty iterations): the advice is a better guess, not a looser tolerance.
    assert branch.message == (
        f"stopped: Newton did not converge at the start point: largest residual {0.9 ** (10 * spent):.3g} "
        f"after {spent} iterations (no convergence (in {spent} Newton iterations)); give a better start guess")


def test_a_loop_closes_within_the_newton_tolerances_reach_which_grows_with_the_coordinates():
    # The helix of pitch 1e-3 misses its start by 2 pi 1e-3 = 6.3e-3 after one turn: more than the
    # steps' sagitta allows (0.25 L theta = 6e-4 for steps of 0.05) and, at coordinates of size 1,
    # more than the tolerance's reach 1e3 tol (1 + max |x|) = 2e-7: no loop (the bound ends it).
    # Shifted to x = 1e5 + cos s the same miss is within the reach (1e-2): the trace counts the turn
    # as a loop, because at that size the start is known only to that relative accuracy.
    pitch = 1e-3
    shift = 1e5

    def shifted(u, p):
        s = p[0] / pitch
        return [u[0] - shift - math.cos(s), u[1] - math.sin(s)]

    system = contin.CallableSystem(shifted, ["x", "y"], {"w": 0.0}, jacobian=lambda u, p: np.eye(2),
                                   parameter_jacobian=helix(pitch).parameter_jacobian)
    bounds = {"w": (-1.0, 1.5 * 2 * math.pi * pitch)}
    far = contin.trace(system, {"x": shift + 1.0, "y": 0.0}, free="w", step=0.05, max_step=0.05, bounds=bounds)
    near = contin.trace(helix(pitch), {"x": 1.0, "y": 0.0}, free="w", step=0.05, max_step=0.05, bounds=bounds)
    assert far.status.label == "closed_loop" and near.status.label == "bound_reached"
    (closing,) = far.special("closed_loop")
    assert closing.located_to == pytest.approx(2 * math.pi * pitch, rel=0.02)  # the miss, measured
    assert far.column("w")[-1] == 0.0  # ended on the start itself
    assert far.column("w")[-2] == pytest.approx(2 * math.pi * pitch, abs=0.05 * pitch)


def test_a_requested_value_crossed_at_a_shallow_but_clear_slope_is_landed_on_by_the_step():
    # The line u1 = u2 = 60 p: the unit tangent is (60, 60, 1) / 84.86, so p moves at 0.0118 of the
    # arclength, above the 0.01 of the largest entry (0.707) below which a value is located after
    # the step. The step aims at p = 0.012 and lands there; the next step starts from it.
    system = contin.CallableSystem(lambda u, p: [u[0] - 60.0 * p[0], u[1] - 60.0 * p[0]], ["u1", "u2"], {"p": 0.0})
    h = 0.5
    branch = contin.trace(system, {"u1": 0.0, "u2": 0.0}, free="p", step=h, max_step=h,
                          at={"p": [0.012]}, bounds={"p": (-1.0, 0.03)})
    (point,) = branch.at
    p = branch.column("p")
    assert p[point.index] == 0.012
    rate = 1.0 / math.sqrt(7201.0)
    assert p[point.index + 1] - p[point.index] == pytest.approx(h * rate, rel=1e-9)  # a whole step after it
    assert p[point.index] - p[point.index - 1] < h * rate  # the step before was shortened to land on it


def s_curve_as_an_ode():
    # du/dt = -(u^3 - u + p): two folds of p (at u = +-1/sqrt 3), where one real eigenvalue of
    # dF/du = 1 - 3u^2 crosses zero; no Hopf point.
    return contin.CallableSystem(lambda u, p: [-(u[0] ** 3 - u[0] + p[0])], ["u"], {"p": -1.0}, kind="ode")


def test_looking_for_hopf_points_alone_counts_the_folds_eigenvalue_without_subdividing():
    # Each fold of p changes the count of unstable eigenvalues by one. That is a located crossing
    # whether or not folds are reported: no step is subdivided for it and no note is written.
    hopf_only = contin.trace(s_curve_as_an_ode(), {"u": 1.3247}, free="p", step=0.05, bounds={"u": (-2, 2)},
                             detect=["hopf"])
    with_folds = contin.trace(s_curve_as_an_ode(), {"u": 1.3247}, free="p", step=0.05, bounds={"u": (-2, 2)},
                              detect=["fold", "hopf"])
    assert [sp.kind for sp in hopf_only.special_points] == ["bound"]
    assert [sp.kind for sp in with_folds.special_points] == ["fold", "fold", "bound"]
    for branch in (hopf_only, with_folds):
        assert "notes" not in branch.stats
        assert "special point not located" not in branch.stats["rejections"]
    # the points of a trace that looks for nothing: the count's check changed no step
    plain = contin.trace(s_curve_as_an_ode(), {"u": 1.3247}, free="p", step=0.05, bounds={"u": (-2, 2)}, detect=[])
    assert np.array_equal(hopf_only.points, plain.points)


def transcritical(shifts):
    # du_k/dt = u_k (p - s_k - u_k), one unknown per shift s_k: on the branch u = 0 the eigenvalues
    # are p - s_k, each through zero at p = s_k (a branch point: u_k = p - s_k crosses there).
    names = [f"u{k}" for k in range(len(shifts))]
    return contin.CallableSystem(lambda u, p: [u[k] * (p[0] - s - u[k]) for k, s in enumerate(shifts)], names,
                                 {"p": -1.0}, kind="ode"), dict.fromkeys(names, 0.0)


def test_a_branch_point_not_looked_for_explains_an_odd_change_of_the_count():
    # One real eigenvalue through zero changes the count of unstable eigenvalues by one: with Hopf
    # points alone looked for, that is a branch point not asked about, not a hidden Hopf pair.
    system, start_point = transcritical([0.0])
    hopf_only = contin.trace(system, start_point, free="p", step=0.1, bounds={"p": (-1, 1)}, detect=["hopf"])
    plain = contin.trace(system, start_point, free="p", step=0.1, bounds={"p": (-1, 1)}, detect=[])
    assert np.array_equal(hopf_only.points, plain.points) and hopf_only.stats["rejections"] == {}
    assert "notes" not in hopf_only.stats


def test_two_real_eigenvalues_through_zero_in_one_step_are_taken_apart_as_a_hidden_hopf_pair_would_be():
    # Eigenvalues p and p - 0.01 both cross zero in one step of 0.1: a change of two, which is what a
    # Hopf pair missed by its test would give. The step is subdivided until each piece changes the
    # count by what it explains; in between the two the Hopf test's neutral saddle is noted.
    system, start_point = transcritical([0.0, 0.01])
    branch = contin.trace(system, start_point, free="p", step=0.1, bounds={"p": (-1, 1)}, detect=["hopf"])
    assert branch.status.label == "bound_reached" and [sp.kind for sp in branch.special_points] == ["bound"]
    assert branch.stats["rejections"]["special point not located"] >= 1
    (note,) = branch.stats["notes"]
    assert note.startswith("neutral saddle (real eigenvalues -0.005 and 0.005) at ")
    steps_over_both = [k for k in range(1, len(branch.points))
                       if branch.points[k - 1, 2] < 0.0 and branch.points[k, 2] > 0.01]
    assert steps_over_both == []


def test_a_forced_step_that_cannot_explain_the_count_says_so_in_a_note():
    # The same two eigenvalues with steps of exactly 0.1 from p = -0.95: the step from p = -0.05 to
    # 0.05 passes both zeros and cannot be shortened, so the count's change of two stands unexplained.
    system, start_point = transcritical([0.0, 0.01])
    branch = contin.trace(system, start_point, parameters={"p": -0.95}, free="p", step=0.1, min_step=0.1,
                          max_step=0.1, bounds={"p": (-1, 1)}, detect=["hopf"])
    assert branch.status.label == "bound_reached" and branch.stats["rejections"] == {}
    assert branch.stats["notes"][-1] == (
        "the number of eigenvalues with positive real part changed from 0 to 2 between u0 = 0, u1 = 0, p = -0.05 "
        "and u0 = 0, u1 = 0, p = 0.05, more than the 0 crossing(s) located there")


def test_a_fold_and_a_branch_point_in_one_forced_step_explain_a_change_of_two():
    # du/dt = -(u^3 - u + p), dv/dt = v (c - p - v) on v = 0. With steps of exactly 0.1 from p = -1
    # the step over the first fold (u = 1/sqrt 3) goes from p = 0.38070 down to 0.37964, so with
    # c = 0.3802 between them both eigenvalues (1 - 3u^2 and c - p) become positive in that one
    # step. The fold of p is one, the branch point of v (not looked for) the other: no note, though
    # a forced step writes one for a change it cannot explain.
    c = 0.3802
    system = contin.CallableSystem(lambda u, p: [-(u[0] ** 3 - u[0] + p[0]), u[1] * (c - p[0] - u[1])], ["u", "v"],
                                   {"p": -1.0}, kind="ode")
    branch = contin.trace(system, {"u": 1.3247, "v": 0.0}, free="p", step=0.1, min_step=0.1, max_step=0.1,
                          bounds={"u": (-2, 2)}, detect=["hopf"])
    p = branch.column("p")
    over = [k for k in range(1, len(p)) if (branch.points[k - 1, 0] - 3**-0.5) * (branch.points[k, 0] - 3**-0.5) < 0]
    assert over and p[over[0]] < c < p[over[0] - 1]
    assert branch.status.label == "bound_reached"
    assert [note for note in branch.stats["notes"] if "number of eigenvalues" in note] == []


def test_a_bound_on_the_far_end_of_a_jump_is_reported_on_that_row():
    # The jump across the singular point lands on d = +0.02 exactly (the passage fixes d), so a bound
    # d <= 0.02 is reached on the row after the singular point, located exactly, with no note.
    crossing = contin.Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = contin.trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.02]}, **start())
    (critical,) = branch.special("critical")
    (bound,) = branch.special("bound")
    assert (bound.name, bound.index, bound.located_to) == ("d = 0.02", critical.index + 1, 0.0)
    assert bound.index == len(branch.points) - 1 and branch.points[-1, 1] == 0.02
    assert "notes" not in branch.stats


def test_a_large_max_correction_lets_the_corrector_move_up_to_twice_the_step():
    # The unit circle x^2 + p^2 = 1 in steps of exactly 0.85 (max_turn 3): from (1, 0) the predictor
    # (1, 0.85) is corrected to x = sqrt(1 - 0.85^2) = 0.527, 0.556 of the step away. The default
    # max_correction (0.5) refuses that; 1.5 allows it, and Newton's own guard lets an iterate go up to
    # twice the step from the predictor, so every step is taken and the loop closes.
    circle = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 - 1.0], ["x"], {"p": 0.0},
                                   jacobian=lambda u, p: [[2 * u[0]]], parameter_jacobian=lambda u, p: [[2 * p[0]]])
    fixed = {"step": 0.85, "min_step": 0.85, "max_step": 0.85, "max_turn": 3.0, "max_points": 12}
    allowed = contin.trace(circle, {"x": 1.0}, free="p", max_correction=1.5, **fixed)
    assert allowed.status.label == "closed_loop" and allowed.stats["rejections"] == {}
    assert allowed.points[1] == pytest.approx([math.sqrt(1 - 0.85**2), 0.85], abs=1e-10)
    refused = contin.trace(circle, {"x": 1.0}, free="p", **fixed)
    assert refused.status.label == "step_too_small"
    assert refused.message.endswith("corrector moved too far from the predictor (more than max_correction = 0.5 of the step)")


def test_of_two_crossing_coordinates_entering_in_one_step_the_passage_begins_at_the_later():
    # The pair system (e = d / 2, both zero on the second family) from d = -0.3 with one step of 0.34:
    # e enters |e| <= 0.1 at d = -0.2 and d enters |d| <= 0.1 at d = -0.1, both inside that step. The
    # passage begins at the later entry along the branch, d's: a row on d = -0.1, none on e = -0.1.
    u, p = on_branch(-0.3)
    crossing = contin.Crossing(["e", "d"], near=0.1, kind="critical", name="critical point", land=pair_land)
    branch = contin.trace(PAIR, start=[u[0], u[1], 0.5 * u[1]], parameters={"p": p}, free="p", crossing=crossing,
                          direction=-1, bounds={"d": [-0.9, 0.9]}, step=0.34, max_step=0.34)
    (critical,) = branch.special("critical")
    assert critical.info["coordinate"] == "d"
    assert branch.points[1, 1] == pytest.approx(-0.1, abs=1e-12)  # the entry is the first row after the start
    assert np.sum(np.abs(branch.column("e") + 0.1) < 1e-12) == 0


def test_requested_values_on_the_far_end_of_a_jump_are_kept_whatever_other_coordinates_are_requested():
    # d = 0.02 is the row after the jump; a requested value of p elsewhere on the branch changes nothing.
    crossing = contin.Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = contin.trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]},
                          at={"d": [0.02], "p": [0.3]}, **start())
    (critical,) = branch.special("critical")
    names = [(sp.name, sp.index) for sp in branch.at]
    assert ("d = 0.02", critical.index + 1) in names and sum(name == "p = 0.3" for name, _ in names) == 1


def test_the_singular_point_of_a_passage_took_no_newton_iterations_of_the_engine():
    # The row of the singular point comes from the crossing's land function (or the midpoint): the
    # engine's corrector did not run there, and the row and its special point both say 0.
    crossing = contin.Crossing(["d"], kind="critical", name="critical point", land=exact_land)
    branch = contin.trace(SYSTEM, free="p", crossing=crossing, direction=1, bounds={"d": [-0.9, 0.9]}, **start())
    (critical,) = branch.special("critical")
    assert critical.newton_iterations == 0 and branch.newton_iterations[critical.index] == 0
    assert branch.newton_iterations[critical.index + 1] >= 1  # the point after the jump was corrected
