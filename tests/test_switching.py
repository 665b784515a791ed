"""Branch switching from the algebraic bifurcation equation, against the perpendicular guess."""

from __future__ import annotations

import math

import numpy as np
import pytest

import contin
from contin.tracing._switching import quadratic_directions

A, K = 1.0, 0.05  # u = A lam^2 and u = A lam^2 - K lam cross at the origin only, at the shallow angle atan(K)


@pytest.fixture(scope="module")
def shallow():
    # (u - A lam^2)(u + K lam - A lam^2) = 0: two parabolas through the origin (exact), tangents (0, 1)
    # and (-K, 1) there.
    system = contin.SymbolicSystem({"f": f"(u - {A}*lam**2)*(u + {K}*lam - {A}*lam**2)"}, {"u": 0.25 * A},
                                   {"lam": -0.5})
    branch = contin.trace(system, free="lam", bounds={"lam": (-0.5, 0.5)}, step=0.004, max_step=0.004,
                          max_points=400)
    (point,) = branch.special("branch_point")
    return system, branch, point


def test_bifurcation_equation_finds_the_shallow_branch_where_the_perpendicular_guess_falls_back(shallow):
    system, branch, point = shallow
    assert point.values["lam"] == pytest.approx(0.0, abs=1e-10)
    keywords = dict(bounds={"lam": (-0.5, 0.5)}, step=0.01, max_step=0.01, max_points=20)
    perpendicular = contin.switch_branch(branch, point, system, guess="perpendicular", **keywords)
    lam, u = perpendicular.column("lam"), perpendicular.column("u")
    assert np.abs(u - A * lam ** 2).max() <= 1e-8          # back on the traced branch: the failure
    assert perpendicular.stats["switch"] == {"guess": "perpendicular"}
    switched = contin.switch_branch(branch, point, system, **keywords)
    lam, u = switched.column("lam"), switched.column("u")
    assert switched.stats["switch"]["guess"] == "bifurcation_equation"
    assert np.abs(u - A * lam ** 2 + K * lam).max() <= 1e-6  # on the other parabola
    assert np.abs(u - A * lam ** 2).min() >= 0.5 * K * 0.009  # and off the traced one (|K lam| there)
    assert lam[0] > 0.0 and lam[-1] > lam[0]
    # the other branch's tangent (-K, 1) makes the angle atan(K) with the traced branch's (0, 1) (exact); the
    # traced direction is taken from the tangents one step (0.004) either side, so to about 1e-5 here
    assert switched.stats["switch"]["cosine_to_traced_branch"] == pytest.approx(1.0 / math.hypot(1.0, K), abs=1e-4)


def test_quadratic_directions_of_a_pitchfork_and_of_degenerate_forms():
    # 2 alpha beta = 0 (a pitchfork's form, Keller 1977): the two coordinate axes (exact).
    first, second = quadratic_directions(0.0, 1.0, 0.0)
    assert sorted([abs(first[0]), abs(second[0])]) == pytest.approx([0.0, 1.0], abs=1e-15)
    # alpha^2 - beta^2 = 0: the diagonals (exact).
    for root in quadratic_directions(1.0, 0.0, -1.0):
        assert abs(root[0]) == pytest.approx(abs(root[1]), abs=1e-15)
        assert root[0] ** 2 - root[1] ** 2 == pytest.approx(0.0, abs=1e-15)
    assert quadratic_directions(0.0, 0.0, 0.0) is None   # no second-order information
    assert quadratic_directions(1.0, 0.0, 1.0) is None   # an isolated point: no real direction


def test_an_unknown_guess_is_refused_with_a_message(shallow):
    system, branch, point = shallow
    with pytest.raises(contin.InputError, match="guess='perpendicullar' is not known.*did you mean 'perpendicular'"):
        contin.switch_branch(branch, point, system, guess="perpendicullar")


def test_a_degenerate_branch_point_is_refused_with_a_message():
    # u (u^2 - p^3) = 0: u = 0 meets the cusp u^2 = p^3 at the origin, where every second derivative
    # vanishes (exact): the bifurcation equation holds only rounding, and every guess from it or the
    # perpendicular one starts where the Jacobian is singular.
    system = contin.SymbolicSystem({"f": "u*(u**2 - p**3)"}, {"u": 0.0}, {"p": -1.0})
    branch = contin.trace(system, free="p", bounds={"p": (-1.0, 1.0)}, step=0.05)
    (point,) = branch.special("branch_point")
    with pytest.raises(contin.InputError, match=r"switching cannot decide at the branch point at u = 0, p = .*"
                                                r"degenerate branch point\?.*start contin.trace near the other branch"):
        contin.switch_branch(branch, point, system, bounds={"p": (-1.0, 1.0)}, step=0.05)
