"""The safe expression parser: what it reads, and every hostile input it refuses without running it."""

from __future__ import annotations

import builtins
import os
import subprocess

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from contin.base._errors import InputError
from contin.systems._parse import MAX_LENGTH, parse_expression

u, p = sympy.symbols("u p", real=True)
NAMES = {"u": u, "p": p, "k": sympy.Float(2.5)}


@pytest.fixture(autouse=True)
def nothing_runs(monkeypatch):
    """Fail the test if anything tries to start a process or import a module while parsing."""

    def refuse(*args, **kwargs):
        raise AssertionError("the parser tried to run something")

    monkeypatch.setattr(os, "system", refuse)
    monkeypatch.setattr(os, "popen", refuse)
    monkeypatch.setattr(subprocess, "Popen", refuse)
    real_import = builtins.__import__

    def guarded_import(name, *args, **kwargs):
        if name in ("os", "subprocess", "shutil", "socket"):
            raise AssertionError(f"the parser tried to import {name}")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", guarded_import)


def parse(text: str, label: str = "balance", library: str = "sympy"):
    if library == "symengine":
        import symengine

        names = {"u": symengine.Symbol("u"), "p": symengine.Symbol("p"), "k": symengine.RealDouble(2.5)}
        return parse_expression(text, names, label=label, library="symengine")
    return parse_expression(text, NAMES, label=label)


try:
    import symengine  # noqa: F401

    LIBRARIES = ["sympy", "symengine"]
except ImportError:  # the pure-sympy path must work alone
    LIBRARIES = ["sympy"]


# -- what it reads (exact: sympy identities) ------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("u**3 - u + p", u**3 - u + p),
        ("-u + +p", -u + p),
        ("u/p/2", u / p / 2),
        ("2**-1", sympy.Rational(1, 2)),
        ("k*u", 2.5 * u),
        ("exp(u) + log(p) + sqrt(u)", sympy.exp(u) + sympy.log(p) + sympy.sqrt(u)),
        ("sin(u)*cos(p) - tan(u) + sinh(p) + cosh(u) + tanh(p)",
         sympy.sin(u) * sympy.cos(p) - sympy.tan(u) + sympy.sinh(p) + sympy.cosh(u) + sympy.tanh(p)),
        ("abs(u) + min(u, p) + max(u, p, 1)", sympy.Abs(u) + sympy.Min(u, p) + sympy.Max(u, p, 1)),
        ("asin(u) + acos(u) + atan(u) + atan2(u, p) + asinh(u) + acosh(p) + atanh(u)",
         sympy.asin(u) + sympy.acos(u) + sympy.atan(u) + sympy.atan2(u, p) + sympy.asinh(u) + sympy.acosh(p)
         + sympy.atanh(u)),
        ("pi*u + E", sympy.pi * u + sympy.E),
        ("1e-3*u", sympy.Float(1e-3) * u),
        ("  u  ", u),
    ],
)
def test_reads_arithmetic_on_declared_names(text, expected):
    assert sympy.simplify(parse(text) - expected) == 0
    if "symengine" in LIBRARIES:
        # The same text built directly in symengine is the same expression (compared in sympy).
        assert sympy.simplify(parse(text, library="symengine")._sympy_().subs({sympy.Symbol("u"): u, sympy.Symbol("p"): p}) - expected) == 0


def test_declared_name_takes_precedence_over_constant():
    young = sympy.Symbol("E", real=True)
    assert parse_expression("E*u", {"E": young, "u": u}) == young * u


def test_long_sum_is_not_deep_nesting():
    text = " + ".join(["u"] * 1500)
    assert parse(text) == 1500 * u


def test_float_keeps_full_precision():
    value = 0.1234567890123456789
    assert float(parse(repr(value))) == value


