"""Cubic families: critical constants from delta1, delta2; alpha functions; the pressure law."""


import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from contin import InputError
from contin_thermo.models._eos import FAMILIES, GAS_CONSTANT, critical_constants, family


def test_gas_constant_is_the_2019_si_value():
    # R = N_A k_B, exact since the 2019 SI redefinition (BIPM, The International System of Units, 9th ed.,
    # 2019: N_A = 6.02214076e23 /mol and k_B = 1.380649e-23 J/K are defining constants).
    assert GAS_CONSTANT == 8.31446261815324


@pytest.mark.parametrize(
    "name, omega_a, omega_b, z_c",
    [
        # van der Waals: 27/64, 1/8, 3/8 (textbook, e.g. Smith, Van Ness & Abbott).
        ("vdw", 27 / 64, 1 / 8, 3 / 8),
        # Redlich-Kwong / Soave: 1/(9(2^(1/3) - 1)), (2^(1/3) - 1)/3, 1/3 (Soave, Chem. Eng. Sci. 27 (1972) 1197).
        ("rk", 1 / (9 * (2 ** (1 / 3) - 1)), (2 ** (1 / 3) - 1) / 3, 1 / 3),
        ("srk", 0.4274802335, 0.0866403500, 1 / 3),
        # Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59 (paper rounds to 0.45724, 0.07780).
        ("pr", 0.4572355289, 0.0777960739, 0.3074013087),
    ],
)
def test_critical_constants_match_published_values(name, omega_a, omega_b, z_c):
    f = family(name)
    assert f.omega_a == pytest.approx(omega_a, abs=1e-10)
    assert f.omega_b == pytest.approx(omega_b, abs=1e-10)
    assert f.z_c == pytest.approx(z_c, abs=1e-10)


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_critical_conditions_hold_at_tc_pc(name):
    # By construction P(Tc, vc) = Pc and dP/dv = d2P/dv2 = 0 at vc = Zc R Tc / Pc (common practice).
    f = family(name)
    Tc, Pc = 400.0, 4.0e6
    a, b = f.a_b(Tc, Pc)
    vc = f.z_c * GAS_CONSTANT * Tc / Pc
    assert f.pressure(Tc, vc, a, b) == pytest.approx(Pc, rel=1e-13)
    d1, d2, R = f.delta1 * b, f.delta2 * b, GAS_CONSTANT
    dp = -R * Tc / (vc - b) ** 2 + a * (2 * vc + d1 + d2) / ((vc + d1) * (vc + d2)) ** 2
    ddp = 2 * R * Tc / (vc - b) ** 3 + a * (
        2 / ((vc + d1) * (vc + d2)) ** 2 - 2 * (2 * vc + d1 + d2) ** 2 / ((vc + d1) * (vc + d2)) ** 3
    )
    assert abs(dp) * vc / Pc < 1e-12
    assert abs(ddp) * vc**2 / Pc < 1e-11


def test_critical_constants_refuse_an_impossible_family():
    with pytest.raises(InputError, match=r"need delta1 >= delta2 > -1"):
        critical_constants(-5.0, -5.0)
    with pytest.raises(InputError, match=r"delta1=0.0, delta2=1.0: need delta1 >= delta2"):
        critical_constants(0.0, 1.0)


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_alpha_is_one_at_the_critical_temperature(name):
    alpha, _, _ = family(name).alpha(np.array([190.0, 400.0]), np.array([190.0, 400.0]), np.array([0.0, 0.3]))
    assert np.allclose(alpha, 1.0, rtol=0, atol=1e-15)


def test_alpha_forms():
    tr = 0.49
    # Redlich & Kwong (1949): alpha = Tr^(-1/2).
    assert family("rk").alpha(tr * 300.0, 300.0, 0.2)[0] == pytest.approx(tr**-0.5, rel=1e-15)
    # Soave (1972): m = 0.480 + 1.574 w - 0.176 w^2.
    m = 0.480 + 1.574 * 0.2 - 0.176 * 0.04
    assert family("srk").alpha(tr * 300.0, 300.0, 0.2)[0] == pytest.approx((1 + m * (1 - 0.7)) ** 2, rel=1e-14)
    assert family("vdw").alpha(tr * 300.0, 300.0, 0.2)[0] == 1.0


