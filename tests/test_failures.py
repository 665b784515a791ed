"""Every failure is a status and a one-line message, never a traceback: non-finite values and overflows
at the start (naming the equation and the operation), and failures of linear algebra inside the engine."""

from __future__ import annotations

import warnings

import numpy as np
import pytest

import contin
import contin.tracing._trace
from contin.commands._cli import main


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


def symbolic(equations: dict, unknowns: dict, backend: str) -> contin.SymbolicSystem:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # two independent equations: a structure warning, not the point here
        return contin.SymbolicSystem(equations, unknowns, {"p": 1.0}, backend=backend)


@pytest.mark.parametrize("backend", ["symengine", "sympy"])
@pytest.mark.parametrize("equation, start, words", [
    ("v*exp(v) - p", 800.0, "exp overflows (its argument is 800, above 709.783)"),
    ("log(v - 1) - p", -2.0, "log of -3, which is not positive"),
    ("1/(v - 2) - p", 2.0, "division by zero (1/(v - 2) with v - 2 = 0)"),
    ("sqrt(v) - p", -4.0, "a non-integer power (0.5) of the negative number -4 (sqrt(v))"),
    ("cosh(v) - p", -720.0, "cosh overflows (its argument is -720)"),
])
def test_a_non_finite_start_names_the_equation_and_what_failed(backend, equation, start, words):
    system = symbolic({"plain": "u - p", "burner": equation}, {"u": 1.0, "v": start}, backend)
    branch = contin.trace(system, free="p")
    assert branch.status is contin.Status.NON_FINITE and not branch.success
    assert branch.message.startswith("stopped: the residual or the Jacobian is not finite at the start point: "
                                     "the residual of equation 'burner' is ")
    assert f"at u = 1, v = {start:g}, p = 1: {words}; start nearer a solution" in branch.message
    assert "singular" not in branch.message
    assert branch.points.shape == (0, 3) and "\n" not in branch.message


def test_a_callable_overflow_is_told_by_numpy_and_names_the_equation():
    system = contin.CallableSystem(lambda u, p: np.exp(u) - p[0], ["u"], {"p": 1.0}, start=[1000.0],
                                   equations=["burn"])
    branch = contin.trace(system, free="p")
    assert branch.status.label == "non_finite"
    assert "the residual of equation 'burn' is inf at u = 1000, p = 1: exp overflows;" in branch.message
    with pytest.raises(contin.TraceError, match="equation 'burn' is inf"):
        contin.trace(system, free="p", throw=True)


def test_a_non_finite_jacobian_at_the_start_names_the_entry():
    def jacobian(u, p):
        return np.array([[1.0, 0.0], [np.inf, 1.0]])

    system = contin.CallableSystem(lambda u, p: np.array([u[0] - p[0], u[1]]), ["a", "b"], {"p": 0.5},
                                   start=[0.5, 0.0], jacobian=jacobian, equations=["first", "second"])
    branch = contin.trace(system, free="p")
    assert branch.status.label == "non_finite"
    assert "the derivative of equation 'second' by a is inf at a = 0.5, b = 0, p = 0.5" in branch.message


def test_the_command_line_reports_a_start_overflow_in_one_line(tmp_path, capsys):
    path = tmp_path / "furnace.toml"
    path.write_text('[unknowns]\nt = 900.0\n[parameters]\np = 1.0\n[equations]\nheat = "exp(t) - p"\n'
                    '[trace]\nfree = "p"\n')
    assert main(["run", str(path)]) == 1
    out, err = capsys.readouterr()
    assert "status: non_finite (failure)" in out and "exp overflows (its argument is 900" in out
    assert "Traceback" not in out + err


def brusselator() -> contin.SymbolicSystem:
    return contin.SymbolicSystem({"x_rate": "1 - (b + 1)*x + x**2*y", "y_rate": "b*x - x**2*y"},
                                 {"x": 1.0, "y": 1.0}, {"b": 1.0}, kind="ode")


def test_a_linear_algebra_failure_inside_the_engine_is_a_status(monkeypatch):
    calls = []

    def failing(jacobian):
        calls.append(1)
        if len(calls) > 3:
            raise np.linalg.LinAlgError("Eigenvalues did not converge")
        return 1, 0

    monkeypatch.setattr(contin.tracing._trace, "hopf_signature", failing)
    branch = contin.trace(brusselator(), free="b", bounds={"b": (0.5, 3.0)}, step=0.1)
    assert branch.status is contin.Status.LINEAR_ALGEBRA_FAILED and not branch.success
    assert branch.message.startswith("stopped: a linear-algebra routine failed after the point x = 1, y = ")
    assert "(LinAlgError: Eigenvalues did not converge); check the system" in branch.message
    assert len(branch.points) == 3 and isinstance(branch.cause, np.linalg.LinAlgError)
    last = ", ".join(f"{name} = {value:.6g}" for name, value in zip(branch.columns, branch.points[-1]))
    assert f"failed after the point {last} (LinAlgError" in branch.message  # the last point kept
    with pytest.raises(contin.TraceError, match="linear-algebra routine failed"):
        contin.trace(brusselator(), free="b", bounds={"b": (0.5, 3.0)}, step=0.1, throw=True)


def test_a_linear_algebra_failure_at_the_start_says_so(monkeypatch):
    def failing(jacobian):
        raise np.linalg.LinAlgError("SVD did not converge")

    monkeypatch.setattr(contin.tracing._trace, "hopf_signature", failing)
    branch = contin.trace(brusselator(), free="b", bounds={"b": (0.5, 3.0)})
    assert branch.status.label == "linear_algebra_failed"
    assert branch.message == ("stopped: a linear-algebra routine failed at the start point (LinAlgError: SVD did "
                              "not converge); check the system for huge or non-finite derivatives there, or trace "
                              "with a smaller max_step")


def test_new_statuses_have_labels_and_messages():
    assert contin.Status.NON_FINITE.label == "non_finite" and not contin.Status.NON_FINITE.success
    assert contin.Status.LINEAR_ALGEBRA_FAILED.label == "linear_algebra_failed"
    labels = [status.label for status in contin.Status]
    assert len(set(labels)) == len(labels)
    assert {"completed", "bound_reached", "max_points", "closed_loop", "terminal_event", "step_too_small",
            "start_not_converged", "not_converged", "interrupted"} <= set(labels)


def test_switching_at_a_point_where_the_jacobian_is_not_finite_is_refused():
    pitchfork = contin.CallableSystem(lambda u, p: u * (p[0] - u ** 2), ["u"], {"p": -1.0}, start=[0.0])
    branch = contin.trace(pitchfork, free="p", bounds={"p": (-1.0, 1.0)}, step=0.1)
    (point,) = branch.special("branch_point")
    broken = contin.CallableSystem(lambda u, p: u * (p[0] - u ** 2), ["u"], {"p": -1.0}, start=[0.0],
                                   jacobian=lambda u, p: np.array([[np.nan]]))
    with pytest.raises(contin.InputError, match="the Jacobian dF/dx is not finite at the given branch point"):
        contin.switch_branch(branch, point, broken)
