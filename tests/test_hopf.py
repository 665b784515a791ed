"""Hopf points of ODE equilibria: the Brusselator's published Hopf point, neutral saddles, options."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin
from catalogue import brusselator, neutral_saddle_ode


@pytest.mark.parametrize("a", [1.0, 2.5])
def test_brusselator_hopf_point_and_frequency(a):
    # Hopf at B = 1 + A^2 with angular frequency A (Lefever & Nicolis, J. Theor. Biol. 30, 1971).
    problem = brusselator(a)
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    assert branch.status is contin.Status.BOUND_REACHED, branch.message
    (hopf,) = branch.special("hopf")
    assert hopf.values["B"] == pytest.approx(1.0 + a * a, abs=1e-8)
    assert hopf.values["u"] == pytest.approx(a, abs=1e-8)            # equilibrium u = A, v = B/A
    assert hopf.values["v"] == pytest.approx((1.0 + a * a) / a, abs=1e-8)
    assert hopf.info["angular_frequency"] == pytest.approx(a, abs=1e-8)
    assert hopf.info["period"] == pytest.approx(2 * math.pi / a, abs=1e-8)
    assert set(hopf.info) == {"angular_frequency", "period", "first_lyapunov_coefficient"}
    assert hopf.name == "Hopf point"
    assert hopf.located_to <= 1e-9
    assert branch.special("branch_point") == ()
    assert branch.special("fold") == ()
    assert "notes" not in branch.stats


def test_brusselator_traced_downwards_finds_the_same_hopf_point():
    # Lefever & Nicolis 1971: B = 1 + A^2 = 5 for A = 2, whichever way the branch is walked.
    problem = brusselator(2.0)
    branch = contin.trace(problem.system, {"u": 2.0, "v": 4.0}, free="B", parameters={"B": 8.0}, direction=-1,
                          step=0.05, bounds={"B": (0.5, 10.0)})
    (hopf,) = branch.special("hopf")
    assert hopf.values["B"] == pytest.approx(5.0, abs=1e-8)
    assert hopf.info["angular_frequency"] == pytest.approx(2.0, abs=1e-8)


def test_a_third_decoupled_stable_variable_does_not_move_the_hopf_point():
    # dw/dt = -2 w + (u - A) adds a real eigenvalue -2 and leaves the Brusselator's pair alone:
    # Hopf still at B = 1 + A^2, frequency A (Lefever & Nicolis 1971).
    a = 1.5

    def residual(x, p):
        u, v, w = x
        big_a, big_b = p
        return [big_a - (big_b + 1) * u + u * u * v, big_b * u - u * u * v, -2.0 * w + (u - big_a)]

    system = contin.CallableSystem(residual, ["u", "v", "w"], {"A": a, "B": 0.5}, kind="ode")
    branch = contin.trace(system, {"u": a, "v": 0.5 / a, "w": 0.0}, free="B", step=0.05, bounds={"B": (0.5, 6.0)})
    (hopf,) = branch.special("hopf")
    assert hopf.values["B"] == pytest.approx(1.0 + a * a, abs=1e-8)  # finite-difference Jacobian: still 1e-8
    assert hopf.info["angular_frequency"] == pytest.approx(a, abs=1e-8)


def test_symbolic_brusselator_from_text():
    # The same published point (Lefever & Nicolis 1971) through compiled exact Jacobians.
    system = contin.SymbolicSystem(
        {"u_rate": "A - (B + 1)*u + u**2*v", "v_rate": "B*u - u**2*v"}, {"u": 3.0, "v": 0.5 / 3.0},
        {"A": 3.0, "B": 0.5}, kind="ode", cache=False,
    )
    branch = contin.trace(system, free="B", step=0.1, bounds={"B": (0.5, 12.0)})
    (hopf,) = branch.special("hopf")
    assert hopf.values["B"] == pytest.approx(10.0, abs=1e-8)
    assert hopf.info["angular_frequency"] == pytest.approx(3.0, abs=1e-8)


@settings(derandomize=True, max_examples=10, deadline=None)
@given(st.floats(min_value=0.5, max_value=3.0, allow_nan=False))
def test_brusselator_hopf_law_for_any_a(a):
    # B = 1 + A^2, angular frequency A, for every A > 0 (Lefever & Nicolis, J. Theor. Biol. 30, 1971).
    problem = brusselator(a)
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    (hopf,) = branch.special("hopf")
    assert hopf.values["B"] == pytest.approx(1.0 + a * a, abs=1e-8)
    assert hopf.info["angular_frequency"] == pytest.approx(a, abs=1e-8)


def test_neutral_saddle_is_not_a_hopf_point_and_leaves_a_note():
    # Eigenvalues of [[p, 1], [1, -1]] are real; they sum to zero at p = 1 as +-sqrt(2) (exact).
    problem = neutral_saddle_ode()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    assert branch.status is contin.Status.BOUND_REACHED, branch.message
    assert branch.special("hopf") == ()
    (note,) = branch.stats["notes"]
    assert note.startswith("neutral saddle (real eigenvalues -1.41421 and 1.41421) at u = 0.5, v = 0.5, p = 1")
    assert "not a Hopf point" in note
    assert branch.to_dict()["stats"]["notes"] == [note]


def test_detect_can_leave_hopf_out_of_an_ode_trace():
    problem = brusselator(1.0)
    branch = contin.trace(problem.system, problem.start, detect=("fold", "branch_point"), **problem.trace)
    assert branch.special("hopf") == ()
    assert branch.status is contin.Status.BOUND_REACHED


def test_algebraic_systems_are_not_tested_for_hopf_points():
    # The same equations as an algebraic system: the Jacobian's eigenvalues mean nothing, nothing is reported.
    problem = brusselator(1.0)
    ode = problem.system
    algebraic = contin.CallableSystem(ode.residual_function, ["u", "v"], {"A": 1.0, "B": 0.5},
                                      jacobian=ode.jacobian_function, parameter_jacobian=ode.parameter_jacobian_function)
    branch = contin.trace(algebraic, problem.start, **problem.trace)
    assert branch.special("hopf") == ()
    assert branch.special_points[-1].kind == "bound"


def test_hopf_point_in_json_output():
    problem = brusselator(1.0)
    document = contin.trace(problem.system, problem.start, **problem.trace).to_dict()
    (hopf,) = [sp for sp in document["special_points"] if sp["kind"] == "hopf"]
    assert hopf["values"]["B"] == pytest.approx(2.0, abs=1e-8)  # Lefever & Nicolis 1971: 1 + A^2
    assert hopf["info"]["angular_frequency"] == pytest.approx(1.0, abs=1e-8)


def test_hopf_points_are_plotted_in_words():
    from contin.base._plot import describe_kind

    assert describe_kind("hopf") == "Hopf point"
    assert describe_kind("branch_point") == "branch point"


def test_detect_misspelt_hopf_suggests_the_name():
    problem = brusselator(1.0)
    with pytest.raises(contin.InputError, match=r"detect names 'hoph', .*; did you mean 'hopf'\?"):
        contin.trace(problem.system, problem.start, detect=("hoph",), **problem.trace)


def test_detect_refuses_a_name_that_is_not_a_string():
    problem = brusselator(1.0)
    with pytest.raises(contin.InputError, match=r"detect names 1, which is not a special point the trace can look for"):
        contin.trace(problem.system, problem.start, detect=(1,), **problem.trace)


def test_hopf_sign_changes_only_through_a_zero_pair_sum():
    # The pair-product sign is a polynomial's sign: a collision of two real eigenvalues into a complex
    # pair (here at trace^2 = 4 det) does not change it; the crossing of the imaginary axis does.
    from contin.tracing._bifurcation import hopf_sign

    def jacobian(trace_value, determinant):
        return np.array([[trace_value, -determinant], [1.0, 0.0]])  # eigenvalues solve l^2 - tr l + det = 0

    assert hopf_sign(jacobian(-2.1, 1.0)) == hopf_sign(jacobian(-1.9, 1.0)) == -1  # real pair -> complex pair
    assert hopf_sign(jacobian(0.1, 1.0)) == 1                                        # across the axis
    assert hopf_sign(jacobian(0.0, 1.0)) == 0


@pytest.mark.parametrize("limit, computed", [(20, True), (19, False), (None, True)])
def test_a_sparse_hopf_point_gets_its_lyapunov_coefficient_up_to_the_size_limit(monkeypatch, limit, computed):
    # The chain of oscillators with a cubic -z |z|^2 damping (10 cells, 20 unknowns): its first Hopf
    # point (p = 0.98) is supercritical (a negative coefficient). Above LYAPUNOV_SIZE unknowns on the sparse
    # path the coefficient is not computed (nan); at the limit itself it is, and under the default limit
    # (None: not patched) 20 unknowns are well inside it.
    from test_sparse import oscillator_chain

    import contin.tracing._trace as driver

    if limit is not None:
        monkeypatch.setattr(driver, "LYAPUNOV_SIZE", limit)
    branch = contin.trace(oscillator_chain(10, 0.1), free="p", step=0.1, max_step=0.5, bounds={"p": (-0.5, 1.5)})
    assert branch.stats["linear_solver"] == "sparse_lu"
    (first, *_) = branch.special("hopf")
    coefficient = first.info["first_lyapunov_coefficient"]
    if computed:
        assert math.isfinite(coefficient) and coefficient < 0.0
    else:
        assert math.isnan(coefficient)