def test_pr_switches_to_the_1978_slope_above_omega_049():
    pr = family("pr")
    # Peng & Robinson (1976) below, Robinson & Peng (1978, GPA RR-28; memory) above omega = 0.49.
    w = np.array([0.3, 0.49, 0.6])
    expected = np.array(
        [
            0.37464 + 1.54226 * 0.3 - 0.26992 * 0.09,
            0.37464 + 1.54226 * 0.49 - 0.26992 * 0.49**2,
            0.379642 + 1.48503 * 0.6 - 0.164423 * 0.36 + 0.016666 * 0.216,
        ]
    )
    assert np.allclose(pr.m(w), expected, rtol=1e-15)


@settings(derandomize=True, max_examples=60, deadline=None)
@given(
    name=st.sampled_from(sorted(FAMILIES)),
    tr=st.floats(0.2, 3.0),
    omega=st.floats(-0.3, 1.2),
)
def test_alpha_derivatives_agree_with_central_differences(name, tr, omega):
    # Law: the returned derivatives are those of the returned alpha (central differences, common practice).
    f, Tc = family(name), 350.0
    T = tr * Tc
    h = 1e-4 * T
    _, d1, d2 = f.alpha(T, Tc, omega)
    up, dup, _ = f.alpha(T + h, Tc, omega)
    down, ddown, _ = f.alpha(T - h, Tc, omega)
    assert float(d1) == pytest.approx(float((up - down) / (2 * h)), rel=1e-6, abs=1e-12)
    assert float(d2) == pytest.approx(float((dup - ddown) / (2 * h)), rel=1e-5, abs=1e-12)


def test_alpha_is_vectorised_over_components():
    f = family("pr")
    Tc = np.array([190.56, 305.32, 369.83])
    w = np.array([0.011, 0.099, 0.152])
    alpha, d1, d2 = f.alpha(250.0, Tc, w)
    assert alpha.shape == d1.shape == d2.shape == (3,)
    for i in range(3):
        assert alpha[i] == pytest.approx(float(f.alpha(250.0, Tc[i], w[i])[0]), rel=1e-15)


def test_a_b_formulas():
    f = family("pr")
    a, b = f.a_b(np.array([300.0]), np.array([5.0e6]))
    # a_c = Omega_a R^2 Tc^2 / Pc, b = Omega_b R Tc / Pc (Peng & Robinson 1976).
    assert a[0] == pytest.approx(f.omega_a * (GAS_CONSTANT * 300.0) ** 2 / 5.0e6, rel=1e-15)
    assert b[0] == pytest.approx(f.omega_b * GAS_CONSTANT * 300.0 / 5.0e6, rel=1e-15)


def test_unknown_family_is_refused_with_a_suggestion():
    with pytest.raises(InputError, match=r"unknown equation of state 'prr' in --eos; choose one of vdw, rk, srk, pr; did you mean 'pr'\?"):
        family("prr")


def test_family_names_are_case_insensitive():
    assert family("PR") is family("pr")
    assert family(" Srk ").label == "Soave-Redlich-Kwong"


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_scalar_alpha_of_the_pure_fluid_matches_the_family(name):
    # The hot-path scalar copy in contin_thermo.curves._pure must be the family's alpha (common practice).
    from contin_thermo.models._components import custom_component
    from contin_thermo.curves._pure import CubicFluid

    f = family(name)
    fluid = CubicFluid(custom_component("x", 350.0, 4e6, 0.6), f)
    for theta in (0.3, 0.9, 1.0, 1.7):
        alpha, dalpha, _ = f.alpha(theta * 350.0, 350.0, 0.6)
        got = fluid.alpha(theta)
        assert got[0] == pytest.approx(float(alpha), rel=1e-14)
        assert got[1] == pytest.approx(float(dalpha) * 350.0, rel=1e-13, abs=1e-15)
