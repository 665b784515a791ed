"""Symbolic systems: exact Jacobians on both back ends, checked against finite differences and by hand."""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from contin.base._errors import InputError
from contin.systems._symbolic import SymbolicSystem, choose_backend, compile_expression, expression_event, symengine_available

BACKENDS = ["sympy", pytest.param("symengine", marks=pytest.mark.skipif(not symengine_available(), reason="symengine absent"))]


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.delenv("CONTIN_SYMBOLIC_BACKEND", raising=False)


MIXED = {
    "first": "u**3 - u*v + p*exp(-q*u) + sin(v)/(2 + cos(u))",
    "second": "log(1 + u**2) + sqrt(2 + v**2)*q - p*tanh(v) + atan(u*v)",
    "third": "w*sinh(u/3) - cosh(v/4) + p**2*w**3 + q",
}
START = {"u": 0.3, "v": -0.2, "w": 0.5}
PARAMETERS = {"p": 1.5, "q": -0.4}


def difference_jacobians(system, u, p):
    """Central differences of the residual, step 1e-6 (error ~1e-10 for these smooth functions)."""
    h = 1e-6
    ju = np.column_stack([(system.residual(u + h * e, p) - system.residual(u - h * e, p)) / (2 * h) for e in np.eye(u.size)])
    jp = np.column_stack([(system.residual(u, p + h * e) - system.residual(u, p - h * e)) / (2 * h) for e in np.eye(p.size)])
    return ju, jp


@pytest.mark.parametrize("backend", BACKENDS)
def test_hand_derivatives_of_the_cubic(backend):
    system = SymbolicSystem({"balance": "u**3 - u + p"}, {"u": 0.0}, {"p": -1.0}, backend=backend)
    f, ju, jp = system.linearise(np.array([2.0]), np.array([0.5]), 0)
    # F = 8 - 2 + 0.5, dF/du = 3*4 - 1, dF/dp = 1 (exact, by hand).
    assert f.tolist() == [6.5] and ju.tolist() == [[11.0]] and jp.tolist() == [1.0]
    assert system.backend == backend
    assert system.start.tolist() == [0.0] and system.parameter_values.tolist() == [-1.0]


@settings(derandomize=True, max_examples=40, deadline=None)
@given(
    st.lists(st.floats(-1.0, 1.0), min_size=3, max_size=3),
    st.lists(st.floats(-2.0, 2.0), min_size=2, max_size=2),
)
def test_jacobians_agree_with_finite_differences_on_both_back_ends(point, parameters):
    u, p = np.array(point), np.array(parameters)
    for backend in ("sympy", "symengine") if symengine_available() else ("sympy",):
        system = SymbolicSystem(MIXED, START, PARAMETERS, backend=backend)
        f, ju, jp = system.evaluate(u, p)
        du, dp = difference_jacobians(system, u, p)
        np.testing.assert_allclose(ju, du, rtol=1e-6, atol=1e-7)
        np.testing.assert_allclose(jp, dp, rtol=1e-6, atol=1e-7)
        np.testing.assert_allclose(f, system.residual(u, p), rtol=1e-14, atol=1e-14)
        for free in range(2):
            f2, ju2, column = system.linearise(u, p, free)
            np.testing.assert_array_equal(column, jp[:, free])
            np.testing.assert_array_equal(ju2, ju)


def test_back_ends_agree_to_rounding():
    if not symengine_available():
        pytest.skip("symengine absent")
    u, p = np.array([0.7, -0.1, 0.2]), np.array([0.3, 1.1])
    one = SymbolicSystem(MIXED, START, PARAMETERS, backend="sympy").evaluate(u, p)
    two = SymbolicSystem(MIXED, START, PARAMETERS, backend="symengine").evaluate(u, p)
    for a, b in zip(one, two, strict=True):
        np.testing.assert_allclose(a, b, rtol=1e-13, atol=1e-14)


