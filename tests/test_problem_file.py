"""TOML problem files: the public keys, and one test of the message for each kind of mistake."""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest

from contin.base._errors import InputError
from contin.systems._problem import EVENT_KEYS, TOP_KEYS, TRACE_KEYS, load_problem
from contin.studies._run import run_problem

GOOD = textwrap.dedent(
    """\
    kind = "algebraic"
    [unknowns]
    u = -1.5
    [parameters]
    p = 1.875
    [constants]
    c = 1.0
    [equations]
    balance = "u**3 - c*u + p"
    [trace]
    free = "p"
    direction = -1
    bounds = { p = [-2.0, 2.0] }
    max_points = 2000
    step = 0.01
    min_step = 1e-8
    max_step = 0.5
    tolerance = 1e-10
    at = { p = [0.1, 0.2] }
    [[events]]
    name = "u_zero"
    expression = "u"
    terminal = false
    direction = 0
    """
)


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


def write(tmp_path, text, name="problem.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def fails(tmp_path, text) -> str:
    path = write(tmp_path, text)
    with pytest.raises(InputError) as caught:
        load_problem(path)
    message = str(caught.value)
    assert message.startswith(str(path))
    return message


def test_public_keys_are_exactly_those_of_the_format():
    # The sections of the published format, unchanged, then the optional [sweep] (contin sweep).
    assert TOP_KEYS == ("kind", "unknowns", "parameters", "constants", "equations", "trace", "events", "sweep")
    # The keys of the published format (issue 3), unchanged, then the optional ones added since.
    assert TRACE_KEYS[:9] == ("free", "direction", "bounds", "max_points", "step", "min_step", "max_step", "tolerance", "at")
    assert TRACE_KEYS[9:] == ("folds", "detect", "corrector", "relative_tolerance", "max_turn", "max_correction",
                              "follow", "start_at", "explore", "max_branches", "linear_solver")
    assert EVENT_KEYS == ("name", "expression", "terminal", "direction")


def test_good_file_loads_and_traces(tmp_path):
    problem = load_problem(write(tmp_path, GOOD))
    assert problem.system.unknowns == ("u",) and problem.system.parameters == ("p",)
    assert problem.system.constants == {"c": 1.0}
    assert dict(problem.start) == {"u": -1.5}
    assert dict(problem.options) == {
        "free": "p", "direction": -1, "bounds": {"p": (-2.0, 2.0)}, "max_points": 2000, "step": 0.01,
        "min_step": 1e-8, "max_step": 0.5, "tolerance": 1e-10, "at": {"p": [0.1, 0.2]},
    }
    assert [event.name for event in problem.events] == ["u_zero"]
    branch = run_problem(problem)
    assert branch.status.success
    folds = sorted(sp.values["p"] for sp in branch.special_points if sp.kind == "fold")
    # u^3 - u + p: folds at p = -+2/(3 sqrt 3) (exact).
    np.testing.assert_allclose(folds, [-2 / (3 * math.sqrt(3)), 2 / (3 * math.sqrt(3))], atol=1e-9)
    zero = [sp for sp in branch.special_points if sp.name == "u_zero"]
    assert len(zero) == 1 and abs(zero[0].values["u"]) < 1e-9
    # Three solutions at p = 0.1 and at p = 0.2 on the S-shaped branch (exact: the cubic has 3 real roots there).
    assert sorted(round(sp.values["p"], 12) for sp in branch.at) == [0.1] * 3 + [0.2] * 3


def test_minimal_file_uses_engine_defaults(tmp_path):
    text = '[unknowns]\nu = 1.0\n[parameters]\np = 1.0\n[equations]\ne = "u**2 - p"\n[trace]\nfree = "p"\n'
    problem = load_problem(write(tmp_path, text))
    assert dict(problem.options) == {"free": "p"} and problem.events == () and problem.system.kind == "algebraic"


def test_ode_kind(tmp_path):
    problem = load_problem(write(tmp_path, GOOD.replace('kind = "algebraic"', 'kind = "ode"')))
    assert problem.system.kind == "ode"


# -- one test per mistake ---------------------------------------------------------------------------
def test_unknown_top_level_key(tmp_path):
    message = fails(tmp_path, GOOD.replace("[trace]", "[tracing]"))
    assert "line 10: unknown key 'tracing' in the top level" in message and "did you mean 'trace'" in message


def test_unknown_trace_key_with_line(tmp_path):
    message = fails(tmp_path, GOOD.replace("max_step = 0.5", "max_stepp = 0.5"))
    assert "line 17: unknown key 'max_stepp' in [trace]" in message and "did you mean 'max_step'" in message


def test_unknown_event_key(tmp_path):
    message = fails(tmp_path, GOOD.replace("terminal = false", "terminall = false"))
    assert "line 23: unknown key 'terminall' in [[events]] number 1" in message and "did you mean 'terminal'" in message


@pytest.mark.parametrize("section", ["unknowns", "parameters", "equations", "trace"])
def test_missing_section(tmp_path, section):
    lines = GOOD.splitlines()
    start = lines.index(f"[{section}]")
    end = next((k for k in range(start + 1, len(lines)) if lines[k].startswith("[")), len(lines))
    message = fails(tmp_path, "\n".join(lines[:start] + lines[end:]) + "\n")
    assert f"missing section [{section}]" in message


def test_free_parameter_not_declared(tmp_path):
    message = fails(tmp_path, GOOD.replace('free = "p"', 'free = "pp"'))
    assert "line 11: free = 'pp' is not a declared parameter (parameters: p); did you mean 'p'?" in message


def test_free_missing(tmp_path):
    assert '[trace] needs free = "name"' in fails(tmp_path, GOOD.replace('free = "p"\n', ""))


def test_equation_count_differs_from_unknown_count(tmp_path):
    message = fails(tmp_path, GOOD.replace('balance = "u**3 - c*u + p"', 'balance = "u**3 - c*u + p"\nextra = "u - 1"'))
    assert "line 8: [equations] has 2 equations but [unknowns] has 1 unknowns" in message


def test_start_value_not_a_number(tmp_path):
    message = fails(tmp_path, GOOD.replace("u = -1.5", 'u = "minus one and a half"'))
    assert "line 3: unknowns.u = 'minus one and a half' is not a number" in message


def test_parameter_value_not_a_number(tmp_path):
    assert "line 5: parameters.p = true is not a number" in fails(tmp_path, GOOD.replace("p = 1.875", "p = true")).replace("True", "true")


def test_non_finite_start(tmp_path):
    assert "unknowns.u = nan is not finite" in fails(tmp_path, GOOD.replace("u = -1.5", "u = nan"))


def test_equation_not_text(tmp_path):
    assert "line 9: equations.balance must be the expression as text" in fails(tmp_path, GOOD.replace('"u**3 - c*u + p"', "3"))


def test_parse_error_names_file_line_equation_and_column(tmp_path):
    message = fails(tmp_path, GOOD.replace('"u**3 - c*u + p"', '"u**3 - c*u + __import__(1)"'))
    assert "line 9: equation 'balance', column 14: function '__import__' is not allowed" in message


def test_structurally_singular_file(tmp_path):
    text = GOOD.replace("u = -1.5", "u = -1.5\nv = 0.0").replace('balance = "u**3 - c*u + p"', 'balance = "u**3 - c*u + p"\nsecond = "u - p"')
    message = fails(tmp_path, text)
    assert "structurally singular system: equations balance and second involve only unknown u; unknown v appears in no equation" in message


def test_bad_direction(tmp_path):
    assert "line 12: direction = 2; use 1" in fails(tmp_path, GOOD.replace("direction = -1", "direction = 2"))


def test_bad_bounds_order(tmp_path):
    assert "bounds.p = [2.0, -2.0]; give [low, high] with low < high" in fails(tmp_path, GOOD.replace("[-2.0, 2.0]", "[2.0, -2.0]"))


def test_bounds_on_undeclared_coordinate(tmp_path):
    message = fails(tmp_path, GOOD.replace("bounds = { p =", "bounds = { q ="))
    assert "line 13: bounds names 'q', which is not a coordinate of the branch (coordinates: u, p)" in message


def test_at_not_numbers(tmp_path):
    assert "at.p = ['a']; give a list of numbers" in fails(tmp_path, GOOD.replace("at = { p = [0.1, 0.2] }", 'at = { p = ["a"] }'))


def test_negative_step(tmp_path):
    assert "line 15: step = -0.01 must be positive" in fails(tmp_path, GOOD.replace("step = 0.01", "step = -0.01"))


def test_bad_max_points(tmp_path):
    assert "max_points = 1.5; give a whole number" in fails(tmp_path, GOOD.replace("max_points = 2000", "max_points = 1.5"))


def test_event_without_expression(tmp_path):
    message = fails(tmp_path, GOOD.replace('expression = "u"\n', ""))
    assert 'line 20: [[events]] number 1 needs expression = "..."' in message


def test_event_expression_refused(tmp_path):
    message = fails(tmp_path, GOOD.replace('expression = "u"', 'expression = "u.imag"'))
    assert "line 22: event 'u_zero', column 1: attribute access" in message


def test_event_bad_terminal(tmp_path):
    assert "terminal = 'no'; use true or false" in fails(tmp_path, GOOD.replace("terminal = false", 'terminal = "no"'))


def test_not_toml(tmp_path):
    assert "not valid TOML" in fails(tmp_path, "[unknowns\nu = 1")


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="no such problem file"):
        load_problem(tmp_path / "absent.toml")


