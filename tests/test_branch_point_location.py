"""Branch points on curved branches are located to what ``located_to`` claims.

The lemniscate (x^2 + p^2)^2 = 2 (x^2 - p^2) crosses itself at the origin (its double point, common
practice): traced round, the branch passes that simple branch point twice, along curved arcs.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin


def lemniscate(shift=(0.0, 0.0), angle: float = 0.0) -> contin.CallableSystem:
    """The lemniscate moved to ``shift`` and turned by ``angle`` in the (x, p) plane."""
    c, s = math.cos(angle), math.sin(angle)

    def residual(u, p):
        x0, p0 = u[0] - shift[0], p[0] - shift[1]
        x, q = c * x0 + s * p0, -s * x0 + c * p0
        return np.array([(x * x + q * q) ** 2 - 2.0 * (x * x - q * q)])

    start = shift[0] + c * math.sqrt(2.0)
    return contin.CallableSystem(residual, ["x"], {"p": shift[1] + s * math.sqrt(2.0)}, start=[start])


def assert_located_as_claimed(point: contin.SpecialPoint, expected: np.ndarray) -> None:
    distance = float(np.linalg.norm(point.point - expected))
    assert distance <= max(10.0 * point.located_to, 1e-9), (distance, point.located_to)
    assert point.located_to <= 1e-9
    assert point.residual_norm <= 1e-10


@pytest.mark.parametrize("step", [0.05, 0.1, 0.3])
def test_the_lemniscate_double_point_is_at_the_origin_to_what_located_to_claims(step):
    branch = contin.trace(lemniscate(), free="p", step=step, max_step=step, max_points=400)
    assert branch.status.label == "closed_loop", branch.message
    found = branch.special("branch_point")
    assert len(found) == 2  # once on each pass through the crossing
    for point in found:
        assert_located_as_claimed(point, np.zeros(2))
        assert branch.points[point.index] == pytest.approx(point.point, abs=0.0)  # a row of the branch


@given(st.floats(-3.0, 3.0), st.floats(-3.0, 3.0), st.floats(-0.6, 0.6))
@settings(max_examples=12, derandomize=True, deadline=None)
def test_a_moved_and_turned_lemniscate_has_its_double_point_located_as_claimed(dx, dp, angle):
    branch = contin.trace(lemniscate((dx, dp), angle), free="p", step=0.1, max_step=0.2, max_points=400)
    assert branch.status.label == "closed_loop", branch.message
    found = branch.special("branch_point")
    assert len(found) == 2
    for point in found:
        assert_located_as_claimed(point, np.array([dx, dp]))


def test_the_curved_half_of_a_pitchfork_locates_the_branch_point_it_crosses():
    # u (p - u^2): the parabola u^2 = p crosses the trivial branch u = 0 at the origin, where the
    # parabola is at its most curved (it turns in p there: the branch point is also its fold in p).
    pitchfork = contin.CallableSystem(lambda u, p: u * (p[0] - u ** 2), ["u"], {"p": 1.0}, start=[-1.0])
    branch = contin.trace(pitchfork, free="p", direction=-1, step=0.07, max_step=0.15, bounds={"p": (-1.0, 1.5)})
    assert branch.success, branch.message
    (point,) = branch.special("branch_point")
    assert_located_as_claimed(point, np.zeros(2))
    assert branch.column("u")[-1] > 0.0  # went on along the parabola past the crossing


def test_a_branch_point_of_two_unknowns_on_a_curved_branch():
    # x solves the lemniscate in (x, p) and y = x p + x^2 follows it: the double point is (0, 0, 0).
    def residual(u, p):
        x, y = u
        return np.array([(x * x + p[0] ** 2) ** 2 - 2.0 * (x * x - p[0] ** 2), y - x * p[0] - x * x])

    system = contin.CallableSystem(residual, ["x", "y"], {"p": 0.0}, start=[math.sqrt(2.0), 2.0])
    branch = contin.trace(system, free="p", step=0.1, max_step=0.2, max_points=400)
    assert branch.status.label == "closed_loop", branch.message
    found = branch.special("branch_point")
    assert len(found) == 2
    for point in found:
        assert_located_as_claimed(point, np.zeros(3))


def test_when_the_refinement_fails_located_to_still_covers_the_error(monkeypatch):
    import contin.tracing._bifurcation as bifurcation

    real = bifurcation._refine_branch_point

    def failing(extended, x, options, radius):
        _, first = real(extended, x, options, radius)
        return None, first  # as if Newton on the defining system had failed

    monkeypatch.setattr(bifurcation, "_refine_branch_point", failing)
    branch = contin.trace(lemniscate(), free="p", step=0.1, max_step=0.1, max_points=400)
    found = branch.special("branch_point")
    assert len(found) == 2
    # the driver first retried shorter steps (a sign change it cannot refine may be a hop between
    # branches), then kept the bracket's point
    assert branch.stats["rejections"]["special point not located"] >= 2
    for point in found:
        distance = float(np.linalg.norm(point.point))
        assert point.located_to > 1e-12  # not claimed exact ...
        assert distance <= 10.0 * point.located_to  # ... and located_to covers the error


@pytest.mark.parametrize("angle_slope, steps", [(0.05, {}), (0.05, {"step": 0.05, "max_step": 0.1}), (0.02, {})])
def test_branches_crossing_at_a_shallow_angle_give_their_branch_point_with_default_steps(angle_slope, steps):
    # (u - lam^2)(u + K lam - lam^2) = 0: two parabolas crossing at the origin only, at the angle atan(K)
    # (exact). Near the crossing they lie within K |lam| of each other, so a long step can land on the
    # other one; across the crossing such a hop leaves the test's sign unchanged. The driver sees the
    # determinant's linear fall and retries shorter, staying on the traced parabola.
    system = contin.SymbolicSystem({"f": f"(u - lam**2)*(u + {angle_slope}*lam - lam**2)"}, {"u": 0.25},
                                   {"lam": -0.5})
    branch = contin.trace(system, free="lam", bounds={"lam": (-0.5, 0.5)}, max_points=400, **steps)
    (point,) = branch.special("branch_point")
    assert abs(point.values["lam"]) <= 1e-10 and abs(point.values["u"]) <= 1e-10
    lam, u = branch.column("lam"), branch.column("u")
    assert np.abs(u - lam ** 2).max() <= 1e-5  # never left the traced parabola