@pytest.mark.parametrize("backend", BACKENDS)
def test_nonsmooth_functions_have_one_sided_derivatives(backend):
    system = SymbolicSystem({"e": "abs(u) + max(u, p) - min(u, 2*p)"}, {"u": 1.0}, {"p": 0.0}, backend=backend)
    _, ju, jp = system.evaluate(np.array([1.0]), np.array([0.25]))
    # d/du: sign(1) + 1 (u > p) - 0 (u > 2p) = 2; d/dp: 0 + 0 - 2 (min picks 2p) = -2 (by hand).
    assert ju.tolist() == [[2.0]] and jp.tolist() == [[-2.0]]


@pytest.mark.parametrize("backend", BACKENDS)
def test_parameters_change_without_recompiling(backend):
    system = SymbolicSystem({"e": "u - p*q"}, {"u": 0.0}, {"p": 1.0, "q": 2.0}, backend=backend)
    functions = system._functions
    for p, q in [(1.0, 2.0), (3.0, -1.0), (0.5, 0.5)]:
        assert system.residual(np.array([0.0]), np.array([p, q]))[0] == -p * q
    assert system._functions is functions
    # The engine's parameter overrides reach the compiled function as inputs.
    branch = contin.trace(system, {"u": 6.0}, free="p", parameters={"q": 3.0, "p": 2.0}, bounds={"p": (0.0, 3.0)})
    np.testing.assert_allclose(branch.column("u"), 3.0 * branch.column("p"), atol=1e-9)


def test_sparse_chain_differentiates_only_present_symbols():
    n = 200
    equations = {
        f"node{i}": f"{'u%d' % (i - 1) if i else '0'} - 2*u{i} + {'u%d' % (i + 1) if i < n - 1 else '0'} + lam*exp(u{i})"
        for i in range(n)
    }
    system = SymbolicSystem(equations, {f"u{i}": 0.0 for i in range(n)}, {"lam": 0.1})
    summary = system.symbolic_summary()
    assert summary["jacobian_nonzeros"] == 3 * n - 2
    assert summary["parameter_jacobian_nonzeros"] == n
    _, ju, jp = system.evaluate(np.zeros(n), np.array([0.1]))
    expected = -2 * np.eye(n) + np.eye(n, k=1) + np.eye(n, k=-1) + 0.1 * np.eye(n)
    np.testing.assert_allclose(ju, expected, atol=1e-15)
    np.testing.assert_allclose(jp[:, 0], np.ones(n))


@pytest.mark.parametrize("backend", BACKENDS)
def test_from_sympy_expressions(backend):
    x, y, a = sympy.symbols("x y a")
    system = SymbolicSystem.from_sympy([x**2 + y**2 - a, x - y], {x: 1.0, y: 1.0}, {a: 2.0}, equations=["circle", "line"], backend=backend)
    assert system.equations == ("circle", "line") and system.unknowns == ("x", "y")
    f, ju, jp = system.linearise(np.array([1.0, 1.0]), np.array([2.0]), 0)
    assert f.tolist() == [0.0, 0.0] and ju.tolist() == [[2.0, 2.0], [1.0, -1.0]] and jp.tolist() == [-1.0, 0.0]


def test_constants_are_substituted_before_differentiation():
    system = SymbolicSystem({"e": "k*u**2 - p"}, {"u": 1.0}, {"p": 1.0}, {"k": 3.0})
    _, ju, _ = system.evaluate(np.array([2.0]), np.array([0.0]))
    assert ju.tolist() == [[12.0]] and system.parameters == ("p",)


@pytest.mark.parametrize("backend", BACKENDS)
def test_trace_of_cubic_finds_both_folds(backend):
    system = SymbolicSystem({"balance": "u**3 - u + p"}, {"u": -1.5}, {"p": 1.875}, backend=backend)
    branch = contin.trace(system, free="p", direction=-1, bounds={"p": (-2.0, 2.0)})
    folds = sorted(sp.values["p"] for sp in branch.special_points if sp.kind == "fold")
    # Folds of u^3 - u + p at p = -+2/(3 sqrt 3) (exact).
    np.testing.assert_allclose(folds, [-2 / (3 * math.sqrt(3)), 2 / (3 * math.sqrt(3))], atol=1e-9)
    assert branch.stats["structure"]["equations"] == 1