def test_engine_refusal_is_prefixed_with_the_file(tmp_path):
    problem = load_problem(write(tmp_path, GOOD.replace("min_step = 1e-8", "min_step = 1.0")))
    with pytest.raises(InputError) as caught:
        run_problem(problem)
    assert str(caught.value).startswith(f"{problem.path}: [trace]: ")


def test_name_that_cannot_appear_in_equations(tmp_path):
    message = fails(tmp_path, GOOD.replace("p = 1.875", '"p-1" = 1.875'))
    assert "line 5: parameters.'p-1' cannot be used in equations" in message


def test_ode_file_traces_equilibria(tmp_path):
    text = GOOD.replace('kind = "algebraic"', 'kind = "ode"').replace('balance = "u**3 - c*u + p"', 'balance = "-(u**3 - c*u + p)"')
    branch = run_problem(load_problem(write(tmp_path, text)))
    folds = sorted(sp.values["p"] for sp in branch.special_points if sp.kind == "fold")
    # Equilibria of du/dt = -(u^3 - u + p): the same folds, p = -+2/(3 sqrt 3) (exact).
    np.testing.assert_allclose(folds, [-2 / (3 * math.sqrt(3)), 2 / (3 * math.sqrt(3))], atol=1e-9)


# -- optional [trace] keys: folds, detect, corrector -----------------------------------------------

