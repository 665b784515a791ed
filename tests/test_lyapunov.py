"""The first Lyapunov coefficient of Hopf points: normal forms, Lorenz, and on traced branches."""

from __future__ import annotations

import numpy as np
import pytest

import contin
from catalogue import brusselator


def hopf_normal_form(sigma: float, quadratic: float = 0.0, callable_system: bool = False):
    # x' = beta x - y + sigma x (x^2 + y^2), y' = x + beta y + sigma y (x^2 + y^2), plus an optional
    # quadratic term q x^2 in x' that leaves l1 alone (its terms in eq. (3.20) of Kuznetsov 2004 vanish).
    if callable_system:
        def residual(u, p):
            x, y = u
            r2 = x * x + y * y
            return [p[0] * x - y + sigma * x * r2 + quadratic * x * x, x + p[0] * y + sigma * y * r2]

        return contin.CallableSystem(residual, ["x", "y"], {"beta": 0.0}, kind="ode")
    return contin.SymbolicSystem(
        {"fx": f"beta*x - y + ({sigma})*x*(x**2 + y**2) + ({quadratic})*x**2",
         "fy": f"x + beta*y + ({sigma})*y*(x**2 + y**2)"},
        {"x": 0.0, "y": 0.0}, {"beta": -0.5}, kind="ode")


@pytest.mark.parametrize("sigma", [1.0, -1.0, 2.5])
def test_normal_form_coefficient_has_the_sign_of_sigma(sigma):
    # Kuznetsov, Elements of Applied Bifurcation Theory, 3rd ed., 2004: l1 has the sign of sigma; his
    # planar formula (3.20) (memory), l1 = (f_xxx + f_xyy + g_xxy + g_yyy) / (8 omega) + ..., gives 2 sigma
    # here (omega = 1), and so does the n-dimensional formula with |q| = 1.
    value = contin.first_lyapunov_coefficient(hopf_normal_form(sigma), [0.0, 0.0], [0.0])
    assert np.sign(value) == np.sign(sigma)
    assert value == pytest.approx(2.0 * sigma, abs=1e-9)


@pytest.mark.parametrize("sigma", [1.0, -1.0])
def test_finite_difference_jacobian_and_a_quadratic_term_give_the_same_coefficient(sigma):
    # Kuznetsov 2004, eq. (3.20) (memory): a term q x^2 in x' alone adds f_xy (f_xx + f_yy) - f_xx g_xx ... = 0.
    value = contin.first_lyapunov_coefficient(hopf_normal_form(sigma, 0.3, True), [0.0, 0.0], [0.0])
    assert value == pytest.approx(2.0 * sigma, abs=1e-6)


def lorenz(r: float = 2.0):
    b = 8.0 / 3.0
    x = np.sqrt(b * (r - 1.0))
    return contin.SymbolicSystem({"dx": "sigma*(y - x)", "dy": "r*x - y - x*z", "dz": "x*y - b*z"},
                                 {"x": x, "y": x, "z": r - 1.0}, {"r": r, "sigma": 10.0, "b": b}, kind="ode")


def test_lorenz_hopf_point_is_subcritical():
    # Sparrow, The Lorenz Equations, Springer 1982: for sigma = 10, b = 8/3 the non-trivial equilibria lose
    # stability at r = 470/19 in a subcritical Hopf bifurcation (first Lyapunov coefficient positive).
    system = lorenz()
    branch = contin.trace(system, free="r", bounds={"r": (1.5, 30.0)}, step=0.5, max_step=2.0)
    (hopf,) = branch.special("hopf")
    assert hopf.values["r"] == pytest.approx(470.0 / 19.0, abs=1e-8)
    assert hopf.info["first_lyapunov_coefficient"] > 0.0
    # The same value from the function at the exact point: the info is that computation.
    r = 470.0 / 19.0
    x = np.sqrt(8.0 / 3.0 * (r - 1.0))
    direct = contin.first_lyapunov_coefficient(system, [x, x, r - 1.0], [r, 10.0, 8.0 / 3.0])
    assert hopf.info["first_lyapunov_coefficient"] == pytest.approx(direct, rel=1e-5)


def test_every_hopf_point_of_a_branch_carries_the_coefficient():
    # Brusselator: Hopf at B = 1 + A^2 (Lefever & Nicolis 1971); its cycles are born stable there
    # (supercritical, negative l1; memory).
    problem = brusselator(2.0)
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    (hopf,) = branch.special("hopf")
    assert hopf.info["first_lyapunov_coefficient"] < 0.0
    assert branch.to_dict()["special_points"][0]["info"]["first_lyapunov_coefficient"] < 0.0


def test_a_point_without_a_complex_pair_is_refused_with_a_message():
    system = contin.SymbolicSystem({"fx": "-x + beta", "fy": "x - 2*y"}, {"x": 0.0, "y": 0.0}, {"beta": 0.0}, kind="ode")
    with pytest.raises(contin.InputError, match="no complex pair of eigenvalues.*not a Hopf point"):
        contin.first_lyapunov_coefficient(system, [0.0, 0.0], [0.0])


def test_a_coefficient_that_cannot_be_computed_is_nan_not_a_crash():
    # A residual that refuses |x| > 1e-3: its Jacobian at the Hopf point (steps of about 6e-6) is fine,
    # the second differences for l1 (steps of about 2.5e-3) are not; l1 is then NaN.
    from contin.tracing._lyapunov import lyapunov_facts

    def residual(u, p):
        x, y = u
        if abs(x) > 1e-3:
            raise ValueError("outside the model's range")
        return [p[0] * x - y + x * (x * x + y * y), x + p[0] * y + y * (x * x + y * y)]

    system = contin.CallableSystem(residual, ["x", "y"], {"beta": 0.0}, kind="ode")
    facts = lyapunov_facts(system, np.array([0.0, 0.0]), np.array([0.0]))
    assert set(facts) == {"first_lyapunov_coefficient"} and np.isnan(facts["first_lyapunov_coefficient"])