@pytest.mark.parametrize("backend", BACKENDS)
def test_expression_event_is_located(backend):
    system = SymbolicSystem({"balance": "u**3 - u + p"}, {"u": -1.5}, {"p": 1.875}, backend=backend)
    event = expression_event(system, "u_half", "u - 0.5", direction=1)
    branch = contin.trace(system, free="p", direction=-1, bounds={"p": (-2.0, 2.0)}, events=[event])
    found = [sp for sp in branch.special_points if sp.name == "u_half"]
    # u = 0.5 on the branch: p = u - u^3 = 0.375 (exact); crossing once with u increasing.
    assert len(found) == 1
    assert found[0].values["u"] == pytest.approx(0.5, abs=1e-9)
    assert found[0].values["p"] == pytest.approx(0.375, abs=1e-9)


@pytest.mark.parametrize("backend", BACKENDS)
def test_compiled_expression_returns_nan_outside_its_domain(backend):
    system = SymbolicSystem({"e": "u - p"}, {"u": 0.0}, {"p": 0.0}, backend=backend)
    g = compile_expression(system, "log(u) + p")
    assert g(np.array([math.e]), np.array([1.0])) == pytest.approx(2.0, rel=1e-15)
    assert math.isnan(g(np.array([-1.0]), np.array([0.0])))


def test_ode_kind_is_kept():
    system = SymbolicSystem({"rate": "p*u - u**3"}, {"u": 0.0}, {"p": 0.5}, kind="ode")
    assert system.kind == "ode"


@pytest.mark.parametrize("backend", BACKENDS)
def test_pickled_system_works_in_a_new_process_state(backend):
    system = SymbolicSystem(MIXED, START, PARAMETERS, backend=backend)
    clone = pickle.loads(pickle.dumps(system))
    u, p = np.array([0.1, 0.2, 0.3]), np.array([0.4, 0.5])
    for a, b in zip(system.evaluate(u, p), clone.evaluate(u, p), strict=True):
        np.testing.assert_array_equal(a, b)


def test_environment_chooses_back_end(monkeypatch):
    monkeypatch.setenv("CONTIN_SYMBOLIC_BACKEND", "sympy")
    assert choose_backend("auto") == "sympy"
    assert SymbolicSystem({"e": "u - p"}, {"u": 0.0}, {"p": 0.0}).backend == "sympy"


def test_auto_prefers_symengine_when_present():
    # Measured (benchmarks/bench_symbolic.py): symengine sets up large systems ~5x faster and evaluates them faster.
    assert choose_backend("auto") == ("symengine" if symengine_available() else "sympy")


# -- bad input, one message each --------------------------------------------------------------------
def test_bad_backend_name():
    with pytest.raises(InputError, match="backend='simpy' is not known.*did you mean 'sympy'"):
        SymbolicSystem({"e": "u"}, {"u": 0.0}, {"p": 0.0}, backend="simpy")


def test_bad_backend_in_environment(monkeypatch):
    monkeypatch.setenv("CONTIN_SYMBOLIC_BACKEND", "symengin")
    with pytest.raises(InputError, match="CONTIN_SYMBOLIC_BACKEND='symengin' is not known.*did you mean 'symengine'"):
        choose_backend("auto")


def test_missing_symengine_is_reported(monkeypatch):
    import contin.systems._symbolic as module

    monkeypatch.setattr(module, "symengine_available", lambda: False)
    with pytest.raises(InputError, match="symengine .* cannot be imported; install it"):
        choose_backend("symengine")
    assert choose_backend("auto") == "sympy"


def test_equation_count_must_match():
    with pytest.raises(InputError, match="there are 2 equations but 1 unknowns"):
        SymbolicSystem({"a": "u", "b": "u - 1"}, {"u": 0.0}, {"p": 0.0})


