"""Exact second derivatives of symbolic systems (``SymbolicSystem.jacobian_along``), which curves of
folds and Hopf points, branch switching and the first Lyapunov coefficient use in place of
differences of the Jacobian."""

from __future__ import annotations

import pickle

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from contin.systems._symbolic import SymbolicSystem, symengine_available
from contin.tracing._lyapunov import JacobianCalculus

BACKENDS = ["sympy", pytest.param("symengine", marks=pytest.mark.skipif(not symengine_available(), reason="symengine absent"))]


def mixed(backend: str) -> SymbolicSystem:
    return SymbolicSystem({"f": "u**2*v + a*sin(v)", "g": "exp(u)*a*b - v**3"}, {"u": 0.3, "v": -0.7},
                          {"a": 1.5, "b": -0.4}, backend=backend)


def by_hand(u, v, a, b, x):
    # d/de of [[dF/du, dF/dv, dF/da, dF/db], ...] at (u, v) + e (x0, x1), worked out by hand
    x0, x1 = x
    f_row = [2 * v * x0 + 2 * u * x1, 2 * u * x0 - a * np.sin(v) * x1, np.cos(v) * x1, 0.0]
    g_row = [np.exp(u) * a * b * x0, -6 * v * x1, np.exp(u) * b * x0, np.exp(u) * a * x0]
    return np.array([f_row, g_row])


@pytest.mark.parametrize("backend", BACKENDS)
@settings(max_examples=25, deadline=None)
@given(st.floats(-2, 2), st.floats(-2, 2), st.floats(-3, 3), st.floats(-3, 3))
def test_the_derivative_along_a_direction_is_the_hand_one(backend, u, v, x0, x1):
    system = mixed(backend)
    got = system.jacobian_along(np.array([u, v]), np.array([1.5, -0.4]), np.array([x0, x1]))
    assert np.allclose(got, by_hand(u, v, 1.5, -0.4, (x0, x1)), rtol=1e-13, atol=1e-13)


@pytest.mark.parametrize("backend", BACKENDS)
def test_the_calculus_takes_the_exact_derivative_and_evaluates_no_jacobian(backend):
    system = mixed(backend)
    calculus = JacobianCalculus(system, system.parameter_values, columns=(1,))
    u, x = np.array([0.3, -0.7]), np.array([0.25, -1.0])
    along = calculus.along(u, x)
    expected = by_hand(0.3, -0.7, 1.5, -0.4, x)
    assert np.allclose(along, expected[:, [0, 1, 3]], rtol=1e-13, atol=1e-13)
    assert calculus.evaluations == 0
    # a callable system has no exact second derivatives: the difference agrees to its accuracy
    plain = contin.CallableSystem(lambda w, p: system.residual(w, p), ("u", "v"), {"a": 1.5, "b": -0.4},
                                  jacobian=lambda w, p: system.jacobian(w, p))
    differenced = JacobianCalculus(plain, plain.parameter_vector({}), columns=(1,)).along(u, x, accurate=True)
    assert np.allclose(differenced, along, rtol=1e-8, atol=1e-8)


def test_a_pickled_system_rebuilds_its_second_derivatives():
    system = mixed("sympy")
    u, p, x = np.array([0.1, 0.2]), np.array([1.5, -0.4]), np.array([1.0, 2.0])
    before = system.jacobian_along(u, p, x)
    again = pickle.loads(pickle.dumps(system))
    assert np.array_equal(again.jacobian_along(u, p, x), before)


def test_a_fold_curve_takes_fewer_jacobians_with_exact_second_derivatives_and_is_the_same_curve():
    # u^3 - a u + p = 0: folds on 27 p^2 = 4 a^3 (exact), the cusp at a = p = 0
    symbolic = contin.SymbolicSystem({"cubic": "u**3 - a*u + p"}, {"u": -1.2}, {"p": 0.528, "a": 1.0})
    plain = contin.CallableSystem(symbolic.residual, ("u",), {"p": 0.528, "a": 1.0},
                                  jacobian=symbolic.jacobian, parameter_jacobian=symbolic.parameter_jacobian)
    curves = []
    for system in (symbolic, plain):
        branch = contin.trace(system, {"u": -1.2}, free="p", bounds={"p": (-1.0, 1.0)}, step=0.05, direction=-1)
        curves.append(contin.follow(branch, branch.special("fold")[0], system, free=("p", "a"), direction=-1,
                                    bounds={"a": (-0.5, 2.0)}, step=0.05))
    exact, differenced = curves
    a, p = exact.column("a"), exact.column("p")
    assert np.abs(27.0 * p ** 2 - 4.0 * a ** 3).max() <= 1e-9 * (1.0 + np.abs(a).max() ** 3)
    (cusp,) = exact.special("cusp")
    assert abs(cusp.values["a"]) <= 1e-10 and abs(cusp.values["p"]) <= 1e-10
    assert [sp.kind for sp in exact.special_points] == [sp.kind for sp in differenced.special_points]
    assert (exact.stats["system_jacobian_evaluations"]
            < differenced.stats["system_jacobian_evaluations"])
