"""Spinodals and the critical point: closed forms, the independent solve, and the Helmholtz module."""

import numpy as np
import pytest

from contin_thermo.models._components import custom_component, lookup
from contin_thermo.models._eos import FAMILIES, GAS_CONSTANT, family
from contin_thermo.curves._pure import CubicFluid, critical_point, saturation_curve, spinodal_curve

FLUIDS = ["methane", "n-decane", "carbon dioxide", "water"]


@pytest.mark.parametrize("eos", sorted(FAMILIES))
@pytest.mark.parametrize("name", FLUIDS)
def test_numerical_critical_point_matches_the_closed_form(eos, name):
    # By construction of Omega_a, Omega_b the critical point is (Tc, Pc, Zc R Tc/Pc) (common practice).
    result = critical_point(name, eos)
    (row,) = result.points
    c, f = lookup(name), family(eos)
    assert row[0] == pytest.approx(c.Tc, rel=1e-12)
    assert row[1] == pytest.approx(c.Pc, rel=1e-12)
    assert row[2] == pytest.approx(f.z_c * GAS_CONSTANT * c.Tc / c.Pc, rel=1e-12)
    assert row[4] == pytest.approx(f.z_c, rel=1e-12)


@pytest.mark.parametrize("eos", sorted(FAMILIES))
def test_spinodals_meet_at_the_critical_point(eos):
    result = spinodal_curve("ethane", eos)
    assert result.success
    critical = critical_point("ethane", eos).special("critical")["values"]
    landing = result.special("critical")["values"]
    for key in ("T", "P", "v"):
        assert landing[key] == pytest.approx(critical[key], rel=1e-9)
    last = result.points[-1]
    assert last[1] == pytest.approx(last[3], rel=1e-12) and last[2] == pytest.approx(last[4], rel=1e-9)
    assert np.all(result.points[:-1, 1] < result.points[:-1, 3] * (1 - 1e-6))


@pytest.mark.parametrize("eos", sorted(FAMILIES))
def test_spinodal_rows_have_zero_slope(eos):
    fluid = CubicFluid(lookup("propane"), family(eos))
    result = spinodal_curve(fluid, at_temperatures=[200.0, 300.0, 360.0])
    for row in result.at:
        theta = row[0] / 369.83
        for v in (row[1], row[3]):
            slope, _, _ = fluid.reduced_pressure_derivatives(v / fluid.b, theta)
            scale = abs(theta / (v / fluid.b - 1.0) ** 2)
            assert abs(slope) < 1e-10 * scale


def test_van_der_waals_spinodal_closed_form():
    # Van der Waals spinodal in reduced variables: Tr = (3 vr - 1)^2 / (4 vr^3) (textbook).
    fluid = custom_component("reduced", 1.0, 1.0, 0.0)
    result = spinodal_curve(fluid, "vdw", from_temperature=0.3)
    vc = 0.375 * GAS_CONSTANT
    for column in (1, 3):
        vr = result.points[:, column] / vc
        assert result.points[:, 0] == pytest.approx((3 * vr - 1) ** 2 / (4 * vr**3), rel=1e-10)


def test_spinodals_bracket_the_saturation_states():
    # Metastable stretches lie between saturation and spinodal (common practice):
    # v_l,sat < v_l,spin < v_v,spin < v_v,sat and P_l,spin < Psat < P_v,spin.
    temperatures = [250.0, 300.0, 350.0]
    sat = saturation_curve("propane", "pr", at_temperatures=temperatures).at
    spin = spinodal_curve("propane", "pr", at_temperatures=temperatures).at
    for s, p in zip(sat, spin, strict=True):
        assert s[0] == p[0]
        assert s[2] < p[1] < p[3] < s[3]
        assert p[2] < s[1] < p[4]


def test_spinodal_refuses_temperatures_above_tc():
    from contin import InputError

    with pytest.raises(InputError, match=r"--at-temperatures: 400 K is above the critical temperature 369.83 K"):
        spinodal_curve("propane", "pr", at_temperatures=[400.0])


@pytest.mark.parametrize("eos", ["vdw", "rk", "srk", "pr"])
def test_pressure_and_fugacity_agree_with_the_helmholtz_module(eos):
    # Consistency: the pure-fluid formulas here and the one symbolic residual Helmholtz energy of
    # contin_thermo.models._helmholtz (through the mixture layer, two identical copies of one fluid) agree.
    mixture_module = pytest.importorskip("contin_thermo.models._mixture")
    c = lookup("n-butane")
    twin = custom_component("n-butane twin", c.Tc, c.Pc, c.omega)
    mixture = mixture_module.Mixture((c, twin), family(eos))
    fluid = CubicFluid(c, family(eos))
    for theta, x in ((0.6, 1.3), (0.6, 1.25), (0.8, 40.0), (1.2, 3.0)):
        T, v = theta * c.Tc, x * fluid.b
        state = mixture.state(T, v, np.array([0.5, 0.5]))
        p = float(fluid.reduced_pressure(x, theta))
        assert state.P == pytest.approx(p * fluid.pressure_unit, rel=1e-11)
        if p > 0.0:  # ln phi needs a positive pressure
            assert state.ln_phi[0] == pytest.approx(fluid.ln_fugacity_coefficient(x, theta), rel=1e-10, abs=1e-12)