def test_name_used_twice():
    with pytest.raises(InputError, match="u declared both in unknowns and in parameters"):
        SymbolicSystem({"a": "u"}, {"u": 0.0}, {"u": 0.0})


def test_function_name_as_variable():
    with pytest.raises(InputError, match="unknown name 'exp' is also a function name"):
        SymbolicSystem({"a": "exp - 1"}, {"exp": 0.0}, {"p": 0.0})


def test_name_that_is_not_an_identifier():
    with pytest.raises(InputError, match="parameter name 'lambda' is not usable in equations"):
        SymbolicSystem({"a": "u"}, {"u": 0.0}, {"lambda": 0.0})


def test_non_finite_parameter_value():
    with pytest.raises(InputError, match=r"parameters\['p'\] is nan, which is not finite"):
        SymbolicSystem({"a": "u - p"}, {"u": 0.0}, {"p": float("nan")})


def test_start_value_not_a_number():
    with pytest.raises(InputError, match=r"unknowns\['u'\] \(start value\) is 'zero', which is not a number"):
        SymbolicSystem({"a": "u - p"}, {"u": "zero"}, {"p": 0.0})


def test_undeclared_symbol_in_sympy_expression():
    u, r = sympy.symbols("u r")
    with pytest.raises(InputError, match="equation 'f0' uses symbol 'r', which is not declared"):
        SymbolicSystem.from_sympy([u - r], {u: 0.0}, {"p": 0.0})


def test_unsupported_sympy_function():
    u = sympy.Symbol("u")
    with pytest.raises(InputError, match="equation 'f0' uses gamma, which contin cannot compile"):
        SymbolicSystem.from_sympy([sympy.gamma(u) - 1], {u: 1.0}, {"p": 0.0})


def test_parse_error_names_the_equation():
    with pytest.raises(InputError, match=r"^equation 'heat', column 5: name 'zz' is not declared"):
        SymbolicSystem({"heat": "u + zz"}, {"u": 0.0}, {"p": 0.0})


def test_unknown_kind():
    with pytest.raises(InputError, match="kind='ode45' is not known"):
        SymbolicSystem({"a": "u - p"}, {"u": 0.0}, {"p": 0.0}, kind="ode45")


def test_compile_expression_needs_a_symbolic_system():
    plain = contin.CallableSystem(lambda u, p: u - p, ["u"], {"p": 0.0})
    with pytest.raises(InputError, match="compile_expression needs a SymbolicSystem"):
        compile_expression(plain, "u")


def test_event_expression_error_names_the_event():
    system = SymbolicSystem({"e": "u - p"}, {"u": 0.0}, {"p": 0.0})
    with pytest.raises(InputError, match=r"^event 'hot', column 1: name 'y' is not declared"):
        expression_event(system, "hot", "y - 1")


def test_from_sympy_with_wrong_number_of_names():
    x = sympy.Symbol("x")
    with pytest.raises(InputError, match="equations names 2 equations but 1 expressions were given"):
        SymbolicSystem.from_sympy([x - 1], {x: 0.0}, {"p": 0.0}, equations=["a", "b"])


def test_expressions_are_sympy_on_both_back_ends():
    for backend in ("sympy", "symengine") if symengine_available() else ("sympy",):
        system = SymbolicSystem({"e": "u**2 - p"}, {"u": 1.0}, {"p": 1.0}, backend=backend)
        u, p = system.symbols["u"], system.symbols["p"]
        assert system.expressions == {"e": u**2 - p}


@pytest.mark.parametrize("backend", BACKENDS)
def test_values_outside_the_real_domain_are_nan_not_errors(backend):
    # A negative base to a fractional power has no real value: both back ends say nan (common practice).
    system = SymbolicSystem({"e": "u**(1/3) - p"}, {"u": 1.0}, {"p": 0.0}, backend=backend)
    assert np.isnan(system.residual(np.array([-8.0]), np.array([0.0]))).all()
    assert system.residual(np.array([8.0]), np.array([0.0]))[0] == pytest.approx(2.0, rel=1e-15)
