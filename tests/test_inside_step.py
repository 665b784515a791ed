"""What happens between the two ends of one step: levels crossed twice, tight turns, loops, starts on bounds.

Every curve here has a known answer (exact folds, levels of a parabola or a polynomial graph, the
Brusselator's Hopf points B = 1 + A^2 with angular frequency A: Lefever & Nicolis, J. Theor. Biol. 30,
1971), so each assertion compares with it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import contin
from contin import CallableSystem, Event, trace


def graph(coefficients):
    """p = f(x) for a polynomial f, traced as the residual p - f(x) with x the unknown."""
    f = np.polynomial.Polynomial(coefficients)
    slope = f.deriv()
    return CallableSystem(lambda u, p: np.array([p[0] - f(u[0])]), ["x"], {"p": float(f(0.0))},
                          jacobian=lambda u, p: np.array([[-slope(u[0])]])), f


def parabola(top: float = 1.01):
    """p = top - x^2 / 100: one fold at x = 0, p = top."""
    return graph([top, 0.0, -0.01])[0]


# -- finding: a level crossed twice inside one step ------------------------------------------------
@pytest.mark.parametrize("max_step", [10.0, 25.0, 3.0])
def test_bound_crossed_twice_inside_one_step_stops_at_the_first_crossing(max_step):
    branch = trace(parabola(), [-20.0], free="p", parameters={"p": 1.01 - 4.0}, bounds={"p": [-3.0, 1.0]},
                   max_step=max_step)
    assert branch.status.label == "bound_reached"
    assert branch.column("p").max() <= 1.0 + 1e-12  # no returned point beyond the bound
    bound = branch.special("bound")[0]
    assert bound.values["p"] == pytest.approx(1.0, abs=1e-12)
    assert bound.values["x"] == pytest.approx(-1.0, abs=1e-7)  # the first crossing, x = -sqrt(1)
    assert bound.index == len(branch) - 1
    assert not branch.special("fold")  # the fold at p = 1.01 lies beyond the bound


@pytest.mark.parametrize("top, level", [(1.01, 1.0), (2.0, 1.5), (0.3, 0.29)])
def test_terminal_event_crossed_twice_inside_one_step_fires_at_the_first_crossing(top, level):
    event = Event("level", lambda u, p: p[0] - level, terminal=True)
    start = -math.sqrt(100.0 * (top + 3.0))
    branch = trace(parabola(top), [start], free="p", parameters={"p": -3.0}, events=[event], max_step=10.0)
    assert branch.status.label == "terminal_event"
    fired = branch.special("event")[0]
    assert fired.values["p"] == pytest.approx(level, abs=1e-9)
    assert fired.values["x"] == pytest.approx(-math.sqrt(100.0 * (top - level)), abs=1e-6)
    assert branch.column("p").max() <= level + 1e-9


def test_requested_value_crossed_twice_inside_one_step_is_returned_twice():
    branch = trace(parabola(), [-20.0], free="p", parameters={"p": 1.01 - 4.0}, at={"p": [1.0]},
                   bounds={"x": [-25.0, 25.0]}, max_step=10.0)
    rows = sorted(sp.values["x"] for sp in branch.at)
    assert len(rows) == 2
    assert rows == pytest.approx([-1.0, 1.0], abs=1e-7)
    assert [sp.values["p"] for sp in branch.at] == pytest.approx([1.0, 1.0], abs=1e-12)
    assert len(branch.special("fold")) == 1


def test_event_with_an_extremum_inside_a_step_is_found_on_both_sides():
    # g = x^2 - 1 along a straight branch x = p: g dips below zero between x = -1 and 1, and one long
    # step from x = -3 to 3 sees g = 8 at both ends.
    line = CallableSystem(lambda u, p: np.array([u[0] - p[0]]), ["x"], {"p": -3.0},
                          jacobian=lambda u, p: np.array([[1.0]]))
    event = Event("unit circle", lambda u, p: u[0] ** 2 - 1.0)
    branch = trace(line, [-3.0], free="p", events=[event], bounds={"p": [-3.0, 3.0]}, step=6.0, max_step=6.0)
    crossings = sorted(sp.values["x"] for sp in branch.special("event"))
    assert crossings == pytest.approx([-1.0, 1.0], abs=1e-9)


# -- finding: a coexistence curve written as a problem file, bounded just below the critical point -
VAN_DER_WAALS = """
kind = "algebraic"
[unknowns]
vl = 0.6034019
vv = 2.3488424
P = 0.6469984
[parameters]
T = 0.9
[equations]
liquid = "8*T/(3*vl - 1) - 3/vl**2 - P"
vapour = "8*T/(3*vv - 1) - 3/vv**2 - P"
area = "((8*T/3)*log((3*vv - 1)/(3*vl - 1)) + 3/vv - 3/vl)/(vv - vl) - P"
[trace]
free = "T"
bounds = { T = [0.9, BOUND] }
at = { T = [0.95, 0.99] }
"""


@pytest.mark.parametrize("bound", [0.9995, 0.999, 0.9999])
def test_reduced_van_der_waals_coexistence_stops_on_its_bound_below_the_critical_point(tmp_path, bound):
    path = tmp_path / "coexistence.toml"
    path.write_text(VAN_DER_WAALS.replace("BOUND", repr(bound)))
    branch = contin.run_problem(contin.load_problem(path))
    assert branch.status.label == "bound_reached"
    assert branch.column("T").max() <= bound + 1e-12
    vl, vv = branch.column("vl"), branch.column("vv")
    assert np.all(vl < vv)  # never the mirror branch (phases swapped) nor the equal-phases set
    end = branch.special("bound")[0].values
    # Mean-field limit near the critical point: (rho_l - rho_v)/rho_c -> 4 (1 - Tr)^(1/2) (textbook).
    assert 1.0 / end["vl"] - 1.0 / end["vv"] == pytest.approx(4.0 * math.sqrt(1.0 - bound), rel=0.02)
    assert not branch.special("branch_point") and not branch.special("fold")
    # Reduced van der Waals coexistence by Maxwell's construction (reproduced at 30 digits):
    # Tr = 0.95: Pr = 0.8118792, vl = 0.6841221, vv = 1.7270712; Tr = 0.99: 0.9604791, 0.8309141, 1.2429533.
    rows = {round(sp.values["T"], 6): sp.values for sp in branch.at}
    assert sorted(rows) == [0.95, 0.99]
    assert (rows[0.95]["P"], rows[0.95]["vl"], rows[0.95]["vv"]) == pytest.approx((0.8118792, 0.6841221, 1.7270712), abs=2e-7)
    assert (rows[0.99]["P"], rows[0.99]["vl"], rows[0.99]["vv"]) == pytest.approx((0.9604791, 0.8309141, 1.2429533), abs=2e-7)


# -- finding: two Hopf points inside one step -----------------------------------------------------
def brusselators(constants):
    """Uncoupled Brusselators x' = A - (B + 1) x + x^2 y, y' = B x - x^2 y, one per A; Hopf at B = 1 + A^2."""

    def residual(u, p):
        B = p[0]
        out = []
        for k, A in enumerate(constants):
            x, y = u[2 * k], u[2 * k + 1]
            out += [A - (B + 1.0) * x + x * x * y, B * x - x * x * y]
        return np.array(out)

    def jacobian(u, p):
        B = p[0]
        J = np.zeros((2 * len(constants), 2 * len(constants)))
        for k in range(len(constants)):
            x, y = u[2 * k], u[2 * k + 1]
            J[2 * k:2 * k + 2, 2 * k:2 * k + 2] = [[-(B + 1.0) + 2.0 * x * y, x * x], [B - 2.0 * x * y, -x * x]]
        return J

    unknowns = [f"{name}{k}" for k in range(len(constants)) for name in ("x", "y")]
    start = [v for A in constants for v in (A, 1.0 / A)]  # the equilibrium (A, B/A) at B = 1
    return CallableSystem(residual, unknowns, {"B": 1.0}, jacobian=jacobian, start=start, kind="ode")


@pytest.mark.parametrize("constants", [(1.0, 1.05), (1.0, 1.02, 1.04), (0.8, 0.81)])
@pytest.mark.parametrize("max_step", [0.5, 2.0])
def test_hopf_points_close_together_are_each_found(constants, max_step):
    branch = trace(brusselators(constants), free="B", bounds={"B": [1.0, 3.0]}, max_step=max_step)
    hopf = branch.special("hopf")
    assert [sp.values["B"] for sp in hopf] == pytest.approx(sorted(1.0 + A * A for A in constants), abs=1e-8)
    assert sorted(sp.info["angular_frequency"] for sp in hopf) == pytest.approx(sorted(constants), abs=1e-7)


# -- finding: closed loops ------------------------------------------------------------------------
def ellipse(a: float, b: float):
    return CallableSystem(lambda u, p: np.array([(u[0] / a) ** 2 + (p[0] / b) ** 2 - 1.0]), ["x"], {"p": 0.0},
                          jacobian=lambda u, p: np.array([[2.0 * u[0] / a**2]]))


@pytest.mark.parametrize("max_step", [0.5, 2.0, 5.0, 20.0])
@pytest.mark.parametrize("a, b", [(100.0, 1.0), (1.0, 30.0)])
def test_a_closed_loop_is_seen_on_its_first_return_from_a_tight_start(max_step, a, b):
    # Start at the end of the long axis (x = a, p = 0), where the ellipse is most curved if a >> b.
    branch = trace(ellipse(a, b), [a], free="p", tangent=[0.0, 1.0], max_step=max_step, max_points=20000)
    assert branch.status.label == "closed_loop"
    folds = branch.special("fold")
    assert sorted(sp.values["p"] for sp in folds) == pytest.approx([-b, b], abs=1e-8)  # each fold once
    assert branch.points[-1] == pytest.approx(branch.points[0])


def test_a_wiggling_curve_that_comes_near_its_start_is_not_a_closed_loop():
    wiggle = CallableSystem(lambda u, p: np.array([u[0] - math.sin(1000.0 * p[0])]), ["u"], {"p": 0.0},
                            jacobian=lambda u, p: np.array([[1.0]]))
    branch = trace(wiggle, [0.0], free="p", bounds={"p": [0.0, 100.0]}, max_points=300)
    assert branch.status.label == "max_points"
    assert not branch.special("closed_loop")
    assert branch.column("p")[-1] > 0.01  # it went on along the curve


# -- finding: a start exactly on a bound, heading out ----------------------------------------------
def test_a_start_on_a_bound_heading_out_stops_at_once():
    line = CallableSystem(lambda u, p: np.array([u[0] - p[0]]), ["u"], {"p": 0.0}, jacobian=lambda u, p: np.array([[1.0]]))
    branch = trace(line, [0.0], free="p", direction=-1, bounds={"p": [0.0, 1.0]})
    assert branch.status.label == "bound_reached"
    assert len(branch) == 1
    assert branch.special("bound")[0].index == 0
    assert branch.column("p").min() >= 0.0
    inward = trace(line, [0.0], free="p", direction=1, bounds={"p": [0.0, 1.0]})
    assert inward.status.label == "bound_reached" and inward.column("p")[-1] == pytest.approx(1.0)


def test_a_restart_from_a_final_bound_point_heading_out_stops_at_once():
    line = CallableSystem(lambda u, p: np.array([u[0] - 2.0 * p[0]]), ["u"], {"p": 0.0},
                          jacobian=lambda u, p: np.array([[1.0]]))
    first = trace(line, [0.0], free="p", bounds={"p": [0.0, 1.0]})
    again = contin.restart(first, len(first) - 1, line, free="p", bounds={"p": [0.0, 1.0]})
    assert again.status.label == "bound_reached"
    assert again.column("p").max() <= 1.0


# -- property: whatever the step limits, the inside of every step is examined ------------------------
@st.composite
def cubic_curves(draw):
    """p = c1 x + c2 x^2 + c3 x^3 with its two folds at chosen x in [-2, 2]."""
    roots = sorted(draw(st.lists(st.floats(-2.0, 2.0), min_size=2, max_size=2, unique=True)))
    if roots[1] - roots[0] < 0.3:
        roots[1] = roots[0] + 0.3
    scale = draw(st.sampled_from([0.3, 1.0]))
    # f'(x) = 3 scale (x - r0)(x - r1): f(x) = scale (x^3 - 1.5 (r0 + r1) x^2 + 3 r0 r1 x)
    coefficients = [0.0, 3.0 * scale * roots[0] * roots[1], -1.5 * scale * (roots[0] + roots[1]), scale]
    return coefficients, roots


@settings(max_examples=25, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow],
          phases=[Phase.explicit, Phase.generate])
@given(curve=cubic_curves(), max_step=st.sampled_from([0.5, 2.0, 8.0]), fractions=st.lists(
    st.floats(0.02, 0.98), min_size=3, max_size=3))
def test_levels_bounds_and_events_are_found_whatever_the_step(curve, max_step, fractions):
    coefficients, roots = curve
    system, f = graph(coefficients)
    low_x, high_x = -2.5, 2.5
    fold_p = sorted(float(f(r)) for r in roots)
    span = (min(f(low_x), fold_p[0]), max(f(high_x), fold_p[1]))
    levels = [span[0] + q * (span[1] - span[0]) for q in fractions]
    requested, event_level, _ = levels
    event = Event("level", lambda u, p: p[0] - event_level)

    def run(step_limit):
        return trace(system, [low_x], free="p", parameters={"p": float(f(low_x))}, bounds={"x": [low_x, high_x]},
                     at={"p": [requested]}, events=[event], max_step=step_limit, step=min(0.01, step_limit),
                     max_points=20000)

    branch = run(max_step)
    assert branch.status.label == "bound_reached"
    x = branch.column("x")
    assert np.all((x >= low_x - 1e-12) & (x <= high_x + 1e-12))
    # Every crossing of the requested level and of the event level, once each (the real roots of
    # f(x) = level in the traced x range).
    for level, found in ((requested, [sp.values["x"] for sp in branch.at]),
                         (event_level, [sp.values["x"] for sp in branch.special("event")])):
        exact = sorted(r.real for r in (f - level).roots() if abs(r.imag) < 1e-9 and low_x < r.real < high_x)
        assert sorted(found) == pytest.approx(exact, abs=1e-6)
    folds = sorted(sp.values["x"] for sp in branch.special("fold"))
    assert folds == pytest.approx(sorted(roots), abs=1e-6)
    fine = run(max_step / 10.0)
    assert [sp.kind for sp in fine.special_points] == [sp.kind for sp in branch.special_points]
    for a, b in zip(fine.special_points, branch.special_points, strict=True):
        assert a.point == pytest.approx(b.point, abs=1e-6)


def test_a_start_moved_far_to_reach_the_curve_is_noted():
    square = CallableSystem(lambda u, p: np.array([u[0] - p[0] ** 2]), ["u"], {"p": 1.0},
                            jacobian=lambda u, p: np.array([[1.0]]))
    moved = trace(square, [3.0], free="p", bounds={"p": [0.0, 2.0]})
    assert moved.points[0] == pytest.approx([1.0, 1.0])
    assert moved.stats["notes"] == ["the start was moved by 2 to reach the curve, to u = 1, p = 1"]
    near = trace(square, [1.0 + 1e-6], free="p", bounds={"p": [0.0, 2.0]})
    assert "notes" not in near.stats


def test_the_geometric_step_limits_are_options_of_trace():
    # A tighter turn limit takes more, shorter steps round the same ellipse; both close the loop.
    loose = trace(ellipse(3.0, 1.0), [3.0], free="p", tangent=[0.0, 1.0], max_step=1.0, max_turn=1.0)
    tight = trace(ellipse(3.0, 1.0), [3.0], free="p", tangent=[0.0, 1.0], max_step=1.0, max_turn=0.1)
    assert loose.status.label == tight.status.label == "closed_loop"
    assert len(tight) > len(loose)
    turns = np.arccos(np.clip(np.sum(tight.tangents[1:] * tight.tangents[:-1], axis=1), -1.0, 1.0))
    assert turns.max() <= 0.1 + 1e-12
    with pytest.raises(contin.InputError, match="max_correction"):
        trace(ellipse(3.0, 1.0), [3.0], free="p", tangent=[0.0, 1.0], max_correction=0.0)
