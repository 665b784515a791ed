"""Two-parameter continuation: fold and Hopf curves, cusps, Bogdanov-Takens and generalised Hopf points."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from catalogue import brusselator


def cubic():
    return contin.SymbolicSystem({"f": "u**3 - a*u + p + c*u**2"}, {"u": -1.2}, {"a": 1.0, "p": 0.528, "c": 0.0})


def cubic_branch(system):
    # u^3 - a u + p = 0 at a = 1: folds at u = -+1/sqrt(3), p = +-2/(3 sqrt(3)) (exact).
    return contin.trace(system, free="p", bounds={"p": (-1.0, 1.0)}, step=0.05, direction=-1)


def test_cubic_fold_curve_and_its_cusp():
    # Exact: folds of u^3 - a u + p = 0 lie on 27 p^2 = 4 a^3 (u = +-sqrt(a/3)), with the cusp at a = p = 0.
    system = cubic()
    branch = cubic_branch(system)
    fold = branch.special("fold")[0]
    curve = contin.follow(branch, fold, system, free=("p", "a"), direction=-1, bounds={"a": (-0.5, 2.0)}, step=0.05)
    assert curve.columns == ("u", "p", "a")
    assert curve.free == "a" and curve.stats["curve"] == "fold"
    assert curve.status is contin.Status.BOUND_REACHED, curve.message
    a, p, u = curve.column("a"), curve.column("p"), curve.column("u")
    assert np.abs(27.0 * p ** 2 - 4.0 * a ** 3).max() <= 1e-9 * (1.0 + np.abs(a).max() ** 3)
    assert np.abs(3.0 * u ** 2 - a).max() <= 1e-9
    (cusp,) = curve.special("cusp")
    assert cusp.values["a"] == pytest.approx(0.0, abs=1e-10)
    assert cusp.values["p"] == pytest.approx(0.0, abs=1e-10)
    assert cusp.values["u"] == pytest.approx(0.0, abs=1e-10)
    assert cusp.located_to <= 1e-8
    # past the cusp the curve comes back up on the other side (u > 0, p > 0)
    assert u[-1] > 0.0 and p[-1] == pytest.approx(2.0 * (2.0 / 3.0) ** 1.5, rel=1e-9)
    assert curve.stats["system_jacobian_evaluations"] > 0
    assert [sp["kind"] for sp in curve.to_dict()["special_points"]] == [sp.kind for sp in curve.special_points]


def bogdanov_takens_form(sign: int):
    # x' = y, y' = b1 + b2 x + x^2 + s x y (Kuznetsov 2004, section 8.4): traced in b1 at b2 = -1 from x = -1/2.
    return contin.SymbolicSystem({"fx": "y", "fy": f"b1 + b2*x + x**2 + ({sign})*x*y"}, {"x": -0.5, "y": 0.0},
                                 {"b1": -0.75, "b2": -1.0}, kind="ode")


@pytest.mark.parametrize("sign", [1, -1])
def test_bogdanov_takens_normal_form(sign):
    # Kuznetsov 2004, section 8.4: fold curve b1 = b2^2 / 4, Hopf curve b1 = 0 with b2 < 0 (omega^2 = -b2),
    # both ending at the Bogdanov-Takens point b1 = b2 = 0.
    system = bogdanov_takens_form(sign)
    branch = contin.trace(system, free="b1", bounds={"b1": (-1.0, 1.0)}, step=0.05)
    (hopf,) = branch.special("hopf")
    (fold,) = branch.special("fold")
    assert hopf.values["b1"] == pytest.approx(0.0, abs=1e-9)
    assert fold.values["b1"] == pytest.approx(0.25, abs=1e-9)

    hopf_curve = contin.follow(branch, hopf, system, free=("b1", "b2"), bounds={"b2": (-2.0, 1.0)}, step=0.05)
    assert hopf_curve.columns == ("x", "y", "b1", "b2", "omega")
    assert np.abs(hopf_curve.column("b1")).max() <= 1e-10
    omega, b2 = hopf_curve.column("omega"), hopf_curve.column("b2")
    assert np.abs(omega ** 2 + np.minimum(b2, 0.0)).max() <= 1e-8
    assert np.all(b2 <= 1e-8)
    (end,) = hopf_curve.special("bogdanov_takens")
    assert end.values["b1"] == pytest.approx(0.0, abs=1e-10)
    assert end.values["b2"] == pytest.approx(0.0, abs=1e-10)
    assert end.values["omega"] == pytest.approx(0.0, abs=1e-7)
    assert hopf_curve.status is contin.Status.TERMINAL_EVENT
    assert "Bogdanov-Takens point" in hopf_curve.message and "kappa" not in hopf_curve.message

    fold_curve = contin.follow(branch, fold, system, free=("b1", "b2"), bounds={"b2": (-2.0, 1.0)}, step=0.05)
    assert fold_curve.columns == ("x", "y", "b1", "b2")
    b1, b2 = fold_curve.column("b1"), fold_curve.column("b2")
    assert np.abs(b1 - b2 ** 2 / 4.0).max() <= 1e-10
    (meeting,) = fold_curve.special("bogdanov_takens")
    assert meeting.values["b1"] == pytest.approx(0.0, abs=1e-10)
    assert meeting.values["b2"] == pytest.approx(0.0, abs=1e-10)
    assert fold_curve.special("cusp") == ()


def test_bogdanov_takens_hopf_direction_of_criticality():
    # Kuznetsov 2004, section 8.4 (memory): with s = -1 the Hopf bifurcation near the BT point is
    # supercritical, with s = +1 subcritical.
    for sign in (1, -1):
        branch = contin.trace(bogdanov_takens_form(sign), free="b1", bounds={"b1": (-1.0, 1.0)}, step=0.05)
        assert np.sign(branch.special("hopf")[0].info["first_lyapunov_coefficient"]) == sign


def test_generalised_hopf_point_of_the_bautin_form():
    # x' = beta x - y + sigma x r^2 - x r^4 (and y'): the Hopf line beta = 0 has l1 = 2 sigma (Kuznetsov 2004,
    # eq. (3.20), memory), so the generalised Hopf point is at sigma = 0 (Kuznetsov 2004, section 8.3).
    system = contin.SymbolicSystem(
        {"fx": "beta*x - y + sigma*x*(x**2 + y**2) - x*(x**2 + y**2)**2",
         "fy": "x + beta*y + sigma*y*(x**2 + y**2) - y*(x**2 + y**2)**2"},
        {"x": 0.0, "y": 0.0}, {"beta": -0.5, "sigma": -1.0}, kind="ode")
    branch = contin.trace(system, free="beta", bounds={"beta": (-1.0, 1.0)}, step=0.1)
    (hopf,) = branch.special("hopf")
    assert hopf.info["first_lyapunov_coefficient"] == pytest.approx(-2.0, abs=1e-8)
    curve = contin.follow(branch, hopf, system, free=("sigma", "beta"), bounds={"sigma": (-2.0, 2.0)}, step=0.1)
    assert curve.columns == ("x", "y", "sigma", "beta", "omega")
    assert np.abs(curve.column("beta")).max() <= 1e-12
    assert np.abs(curve.column("omega") - 1.0).max() <= 1e-12
    (point,) = curve.special("generalised_hopf")
    assert point.values["sigma"] == pytest.approx(0.0, abs=1e-9)


def test_lorenz_hopf_curve():
    # Lorenz with b = 8/3: equilibria C+- lose stability at r = sigma (sigma + b + 3) / (sigma - b - 1)
    # (exact, Routh-Hurwitz on the characteristic polynomial; 470/19 at sigma = 10, Sparrow 1982).
    b = 8.0 / 3.0
    x = np.sqrt(b)
    system = contin.SymbolicSystem({"dx": "sigma*(y - x)", "dy": "r*x - y - x*z", "dz": "x*y - b*z"},
                                   {"x": x, "y": x, "z": 1.0}, {"r": 2.0, "sigma": 10.0, "b": b}, kind="ode")
    branch = contin.trace(system, free="r", bounds={"r": (1.5, 30.0)}, step=0.5, max_step=2.0)
    curve = contin.follow(branch, "hopf", system, free=("r", "sigma"), bounds={"sigma": (6.0, 20.0)}, step=0.2,
                          max_step=1.0)
    assert curve.status is contin.Status.BOUND_REACHED, curve.message
    sigma, r = curve.column("sigma"), curve.column("r")
    assert np.abs(r - sigma * (sigma + b + 3.0) / (sigma - b - 1.0)).max() <= 1e-9
    # omega^2 = b (sigma + r) there, from the same characteristic polynomial (exact)
    assert np.abs(curve.column("omega") ** 2 - b * (sigma + r)).max() <= 1e-8
    assert curve.special("generalised_hopf") == ()


# -- the defining equations hold at every point -----------------------------------------------------
def two_unknowns(c: float, k: float):
    def residual(u, p):
        x, y = u
        return [x ** 3 + c * x * x - p[0] * x + p[1] + y, y - k * x * x]

    def jacobian(u, p):
        x, _ = u
        return [[3 * x * x + 2 * c * x - p[0], 1.0], [-2 * k * x, 1.0]]

    def parameter_jacobian(u, p):
        x, _ = u
        return [[-x, 1.0], [0.0, 0.0]]

    return contin.CallableSystem(residual, ["x", "y"], {"a": 1.0, "p": 0.0}, jacobian=jacobian,
                                 parameter_jacobian=parameter_jacobian)


@settings(max_examples=6, deadline=None, derandomize=True)
@given(st.floats(-0.5, 0.5), st.floats(-0.5, 0.5))
def test_every_point_of_a_fold_curve_solves_its_defining_equations(c, k):
    # A fold: F = 0 and dF/du singular (common practice).
    system = two_unknowns(c, k)
    branch = contin.trace(system, {"x": -2.0, "y": 4.0 * k}, free="p", parameters={"p": 8.0 - 4.0 * c - 2.0 - 4.0 * k},
                          bounds={"p": (-20.0, 20.0)}, step=0.1, direction=-1)
    fold = branch.special("fold")[0]
    curve = contin.follow(branch, fold, system, free=("p", "a"), bounds={"a": (0.0, 3.0)}, step=0.1, max_points=200)
    assert len(curve) > 5
    for x, y, p, a in curve.points:
        residual = system.residual(np.array([x, y]), np.array([a, p]))
        jacobian = np.asarray(system.jacobian_function(np.array([x, y]), np.array([a, p])))
        assert np.abs(residual).max() <= 1e-9
        assert np.linalg.svd(jacobian, compute_uv=False)[-1] <= 1e-9


@settings(max_examples=4, deadline=None, derandomize=True)
@given(st.floats(0.8, 2.5))
def test_every_point_of_a_hopf_curve_solves_its_defining_equations(a):
    # A Hopf point: F = 0 and dF/du has the eigenvalues +-i omega (common practice); for the Brusselator
    # the curve is B = 1 + A^2 with omega = A (Lefever & Nicolis 1971).
    problem = brusselator(a)
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    curve = contin.follow(branch, "hopf", problem.system, free=("B", "A"), bounds={"A": (0.5, 3.0)}, step=0.1)
    assert len(curve) > 5
    for u, v, big_b, big_a, omega in curve.points:
        state, parameters = np.array([u, v]), np.array([big_a, big_b])
        assert np.abs(problem.system.residual(state, parameters)).max() <= 1e-9
        eigenvalues = np.linalg.eigvals(problem.system.linearise(state, parameters, 0)[1])
        assert np.abs(eigenvalues - 1j * omega).min() <= 1e-8
        assert big_b == pytest.approx(1.0 + big_a ** 2, abs=1e-9) and omega == pytest.approx(big_a, abs=1e-9)


# -- bad input ---------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def cubic_case():
    system = cubic()
    return system, cubic_branch(system)


def test_a_point_that_is_not_a_fold_or_hopf_point_is_refused(cubic_case):
    system, branch = cubic_case
    (bound,) = branch.special("bound")
    with pytest.raises(contin.InputError, match=r"special_point is a 'bound' point; follow traces folds"):
        contin.follow(branch, bound, system, free=("p", "a"))
    other = contin.trace(system, {"u": 2.0}, free="p", parameters={"p": -6.0}, bounds={"p": (-7.0, 0.0)}, step=0.5)
    with pytest.raises(contin.InputError, match="no such point"):
        contin.follow(other, "fold", system, free=("p", "a"))
    foreign = contin.trace(cubic(), free="p", bounds={"p": (-1.0, 1.0)}, step=0.05, direction=-1,
                           max_step=0.1).special("fold")[1]
    with pytest.raises(contin.InputError, match="is not a special point of this branch"):
        contin.follow(branch, foreign, system, free=("p", "a"))
    with pytest.raises(contin.InputError, match="not a kind follow can trace.*did you mean 'fold'"):
        contin.follow(branch, "folds", system, free=("p", "a"))


def test_hopf_on_an_algebraic_system_is_refused(cubic_case):
    system, branch = cubic_case
    with pytest.raises(contin.InputError, match="'hopf' needs an ODE system.*kind='ode'"):
        contin.follow(branch, "hopf", system, free=("p", "a"))


def test_the_same_parameter_twice_is_refused(cubic_case):
    system, branch = cubic_case
    with pytest.raises(contin.InputError, match="free names 'p' twice"):
        contin.follow(branch, "fold", system, free=("p", "p"))


def test_a_parameter_not_in_the_system_is_refused(cubic_case):
    system, branch = cubic_case
    with pytest.raises(contin.InputError, match=r"free='b' is not a parameter of this system.*did you mean 'a'"):
        contin.follow(branch, "fold", system, free=("p", "b"))
    with pytest.raises(contin.InputError, match="leaves out the branch's free parameter 'p'"):
        contin.follow(branch, "fold", system, free=("a", "c"))


def test_other_bad_arguments_are_refused(cubic_case):
    system, branch = cubic_case
    with pytest.raises(contin.InputError, match="free='p' must name two parameters"):
        contin.follow(branch, "fold", system, free="p")
    with pytest.raises(contin.InputError, match="follow sets 'events' itself"):
        contin.follow(branch, "fold", system, free=("p", "a"), events=())
    with pytest.raises(contin.InputError, match="keyword 'stepp'.*did you mean 'step'"):
        contin.follow(branch, "fold", system, free=("p", "a"), stepp=0.1)