def test_optional_folds_detect_and_corrector_keys(tmp_path):
    from contin import load_problem, run_problem

    path = tmp_path / "pitchfork.toml"
    path.write_text(
        'kind = "algebraic"\n[unknowns]\nu = 0.0\n[parameters]\np = -1.0\n[equations]\nf = "u*(p - u**2)"\n'
        '[trace]\nfree = "p"\nbounds = { p = [-1.0, 1.0] }\nfolds = ["u"]\ndetect = ["fold", "branch_point"]\n'
        'corrector = "arclength"\n'
    )
    problem = load_problem(path)
    assert problem.options["detect"] == ("fold", "branch_point")
    branch = run_problem(problem)
    # u(p - u^2) traced along u = 0 meets the pitchfork at p = 0 (Kuznetsov, ch. 3).
    (point,) = branch.special("branch_point")
    assert point.values["p"] == pytest.approx(0.0, abs=1e-9)


@pytest.mark.parametrize("line, message", [
    ('detect = ["branch point"]', "detect names 'branch point'"),
    ('detect = "fold"', "give a list of names"),
    ('folds = ["w"]', "folds names 'w'"),
    ('corrector = "secant"', "corrector = 'secant'; use \"arclength\" or \"local\""),
])
def test_bad_optional_trace_keys(tmp_path, line, message):
    from contin import InputError, load_problem

    path = tmp_path / "bad.toml"
    path.write_text('[unknowns]\nu = 0.0\n[parameters]\np = -1.0\n[equations]\nf = "u*(p - u**2)"\n'
                    f'[trace]\nfree = "p"\n{line}\n')
    with pytest.raises(InputError, match=message.replace("(", r"\(").replace(")", r"\)").replace("[", r"\[")):
        load_problem(path)


def test_the_geometric_step_limits_are_problem_file_keys(tmp_path):
    path = tmp_path / "limits.toml"
    path.write_text('[unknowns]\nx = 1.0\n[parameters]\np = 0.0\n[equations]\ncircle = "x**2 + p**2 - 1"\n'
                    '[trace]\nfree = "p"\nmax_turn = 0.05\nmax_correction = 0.2\nmax_step = 0.5\nmax_points = 4000\n')
    branch = run_problem(load_problem(path))
    assert branch.status.label == "closed_loop"
    turns = np.arccos(np.clip(np.sum(branch.tangents[1:] * branch.tangents[:-1], axis=1), -1.0, 1.0))
    assert turns.max() <= 0.05 + 1e-9
    base = ('[unknowns]\nx = 1.0\n[parameters]\np = 0.0\n[equations]\ncircle = "x**2 + p**2 - 1"\n'
            '[trace]\nfree = "p"\n')
    for bad, message in (("max_turn = 4.0", "below pi"), ("max_correction = 0", "must be positive")):
        path.write_text(base + bad + "\n")
        with pytest.raises(InputError, match=message):
            load_problem(path)
