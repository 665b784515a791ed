"""The safe parser refuses complex constants, names that change under normalisation, and sizes that
would make the symbolic set-up explode; the set-up has a time limit."""

from __future__ import annotations

import cmath
import math

import pytest
import sympy
from hypothesis import given, settings, strategies as st

import contin
from contin.systems._parse import MAX_FACTORS, MAX_MINMAX_ARGUMENTS, MAX_POWER_CHAIN, parse_expression
from hostile import run

BACKENDS = ["sympy", "symengine"]


def problem_text(equation: str, *, event: str | None = None, names: str = "k = 2.0") -> str:
    text = f"""\
[unknowns]
x = 1.0
[parameters]
p = 0.5
{names}
[equations]
balance = "{equation}"
[trace]
free = "p"
bounds = {{ p = [0.0, 1.0] }}
"""
    if event is not None:
        text += f'[[events]]\nname = "mark"\nexpression = "{event}"\n'
    return text


def refused(tmp_path, capsys, text, *extra):
    path = tmp_path / "case.toml"
    path.write_text(text, encoding="utf-8")
    code, out, err = run(capsys, "run", str(path), "--quiet", *extra)
    assert code == 2, (out, err)
    assert err.count("\n") == 1 and "Traceback" not in err
    return err


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("constant", ["sqrt(-1)", "log(-1)", "(-2)**0.5", "acos(2)", "asin(-3)", "acosh(0.5)"])
def test_a_complex_constant_in_an_equation_is_refused_naming_it(tmp_path, capsys, backend, constant):
    err = refused(tmp_path, capsys, problem_text(f"x - p - max(x, {constant})"), "--backend", backend)
    assert "equation 'balance'" in err and f"the constant {constant} is not a real number" in err


@pytest.mark.parametrize("backend", BACKENDS)
def test_a_complex_constant_in_an_event_is_refused_naming_the_event(tmp_path, capsys, backend):
    err = refused(tmp_path, capsys, problem_text("x - p - 1", event="x - sqrt(-1)"), "--backend", backend)
    assert "event 'mark'" in err and "the constant sqrt(-1) is not a real number" in err


def test_the_imaginary_unit_in_a_sympy_expression_is_refused():
    x, p = sympy.symbols("x p")
    with pytest.raises(contin.InputError, match="equation 'f0' holds the imaginary unit"):
        contin.SymbolicSystem.from_sympy([x - p - sympy.I], {x: 1.0}, {p: 0.5}, cache=False)


REAL_FUNCTIONS = {"sqrt": cmath.sqrt, "log": cmath.log, "acos": cmath.acos, "asin": cmath.asin,
                  "acosh": cmath.acosh, "atanh": cmath.atanh}


@settings(max_examples=60, derandomize=True, deadline=None)
@given(st.sampled_from(sorted(REAL_FUNCTIONS)), st.integers(-4, 4), st.sampled_from(["sympy", "symengine"]))
def test_every_constant_the_parser_accepts_is_real(name, argument, library):
    # The law: a constant call is either refused, or real; the refusal says the constant is not real
    # exactly when the principal value (cmath) has a non-zero imaginary part.
    exact = None
    try:
        exact = REAL_FUNCTIONS[name](argument)
    except (ValueError, ZeroDivisionError):
        pass  # log(0), atanh(+-1): a pole
    names = {"x": sympy.Symbol("x")} if library == "sympy" else {"x": __import__("symengine").Symbol("x")}
    try:
        value = parse_expression(f"x - {name}({argument})", names, library=library)
    except contin.InputError as error:
        assert exact is None or exact.imag != 0.0 or not math.isfinite(abs(exact)), (name, argument, str(error))
        return
    assert exact is not None and exact.imag == 0.0
    number = complex(value.subs(names["x"], 0))
    assert number.imag == 0.0 and number.real == pytest.approx(-exact.real)


def test_names_that_change_under_normalisation_are_refused(tmp_path, capsys):
    # full-width k (U+FF4B) reads as k in expressions: declared beside k it would be silently the same name
    err = refused(tmp_path, capsys, problem_text("x - \uff4b*p - 1", names='k = 2.0\n"\uff4b" = 3.0'))
    assert "parameters.'\uff4b' changes under Unicode normalisation to 'k'" in err and "line 6" in err
    err = refused(tmp_path, capsys, problem_text("x - \uff4b*p - 1", names='"\uff4b" = 3.0'))
    assert "write it as 'k'" in err
    with pytest.raises(contin.InputError, match="parameter name '\uff4b' changes under Unicode normalisation"):
        contin.SymbolicSystem({"f": "x - p"}, {"x": 1.0}, {"p": 1.0, "\uff4b": 2.0}, cache=False)


@pytest.mark.parametrize("equation, message", [
    ("max(" + ", ".join(f"x*{k} + p" for k in range(80)) + ")", f"max() has 80 arguments (nested calls included); "
                                                                 f"the limit is {MAX_MINMAX_ARGUMENTS}"),
    ("min(x, min(" + ", ".join(f"x - {k}" for k in range(20)) + "))", "min() has 21 arguments"),
    ("*".join(f"(x + {k}*p)" for k in range(1999)), f"one product has 1999 factors; the limit is {MAX_FACTORS}"),
    ("x - (" + " * ".join(["(x + p)"] * 60) + ") * (" + " / ".join(["(x - p)"] * 60) + ")",
     "one product has 120 factors"),
    ("x*exp(" + "*".join(f"(x + {k}*p)" for k in range(300)) + ")", "one product has 300 factors"),
    ("x - " + "**".join(["(x + p)"] * 12), f"a chain of 12 powers (a**b**c...); the limit is {MAX_POWER_CHAIN}"),
])
def test_shapes_whose_derivatives_explode_are_refused_before_symbolic_work(tmp_path, capsys, equation, message):
    err = refused(tmp_path, capsys, problem_text(equation))
    assert "equation 'balance'" in err and message in err


def test_many_constant_factors_and_short_max_are_still_accepted():
    system = contin.SymbolicSystem({"f": "x - " + "*".join(["1.001"] * 300) + " * max(x, p, 1, 2)"}, {"x": 1.0},
                                   {"p": 0.5}, cache=False)
    assert system.residual([3.0], [0.5])[0] == pytest.approx(3.0 - 1.001**300 * 3.0)


def test_the_symbolic_set_up_has_a_time_limit(monkeypatch):
    monkeypatch.setenv("CONTIN_SETUP_SECONDS", "1e-9")
    with pytest.raises(contin.InputError, match=r"the symbolic set-up took longer than 1e-09 s \(the limit; "
                                                r"CONTIN_SETUP_SECONDS changes it\)"):
        contin.SymbolicSystem({"f": "x**2 - p"}, {"x": 1.0}, {"p": 1.0}, cache=False)
    monkeypatch.setenv("CONTIN_SETUP_SECONDS", "soon")
    with pytest.raises(contin.InputError, match="CONTIN_SETUP_SECONDS='soon' is not a number of seconds"):
        contin.SymbolicSystem({"f": "x**2 - p"}, {"x": 1.0}, {"p": 1.0}, cache=False)
    monkeypatch.setenv("CONTIN_SETUP_SECONDS", "off")
    assert contin.SymbolicSystem({"f": "x**2 - p"}, {"x": 1.0}, {"p": 1.0}, cache=False).residual([2.0], [1.0])[0] == 3.0
