"""Newton's convergence test: the absolute residual test, the scaled test for badly scaled equations,
and the message when Newton stalls at rounding.

The badly scaled case is the one-dimensional Bratu problem u'' + lambda e^u = 0, u(0) = u(1) = 0,
written with the 1/h^2 of central differences left in (terms of size 1e5 at n = 200), whose continuum
fold is at lambda_c = 3.51383071912516 (Boundary Value Problems 2013:142).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from contin.commands._cli import main
from contin.tracing._corrector import residual_converged, term_sizes
from contin.systems._problem import load_problem
from contin.studies._run import run_problem

LAMBDA_C = 3.51383071912516  # Boundary Value Problems 2013:142 (fold of the continuous problem)
INTERIOR = 200


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


def bratu_text(interior: int, *extra: str) -> str:
    """Problem file with each equation (u[i-1] - 2 u[i] + u[i+1]) n2 + lam exp(u[i]), n2 = 1/h^2."""
    lines = ["[unknowns]", *[f"u{i} = 0.0" for i in range(interior)], "[parameters]", "lam = 0.0", "[constants]",
             f"n2 = {float((interior + 1) ** 2)!r}", "[equations]"]
    for i in range(interior):
        left = f"u{i - 1}" if i > 0 else "0"
        right = f"u{i + 1}" if i < interior - 1 else "0"
        lines.append(f'node{i} = "({left} - 2*u{i} + {right})*n2 + lam*exp(u{i})"')
    lines += ["[trace]", 'free = "lam"', "step = 0.1", "max_step = 0.5", "tolerance = 1e-11", *extra,
              f"bounds = {{ lam = [-0.1, 4.0], u{interior // 2} = [-1.0, 2.0] }}"]
    return "\n".join(lines) + "\n"


def well_scaled_fold(interior: int) -> float:
    """The same discretisation multiplied through by h^2 (terms of order one), traced with the absolute test."""
    h2 = 1.0 / (interior + 1) ** 2
    second = np.diag(-2.0 * np.ones(interior)) + np.diag(np.ones(interior - 1), 1) + np.diag(np.ones(interior - 1), -1)
    system = contin.CallableSystem(
        lambda u, p: second @ u + h2 * p[0] * np.exp(u), interior, {"lam": 0.0},
        jacobian=lambda u, p: second + np.diag(h2 * p[0] * np.exp(u)),
        parameter_jacobian=lambda u, p: (h2 * np.exp(u)).reshape(-1, 1), start=np.zeros(interior))
    branch = contin.trace(system, free="lam", step=0.1, max_step=0.5, tolerance=1e-11, relative_tolerance=0.0,
                          bounds={"lam": (-0.1, 4.0), f"u{interior // 2}": (-1.0, 2.0)})
    assert branch.success, branch.message
    (fold,) = branch.special("fold")
    return fold.values["lam"]


@pytest.mark.parametrize("backend", ["symengine", "sympy"])
def test_badly_scaled_bratu_traces_through_its_fold_on_both_back_ends(tmp_path, backend):
    path = tmp_path / "bratu.toml"
    path.write_text(bratu_text(INTERIOR))
    problem = load_problem(path, backend=backend)
    branch = run_problem(problem)
    assert branch.success, branch.message
    assert branch.status.label == "bound_reached" and branch.points[-1][INTERIOR // 2] == pytest.approx(2.0)
    (fold,) = branch.special("fold")
    # The discrete fold: the same grid written with terms of order one gives the same fold, and
    # central differences put it about 1.8 h^2 below the continuum value (O(h^2), common practice).
    assert fold.values["lam"] == pytest.approx(well_scaled_fold(INTERIOR), abs=1e-8)
    assert 0.0 < LAMBDA_C - fold.values["lam"] < 2.5 / (INTERIOR + 1) ** 2
    # Every returned point meets the documented test: |G_i| <= tolerance + relative_tolerance * w_i.
    options = contin.TraceOptions()
    for row in branch.points[::5]:
        u, p = row[:-1], np.array([row[-1]])
        residual, ju, jp = problem.system.linearise(u, p, 0)
        sizes = term_sizes(np.column_stack([ju, jp]), row)
        assert np.all(np.abs(residual) <= 1e-11 + options.relative_tolerance * sizes)


def test_the_absolute_test_alone_stalls_and_the_message_says_so_and_names_the_option(tmp_path):
    path = tmp_path / "bratu.toml"
    path.write_text(bratu_text(INTERIOR, "relative_tolerance = 0"))
    branch = run_problem(load_problem(path, backend="symengine"))
    assert branch.status.label == "step_too_small" and not branch.success
    assert "Newton stalled near rounding" in branch.message
    assert "raise relative_tolerance (now 0) or tolerance (now 1e-11)" in branch.message
    assert branch.stats["rejections"].get("Newton stalled near rounding", 0) >= 1


def test_well_scaled_traces_are_the_same_with_and_without_the_scaled_test():
    # The scaled test only ever accepts a stalled iteration: where Newton converges, nothing changes.
    system = contin.CallableSystem(lambda u, p: np.array([u[0] ** 3 - u[0] + p[0], u[1] - np.sin(u[0]) * p[0]]),
                                   ["a", "b"], {"p": -1.0}, start=[1.3247, 0.0])
    keywords = dict(free="p", bounds={"p": (-1.0, 1.0)}, step=0.05, max_step=0.2)
    scaled = contin.trace(system, **keywords)
    absolute = contin.trace(system, relative_tolerance=0.0, **keywords)
    assert scaled.success and [sp.kind for sp in scaled.special_points] == ["fold", "fold", "bound"]
    assert np.array_equal(scaled.points, absolute.points)
    assert np.array_equal(scaled.newton_iterations, absolute.newton_iterations)


@given(st.floats(1e-3, 1e6), st.integers(0, 2))
@settings(max_examples=40, derandomize=True, deadline=None)
def test_the_scaled_test_follows_the_equation_when_it_is_multiplied_through(factor, row):
    # w_i scales with equation i, so a residual relative to its terms passes or fails alike after scaling.
    rng = np.random.default_rng(7)
    jacobian = rng.normal(size=(3, 4)) * 1e4
    x = rng.normal(size=4)
    residual = np.zeros(3)
    residual[row] = 5e-14 * term_sizes(jacobian, x)[row]
    scaled_jacobian, scaled_residual = jacobian.copy(), residual.copy()
    scaled_jacobian[row] *= factor
    scaled_residual[row] *= factor
    assert term_sizes(scaled_jacobian, x)[row] == pytest.approx(factor * term_sizes(jacobian, x)[row], rel=1e-12)
    assert residual_converged(scaled_residual, scaled_jacobian, x, 0.0, 1e-13, True)
    assert not residual_converged(scaled_residual * 4, scaled_jacobian, x, 0.0, 1e-13, True)
    # Not stalled: only the absolute test counts.
    assert not residual_converged(scaled_residual, scaled_jacobian, x, 0.0, 1e-13, False)


@pytest.mark.parametrize("value, message", [
    (-1e-13, "relative_tolerance=-1e-13 must be a finite number, zero or positive"),
    (float("nan"), "relative_tolerance=nan must be a finite number"),
    ("1e-13", "relative_tolerance='1e-13' must be a finite number"),
    (1.0, "relative_tolerance=1.0 must be below 1"),
])
def test_bad_relative_tolerance_is_refused(value, message):
    with pytest.raises(contin.InputError, match=message.replace("(", r"\(").replace(")", r"\)")):
        contin.TraceOptions(relative_tolerance=value)


CUBIC = """[unknowns]
u = 1.3
[parameters]
p = -1.0
[equations]
balance = "u**3 - u + p"
[trace]
free = "p"
bounds = { p = [-1.0, 1.0] }
"""


@pytest.mark.parametrize("text, message", [
    ("relative_tolerance = -1", "relative_tolerance = -1.0 must be at least 0 and below 1"),
    ('relative_tolerance = "tiny"', "trace.relative_tolerance = 'tiny' is not a number"),
    ("relative_tolerence = 1e-12", "did you mean 'relative_tolerance'"),
])
def test_bad_relative_tolerance_in_a_problem_file_names_the_key(tmp_path, text, message):
    path = tmp_path / "cubic.toml"
    path.write_text(CUBIC + text + "\n")
    with pytest.raises(contin.InputError, match=message):
        load_problem(path)


def test_the_problem_file_key_reaches_the_trace_and_the_run_record(tmp_path, capsys):
    path = tmp_path / "cubic.toml"
    path.write_text(CUBIC + "relative_tolerance = 1e-12\n")
    assert load_problem(path).options["relative_tolerance"] == 1e-12
    record = tmp_path / "record.json"
    assert main(["run", str(path), "--record", str(record), "--json"]) == 0
    capsys.readouterr()
    assert json.loads(record.read_text())["options"]["relative_tolerance"] == 1e-12
    path.write_text(CUBIC)
    assert main(["run", str(path), "--record", str(record), "--json"]) == 0
    assert json.loads(record.read_text())["options"]["relative_tolerance"] == contin.TraceOptions().relative_tolerance


def test_a_start_that_stalls_at_rounding_says_so_instead_of_asking_for_a_better_guess():
    # One equation with terms of 1e12: its residual cannot get below about 1e-4 in floating point.
    system = contin.CallableSystem(lambda u, p: np.array([1e12 * (u[0] - p[0]) + 1e-3 * np.sin(1e6 * u[0])]),
                                   ["u"], {"p": 0.3}, start=[0.3 + 1e-9])
    branch = contin.trace(system, free="p", relative_tolerance=0.0, max_points=3)
    assert branch.status.label == "start_not_converged"
    assert "(Newton stalled near rounding (largest residual" in branch.message
    assert branch.message.endswith("raise relative_tolerance (now 0) or tolerance (now 1e-10)))")
    assert contin.trace(system, free="p", max_points=3).success
