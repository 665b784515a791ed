"""Pure-fluid saturation curves: published values, the landing on the critical point, exact output rows."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from contin import InputError
from contin_thermo.models._components import custom_component, lookup
from contin_thermo.models._eos import GAS_CONSTANT, family
from contin_thermo.curves._pure import CubicFluid, critical_point, saturation_curve

# An invented fluid, with round critical constants, for reduced-variable checks.
TEST_FLUID = custom_component("test fluid", 400.0, 4.0e6, 0.2)


def reduced_vdw(tr):
    result = saturation_curve(TEST_FLUID, "vdw", at_temperatures=[tr * 400.0])
    (row,) = result.at
    vc = family("vdw").z_c * GAS_CONSTANT * 400.0 / 4.0e6
    return row[1] / 4.0e6, row[2] / vc, row[3] / vc


@pytest.mark.parametrize(
    "tr, pr, vl, vv",
    [
        # Maxwell's equal-area construction (Maxwell, Nature 11 (1875) 357) on the reduced van der Waals
        # equation, solved independently at 30 digits (docs/check-values.md shows how).
        (0.99, 0.9604791, 0.8309141, 1.2429533),
        (0.95, 0.8118792, 0.6841221, 1.7270712),
        (0.90, 0.6469984, 0.6034019, 2.3488424),
    ],
)
def test_reduced_van_der_waals_coexistence(tr, pr, vl, vv):
    got = reduced_vdw(tr)
    assert got == (pytest.approx(pr, abs=6e-8), pytest.approx(vl, abs=6e-8), pytest.approx(vv, abs=6e-8))


def test_van_der_waals_acentric_factor():
    # Van der Waals: reduced Psat at Tr = 0.7 is 0.2004585 (the same 30-digit Maxwell construction), so
    # omega = -0.302 by Pitzer's definition (Pitzer 1955: omega = -log10(Psat/Pc) - 1 at Tr = 0.7).
    pr, _, _ = reduced_vdw(0.7)
    assert pr == pytest.approx(0.2004585, abs=6e-8)
    assert -math.log10(pr) - 1.0 == pytest.approx(-0.302, abs=5e-4)


@pytest.mark.parametrize("eos", ["srk", "pr"])
def test_acentric_factor_round_trip(eos):
    # Pitzer (1955): omega = -log10(Psat/Pc) - 1 at Tr = 0.7; SRK and PR were fitted to give it back
    # (Soave 1972; Peng & Robinson 1976); issue 4 asks for 0.005 over omega = 0 ... 0.5.
    for omega in (0.0, 0.1, 0.2, 0.3, 0.4, 0.5):
        fluid = custom_component("round trip", 500.0, 3.0e6, omega)
        (row,) = saturation_curve(fluid, eos, at_temperatures=[350.0]).at
        assert -math.log10(row[1] / 3.0e6) - 1.0 == pytest.approx(omega, abs=0.005)


@pytest.mark.parametrize("name, boiling", [
    ("propane", 231.1),  # NIST Chemistry WebBook, 231.1 +/- 0.2 K (memory)
    ("n-butane", 272.7),  # NIST Chemistry WebBook, 273 +/- 1 K; 272.66 K (memory)
])
def test_normal_boiling_points_with_peng_robinson(name, boiling):
    result = saturation_curve(name, "pr", at_pressures=[101325.0])
    (row,) = result.at
    assert row[1] == pytest.approx(101325.0, rel=1e-10)
    assert row[0] == pytest.approx(boiling, abs=1.0)


@pytest.mark.parametrize("eos", ["vdw", "rk", "srk", "pr"])
@pytest.mark.parametrize("name", ["methane", "n-decane", "water"])
def test_the_curve_lands_on_the_critical_point(eos, name):
    result = saturation_curve(name, eos)
    assert result.success and result.status == "terminal_event"
    critical = critical_point(name, eos).special("critical")["values"]
    landing = result.special("critical")
    assert landing["index"] == len(result.points) - 1
    last = dict(zip(result.columns, result.points[-1]))
    for key, value in (("T", last["T"]), ("P", last["P"]), ("v", last["v_liquid"]), ("v", last["v_vapour"])):
        assert value == pytest.approx(critical[key], rel=1e-9)
    assert last["h_vaporisation"] == 0.0
    # No other point has equal phases (the trivial solution): the vapour is always the larger volume.
    v_l, v_v = result.column("v_liquid")[:-1], result.column("v_vapour")[:-1]
    assert np.all(v_v > v_l * (1 + 1e-6))
    assert np.all(np.diff(result.column("T")) > 0) and np.all(np.diff(result.column("P")) > 0)


def test_mean_field_width_near_the_critical_point():
    # Van der Waals: (rho_l - rho_v)/rho_c -> 4 (1 - Tr)^(1/2) with a relative correction O(1 - Tr)
    # (mean-field result, textbook); at 1 - Tr = 1e-8 the two agree to ~1e-8.
    eps = np.array([1e-4, 1e-6, 1e-8])
    result = saturation_curve(TEST_FLUID, "vdw", at_temperatures=list(400.0 * (1 - eps)))
    rho_c = 1.0 / (family("vdw").z_c * GAS_CONSTANT * 400.0 / 4.0e6)
    rows = result.at[np.argsort(-result.at[:, 0])]  # eps ascending
    width = (rows[:, 4] - rows[:, 5]) / rho_c
    assert width / (4 * np.sqrt(np.sort(eps))) == pytest.approx(np.ones(3), rel=2e-4)
    assert width[0] / (4e-4) == pytest.approx(1.0, rel=1e-6)


@pytest.mark.parametrize("eos", ["rk", "srk", "pr"])
def test_near_critical_points_follow_the_square_root_law(eos):
    # Right, not merely converged: A(eps) = (rho_l - rho_v)/(rho_c sqrt(eps)) tends to a constant with
    # a correction linear in eps (mean-field scaling, textbook). Fit A0 + A1 eps at eps = 1e-4, 1e-5
    # and check the points at 1e-6 and at 1 - T/Tc = 1e-8 against it.
    eps = np.array([1e-4, 1e-5, 1e-6, 1e-8])
    temperatures = 369.83 * (1 - eps)
    result = saturation_curve("propane", eos, at_temperatures=list(temperatures))
    rows = result.at[np.argsort(result.at[:, 0])]  # eps descending, as in the array above
    eps_true = 1 - rows[:, 0] / 369.83
    rho_c = 1.0 / critical_point("propane", eos).points[0, 2]
    a = (rows[:, 4] - rows[:, 5]) / (rho_c * np.sqrt(eps_true))
    slope = (a[0] - a[1]) / (eps_true[0] - eps_true[1])
    a0 = a[1] - slope * eps_true[1]
    assert a[2] == pytest.approx(a0 + slope * eps_true[2], rel=1e-7)
    assert a[3] == pytest.approx(a0 + slope * eps_true[3], rel=1e-6)
    assert rows[3, 4] > rows[3, 5]  # distinct phases at 1 - T/Tc = 1e-8


@settings(derandomize=True, max_examples=15, deadline=None)
@given(tr=st.floats(0.45, 0.999), omega=st.floats(-0.2, 1.0), eos=st.sampled_from(["vdw", "rk", "srk", "pr"]))
def test_rows_have_equal_pressures_and_fugacities(tr, omega, eos):
    # Law: every output row is a coexistence state, checked with the direct pressure and fugacity
    # formulas (not the divided differences the trace solves) (common practice).
    fluid = CubicFluid(custom_component("x", 300.0, 5.0e6, omega), family(eos))
    (row,) = saturation_curve(fluid, at_temperatures=[tr * 300.0]).at
    x_l, x_v = row[2] / fluid.b, row[3] / fluid.b
    p = row[1] / fluid.pressure_unit
    assert float(fluid.reduced_pressure(x_l, tr)) == pytest.approx(p, rel=1e-9)
    assert float(fluid.reduced_pressure(x_v, tr)) == pytest.approx(p, rel=1e-9)
    assert fluid.ln_fugacity_coefficient(x_l, tr, p) == pytest.approx(fluid.ln_fugacity_coefficient(x_v, tr, p), abs=1e-10)


def test_enthalpy_of_vaporisation_is_clapeyrons():
    # Clapeyron (1834): h = T (v_v - v_l) dPsat/dT; dPsat/dT here by central differences of exact rows.
    T, h = 300.0, 1e-3
    result = saturation_curve("propane", "pr", at_temperatures=[T - h, T, T + h])
    rows = result.at
    slope = (rows[2, 1] - rows[0, 1]) / (2 * h)
    assert rows[1, 6] == pytest.approx(T * (rows[1, 3] - rows[1, 2]) * slope, rel=1e-7)
    # Propane near its normal boiling point: about 19 kJ/mol (NIST Chemistry WebBook 19.0; memory).
    nbp = saturation_curve("propane", "pr", at_pressures=[101325.0]).at[0]
    assert nbp[6] == pytest.approx(19.0e3, rel=0.05)


def test_rows_at_requested_values_are_exact_and_sorted():
    result = saturation_curve("ethane", "srk", at_temperatures=[250.0, 200.0, 305.32], at_pressures=[1e6])
    temperatures = result.at[:, 0]
    assert list(np.diff(temperatures) > 0) == [True, True, True]
    assert 200.0 in temperatures and 250.0 in temperatures
    assert result.at[-1, 0] == pytest.approx(305.32, rel=1e-12)  # the critical point itself
    assert np.min(np.abs(result.at[:, 1] / 1e6 - 1)) < 1e-13


def test_low_start_temperature_is_accurate():
    # From 0.15 Tc, where the vapour volume is about 1e12 liquid volumes: still equal fugacities.
    result = saturation_curve("methane", "pr", from_temperature=0.15 * 190.56)
    assert result.success
    first = result.points[0]
    fluid = CubicFluid(lookup("methane"), family("pr"))
    x_l, x_v = first[2] / fluid.b, first[3] / fluid.b
    assert x_v / x_l > 1e10
    p = first[1] / fluid.pressure_unit
    assert fluid.ln_fugacity_coefficient(x_l, 0.15, p) == pytest.approx(fluid.ln_fugacity_coefficient(x_v, 0.15, p), abs=1e-9)
    assert float(fluid.reduced_pressure(x_v, 0.15)) == pytest.approx(p, rel=1e-10)


def test_default_start_is_four_tenths_of_tc():
    result = saturation_curve("nitrogen", "pr")
    assert result.points[0, 0] == pytest.approx(0.4 * 126.2, rel=1e-14)


def test_json_and_csv_layout(tmp_path):
    result = saturation_curve("propane", "pr", at_pressures=[101325.0])
    document = result.to_dict()
    assert document["columns"] == ["T", "P", "v_liquid", "v_vapour", "rho_liquid", "rho_vapour", "h_vaporisation"]
    assert [sp["kind"] for sp in document["special_points"]] == ["critical"]
    assert sorted(document["special_points"][0]["values"]) == ["P", "T", "v"]
    assert set(document["stats"]) >= {"setup_seconds", "trace_seconds", "newton_iterations", "jacobian_evaluations"}
    assert "Caution" in document["caution"]
    assert len(document["at"]) == 1 and len(document["at"][0]) == 7
    path = result.to_csv(tmp_path / "propane.csv")
    text = path.read_text()
    assert text.startswith("# saturation curve\n") and "# Caution: cubic equations of state" in text
    assert "# units: T [K], P [Pa]" in text
    header = [line for line in text.splitlines() if not line.startswith("#")][0]
    assert header == "T,P,v_liquid,v_vapour,rho_liquid,rho_vapour,h_vaporisation"


@pytest.mark.parametrize("kwargs, message", [
    ({"at_temperatures": [400.0]}, r"--at-temperatures: 400 K is above the critical temperature 369.83 K of propane"),
    ({"at_temperatures": [100.0]}, r"--at-temperatures: 100 K is below the traced range, which starts at 147.932 K"),
    ({"at_pressures": [5e6]}, r"--at-pressures: 5e\+06 Pa is above the critical pressure 4.248e\+06 Pa of propane"),
    ({"at_pressures": [1.0]}, r"--at-pressures: 1 Pa is below the traced range, which starts at"),
    ({"at_pressures": [-1.0]}, r"--at-pressures: -1 Pa is not a positive pressure"),
    ({"at_temperatures": ["hot"]}, r"--at-temperatures: 'hot' is not a number"),
    ({"from_temperature": 400.0}, r"--from-temperature 400 K is not below the critical temperature 369.83 K"),
    ({"from_temperature": 20.0}, r"--from-temperature 20 K is below 0.1 Tc = 36.983 K"),
    ({"from_temperature": -5.0}, r"--from-temperature -5.0 must be a positive temperature in K"),
])
def test_bad_requests_are_refused(kwargs, message):
    with pytest.raises(InputError, match=message):
        saturation_curve("propane", "pr", **kwargs)


def test_unknown_fluid_and_family_are_refused():
    with pytest.raises(InputError, match=r"unknown component 'propan' in --fluid; did you mean 'propane'\?"):
        saturation_curve("propan", "pr")
    with pytest.raises(InputError, match=r"unknown equation of state 'srkk'.*did you mean 'srk'\?"):
        saturation_curve("propane", "srkk")


@pytest.mark.parametrize("order, offset", [(1, -1.0), (1, 1.0 - math.sqrt(2.0)), (1, 1.0), (2, 0.0)])
def test_narrow_and_wide_formulas_agree_where_they_meet(order, offset):
    # The closed forms switch from the (w, t) series to the (x_l, x_v) form at t/w^2 = 0.04; both
    # describe one smooth function, so they agree there (common practice: check a piecewise formula
    # at its seams).
    from contin_thermo.curves import _pure

    mu = 0.9
    w0 = 1.0 + offset + math.exp(mu)  # w at sigma = 0; solve t/w^2 = limit for sigma by bisection
    def rho(sigma):
        ph = _pure._Phases(mu, sigma)
        w, _ = ph.term(offset)
        return ph.t / (w * w)
    low, high = 0.0, 4.0
    for _ in range(200):
        middle = 0.5 * (low + high)
        low, high = (middle, high) if rho(middle) < _pure._SERIES_LIMIT else (low, middle)
    below = _pure._saturation_terms(_pure._Phases(mu, low * (1 - 1e-9)), offset, order)
    above = _pure._saturation_terms(_pure._Phases(mu, high * (1 + 1e-9)), offset, order)
    assert rho(low * (1 - 1e-9)) < _pure._SERIES_LIMIT <= rho(high * (1 + 1e-9))
    assert w0 > 0
    for a, b in zip(below, above, strict=True):
        assert a == pytest.approx(b, rel=1e-6, abs=1e-12)


def test_every_table_fluid_and_family_lands_on_its_critical_point():
    # Robustness set: the whole component table with all four families, from the default 0.4 Tc.
    from contin_thermo.models._components import all_components

    failures = []
    for component in all_components():
        for eos in ("vdw", "rk", "srk", "pr"):
            result = saturation_curve(component, eos)
            landing = result.special("critical")["values"] if result.success else None
            if landing is None or abs(landing["T"] / component.Tc - 1) > 1e-9 or abs(landing["P"] / component.Pc - 1) > 1e-9:
                failures.append((component.name, eos, result.status))
    assert failures == []


# -- notebook conveniences ------------------------------------------------------------------------

def test_curve_result_repr_plot_and_dataframe():
    from contin_thermo import saturation_curve

    result = saturation_curve("propane", "pr")
    text = repr(result)
    assert text.startswith("<saturation of propane (Peng-Robinson)") and "critical point T = 369.83 K" in text
    left, right = result.plot()
    assert left.get_xlabel().startswith("temperature") and right.get_ylabel().startswith("temperature")
    assert len(left.lines) >= 2  # the curve and the critical point
    frame = result.to_dataframe()
    assert list(frame.columns) == list(result.columns)
    assert frame["T"].iloc[-1] == pytest.approx(369.83, rel=1e-9)  # ends on the critical point
