"""The residual Helmholtz energy of the generic cubic and its compiled derivatives."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from contin_thermo.models import _helmholtz as helmholtz

R = 8.31446261815324  # J/(mol K), exact since the 2019 SI redefinition (Avogadro x Boltzmann)
PR = (1 + math.sqrt(2), 1 - math.sqrt(2))  # Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59
SRK = (1.0, 0.0)  # Soave, Chem. Eng. Sci. 27 (1972) 1197
VDW = (0.0, 0.0)  # van der Waals: attractive term a / v^2


def cubic_pressure(T, v, a, b, d1, d2):
    """The generic two-constant cubic P = RT/(v - b) - a/((v + d1 b)(v + d2 b)) (textbook form)."""
    return R * T / (v - b) - a / ((v + d1 * b) * (v + d2 * b))


@pytest.mark.parametrize("deltas", [PR, SRK, VDW], ids=["pr", "srk", "vdw"])
def test_pressure_from_helmholtz_is_the_cubic(deltas):
    # P = nRT/V - RT dF/dV (Michelsen & Mollerup 2007, ch. 3): must reproduce the cubic exactly.
    d = helmholtz.derivatives(*deltas)
    n, T, V, b, a = 2.0, 310.0, 3.1e-4, 4.4e-5, 0.55
    values = d.evaluate_scalar(n, T, V, n * b, n * n * a)
    pressure = n * R * T / V - R * T * values["F_V"]
    assert pressure == pytest.approx(cubic_pressure(T, V / n, a, b, *deltas), rel=1e-13)


def test_van_der_waals_limit():
    # delta1 = delta2 = 0: F = -n ln(1 - B/V) - D/(R T V) (the limit of the general form).
    d = helmholtz.derivatives(*VDW, order=1)
    n, T, V, B, D = 1.0, 250.0, 2e-4, 3e-5, 0.3
    expected = -n * math.log(1 - B / V) - D / (R * T * V)
    assert d.evaluate_scalar(n, T, V, B, D)["F"] == pytest.approx(expected, rel=1e-14)


def test_equal_deltas_are_the_limit_of_nearly_equal_ones():
    # The closed form for delta1 = delta2 must be the limit of the general expression.
    n, T, V, B, D = 1.0, 250.0, 2e-4, 3e-5, 0.3
    exact = helmholtz.derivatives(0.5, 0.5, order=1).evaluate_scalar(n, T, V, B, D)["F"]
    near = helmholtz.derivatives(0.5 + 1e-6, 0.5 - 1e-6, order=1).evaluate_scalar(n, T, V, B, D)["F"]
    assert near == pytest.approx(exact, rel=1e-9)


def test_delta_order_does_not_matter():
    a = helmholtz.derivatives(0.0, 1.0)
    b = helmholtz.derivatives(1.0, 0.0)
    assert a is b


@pytest.mark.parametrize("deltas", [PR, SRK], ids=["pr", "srk"])
def test_every_derivative_matches_central_differences(deltas):
    # Each compiled derivative against a central difference of the next-lower one (common practice).
    d = helmholtz.derivatives(*deltas, order=3)
    x0 = dict(n=1.3, T=280.0, V=2.5e-4, B=5.2e-5, D=0.61)
    base = d.evaluate_scalar(**x0)
    for name in d.names[1:]:
        parts = name[2:]
        parent = "F_" + parts[:-1] if len(parts) > 1 else "F"
        if parent not in base:  # canonical order: the parent may be listed with another order
            continue
        var = parts[-1]
        h = 1e-5 * abs(x0[var])
        up = d.evaluate_scalar(**{**x0, var: x0[var] + h})[parent]
        down = d.evaluate_scalar(**{**x0, var: x0[var] - h})[parent]
        numeric = (up - down) / (2 * h)
        scale = max(abs(base[name]), abs(base[parent]) / abs(x0[var]), 1e-12)
        assert abs(base[name] - numeric) <= 1e-6 * scale, name


def test_vector_evaluation_broadcasts_and_agrees_with_scalar():
    d = helmholtz.derivatives(*PR)
    volumes = np.array([1e-4, 2e-4, 5e-3])
    values = d.evaluate(1.0, 300.0, volumes, 4e-5, 0.5)
    assert values["F_VV"].shape == (3,)
    assert values["F_nn"].shape == (3,)  # identically zero, still broadcast
    for k, v in enumerate(volumes):
        scalar = d.evaluate_scalar(1.0, 300.0, v, 4e-5, 0.5)
        for name in d.names:
            assert values[name][k] == pytest.approx(scalar[name], rel=1e-12, abs=1e-300)


@settings(derandomize=True, max_examples=40, deadline=None)
@given(
    n=st.floats(0.1, 10.0),
    packing=st.floats(0.01, 0.9),
    T=st.floats(100.0, 800.0),
    a=st.floats(0.01, 5.0),
)
def test_euler_homogeneity_of_degree_one(n, packing, T, a):
    # F is homogeneous of degree 1 in (n, V, B) with D of degree 2: F = n F_n + V F_V + B F_B + 2 D F_D
    # (Euler's theorem; Michelsen & Mollerup 2007, ch. 2).
    d = helmholtz.derivatives(*PR)
    b = 4e-5
    B = n * b
    V = B / packing
    D = n * n * a
    v = d.evaluate_scalar(n, T, V, B, D)
    euler = n * v["F_n"] + V * v["F_V"] + B * v["F_B"] + 2 * D * v["F_D"]
    assert euler == pytest.approx(v["F"], rel=1e-9, abs=1e-12)


def test_names_of_order_three():
    names = helmholtz.derivative_names(3)
    assert names[0] == "F" and "F_VVV" in names and "F_BBD" in names and "F_TT" in names
    assert "F_TVV" not in names  # third order runs at fixed temperature


def test_bad_order_is_refused():
    with pytest.raises(ValueError, match="order=4 must be 1, 2 or 3"):
        helmholtz.derivatives(1.0, 0.0, order=4)


def test_bad_delta_is_refused():
    with pytest.raises(ValueError, match="delta1=nan must be a finite number"):
        helmholtz.derivatives(float("nan"), 0.0)


def test_expression_is_symbolic():
    import sympy

    F = helmholtz.helmholtz_expression(*SRK)
    n, T, V, B, D = sympy.symbols("n T V B D", positive=True)
    assert F.free_symbols == {n, T, V, B, D}