# -- hostile input: refused with a clear message, nothing executed --------------------------------
@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("__import__('os').system('echo owned')", "attribute access"),
        ("__import__('os')", "function '__import__' is not allowed"),
        ("u.real", "attribute access"),
        ("u.__class__.__mro__", "attribute access"),
        ("(lambda: 1)()", "only calls of allowed functions"),
        ("lambda: 1", "lambda functions are not allowed"),
        ("[x for x in (1, 2)]", "comprehensions are not allowed"),
        ("sum(x for x in (1, 2))", "function 'sum' is not allowed"),
        ("{x: 1 for x in (1,)}", "comprehensions are not allowed"),
        ("u[0]", "subscripts"),
        ("f'{u}'", "f-strings are not allowed"),
        ("q + 1", "name 'q' is not declared"),
        ("open('secret')", "function 'open' is not allowed"),
        ("eval('1')", "function 'eval' is not allowed"),
        ("exec('1')", "function 'exec' is not allowed"),
        ("exp(x=u)", "takes no keyword arguments"),
        ("exp(*u)", "starred arguments are not allowed"),
        ("u if p else 1", "'if ... else'"),
        ("u < p", "comparisons are not allowed"),
        ("u and p", "'and' / 'or'"),
        ("u // 2", "the operator '//' is not allowed"),
        ("u % 2", "the operator '%' is not allowed"),
        ("u ^ 2", "the operator '^' is not allowed"),
        ("not u", "the operator 'not'"),
        ("'text'", "text is not a number"),
        ("True", "True is not a number"),
        ("1j", "is not a number"),
        ("(u, p)", "tuples are not allowed"),
        ("[u]", "lists are not allowed"),
        ("(y := 1)", "assignment expressions"),
        ("exp", "'exp' is a function"),
        ("exp(u, p)", "exp() takes 1 argument, got 2"),
        ("max(u)", "max() takes at least 2 arguments, got 1"),
        ("u = 1", "cannot read the expression"),
        ("u +", "cannot read the expression"),
        ("", "the expression is empty"),
        ("u\n+ p", "spans several lines"),
        ("1/0", "division by zero"),
        ("0**-1", "division by zero"),
        ("log(0)", "log(0) is undefined"),
        ("1e999", "not finite"),
    ],
)
@pytest.mark.parametrize("library", LIBRARIES)
def test_hostile_or_wrong_input_is_refused(text, message, library):
    with pytest.raises(InputError) as caught:
        parse(text, library=library)
    assert message in str(caught.value)
    assert str(caught.value).startswith("balance")


@pytest.mark.parametrize(
    "text",
    ["9**9**9**9", "10**100000", "2**-1000000", "(10**3000)**1000", "1.5**1e300", "9**9**9", "7**(10**8)"],
)
@pytest.mark.parametrize("library", LIBRARIES)
def test_huge_constant_powers_are_refused_at_once(text, library):
    with pytest.raises(InputError, match="too large"):
        parse(text, library=library)


@pytest.mark.parametrize("text", ["u**(10**9)", "(2*u)**100000", "u**-20000"])
@pytest.mark.parametrize("library", LIBRARIES)
def test_huge_exponents_of_unknowns_are_refused(text, library):
    with pytest.raises(InputError, match="exponent .* is too large"):
        parse(text, library=library)


def test_moderate_powers_are_computed_exactly():
    assert parse("2**100") == sympy.Integer(2) ** 100
    assert parse("u**50") == u**50


@pytest.mark.parametrize(
    "text",
    ["(" * 300 + "u" + ")" * 300, "-" * 100_000 + "u", "exp(" * 150 + "u" + ")" * 150, "2**" * 150 + "1"],
)
@pytest.mark.parametrize("library", LIBRARIES)
def test_very_deep_nesting_is_refused_clearly(text, library):
    with pytest.raises(InputError, match="nested too deeply"):
        parse(text, library=library)


def test_very_long_input_is_refused_before_parsing():
    with pytest.raises(InputError, match=f"the limit is {MAX_LENGTH}"):
        parse("u+" * MAX_LENGTH + "u")


def test_unknown_library_is_a_programming_error():
    with pytest.raises(ValueError, match="library must be 'sympy' or 'symengine'"):
        parse_expression("u", NAMES, library="abacus")


def test_text_other_than_str_is_refused():
    with pytest.raises(InputError, match="expected the expression as text"):
        parse_expression(b"u", NAMES, label="balance")


def test_message_names_equation_and_column():
    with pytest.raises(InputError) as caught:
        parse("u**3 + qq", label="balance")
    # "balance, column 8": qq starts at the 8th character of 'u**3 + qq' (counted by hand).
    assert str(caught.value).startswith("balance, column 8: name 'qq' is not declared")


def test_columns_count_characters_not_bytes():
    with pytest.raises(InputError) as caught:
        parse_expression("u + 'ü' + q", NAMES, label="e")
    assert "column 5" in str(caught.value)


def test_undeclared_name_gets_a_suggestion():
    with pytest.raises(InputError, match="did you mean 'p'"):
        parse("u + pp")


def test_unknown_function_gets_a_suggestion():
    with pytest.raises(InputError, match="did you mean 'exp'"):
        parse("expp(u)")


@settings(derandomize=True, max_examples=60, deadline=None)
@given(
    st.floats(-1e6, 1e6, allow_nan=False), st.floats(-1e6, 1e6, allow_nan=False),
    st.integers(-12, 12), st.floats(0.1, 10.0),
)
def test_numbers_round_trip_exactly(a, b, power, value):
    """For all coefficients, the parsed expression evaluates as the same arithmetic done in Python."""
    expression = parse(f"{a!r}*u**{power} + {b!r}*p - (u - {b!r})/2")
    got = float(expression.subs({u: value, p: 3.0}))
    want = a * value**power + b * 3.0 - (value - b) / 2
    assert got == pytest.approx(want, rel=1e-12, abs=1e-12 * (abs(a) + abs(b) + 1))
