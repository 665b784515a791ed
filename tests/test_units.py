"""Temperatures and pressures with units on the command line."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contin import InputError
from contin_thermo.models._units import output_units, parse_list, parse_pressure, parse_temperature


@pytest.mark.parametrize("text, kelvin", [
    ("300", 300.0), ("300 K", 300.0), ("300K", 300.0), (300, 300.0),
    ("0 degC", 273.15),          # 0 degC = 273.15 K (exact, SI definition)
    ("26.85degC", 300.0),
    ("-40 degC", 233.15),
])
def test_temperatures(text, kelvin):
    assert parse_temperature(text) == pytest.approx(kelvin, abs=1e-12)


@pytest.mark.parametrize("text, pascal", [
    ("101325", 101325.0), ("1 atm", 101325.0),            # 1 atm = 101325 Pa (exact, definition)
    ("1.01325 bar", 101325.0), ("101.325 kPa", 101325.0), ("0.101325 MPa", 101325.0),
    ("14.69595 psia", 101325.0),                           # 1 atm = 14.69595 psi (from the exact definitions)
    ("5e6 Pa", 5e6), ("50bar", 5e6),
])
def test_pressures(text, pascal):
    assert parse_pressure(text) == pytest.approx(pascal, rel=2e-6)


def test_psi_is_exact_from_the_pound_and_the_inch():
    # 1 psi = 0.45359237 kg * 9.80665 m/s^2 / (0.0254 m)^2 = 6894.757293168 Pa (exact definitions).
    assert parse_pressure("1 psia") == pytest.approx(6894.757293168361, rel=1e-15)


def test_lists():
    assert parse_list("300, 310 K,36.85 degC", "temperature", "--at-temperatures") == pytest.approx([300, 310, 310])


def test_unknown_unit_suggests_the_nearest():
    with pytest.raises(InputError, match=r"--temperature: unknown temperature unit 'degc'.*did you mean 'degC'"):
        parse_temperature("20 degc", "--temperature")
    with pytest.raises(InputError, match=r"unknown pressure unit 'barr'.*did you mean 'bar'"):
        parse_pressure("5 barr", "--pressure")
    with pytest.raises(InputError, match=r"unknown pressure unit 'furlong'"):
        parse_pressure("5 furlong", "--pressure")


def test_unit_of_the_wrong_kind_is_refused():
    with pytest.raises(InputError, match=r"--pressure: '300 K' is a temperature, but a pressure is needed"):
        parse_pressure("300 K", "--pressure")
    with pytest.raises(InputError, match=r"--temperature: '5 bar' is a pressure, but a temperature is needed"):
        parse_temperature("5 bar", "--temperature")


def test_not_a_number_and_unphysical_values_are_refused():
    with pytest.raises(InputError, match="is not a number with an optional unit"):
        parse_temperature("hot", "--temperature")
    with pytest.raises(InputError, match="at or below absolute zero"):
        parse_temperature("-300 degC", "--temperature")
    with pytest.raises(InputError, match="must be a positive pressure"):
        parse_pressure("-1 bar", "--pressure")
    with pytest.raises(InputError, match="give at least one value"):
        parse_list(" , ", "pressure", "--at-pressures")


def test_output_unit_systems():
    metric = output_units("degC-bar")
    assert metric.temperature_from_si(273.15) == pytest.approx(0.0)
    assert metric.pressure_from_si(1e5) == pytest.approx(1.0)
    customary = output_units("degF-psia")
    # degF = K x 9/5 - 459.67 (exact, definition): 273.15 K = 32 degF, 373.15 K = 212 degF
    assert customary.temperature_from_si(273.15) == pytest.approx(32.0, abs=1e-12)
    assert customary.temperature_from_si(373.15) == pytest.approx(212.0, abs=1e-12)
    # 1 psi = 0.45359237 kg x 9.80665 m/s^2 / (0.0254 m)^2 = 6894.757293168361 Pa (exact, definition)
    assert customary.pressure_from_si(6894.757293168361) == pytest.approx(1.0, rel=1e-15)
    assert customary.pressure_from_si(101325.0) == pytest.approx(14.695948775513449, rel=1e-14)
    with pytest.raises(InputError, match="unknown unit system 'imperial'.*use si, degC-bar or degF-psia"):
        output_units("imperial")


def test_engineering_is_refused_with_the_names_of_the_unit_sets():
    # "engineering" meant degC and bar here but US customary units elsewhere: it is gone
    with pytest.raises(InputError, match=r"^--units: unknown unit system 'engineering': the sets are named by the "
                                         r"units they contain; use si, degC-bar or degF-psia"):
        output_units("engineering")


@pytest.mark.parametrize("text, kelvin", [
    # degF = K x 9/5 - 459.67 and degR = K x 9/5 (exact, definition)
    ("32 degF", 273.15), ("212degF", 373.15), ("-40 degF", 233.15), ("0 degF", 255.37222222222223),
    ("491.67 degR", 273.15), ("671.67degR", 373.15), ("1.8 degR", 1.0),
])
def test_fahrenheit_and_rankine_on_input(text, kelvin):
    assert parse_temperature(text, "--temperature") == pytest.approx(kelvin, rel=1e-15)


def test_fahrenheit_at_or_below_absolute_zero_is_refused():
    with pytest.raises(InputError, match=r"--temperature: '-459.67 degF' is at or below absolute zero"):
        parse_temperature("-459.67 degF", "--temperature")
    with pytest.raises(InputError, match=r"--temperature: '0 degR' is at or below absolute zero"):
        parse_temperature("0 degR", "--temperature")
    with pytest.raises(InputError, match=r"unknown temperature unit 'degf'.*did you mean 'degF'"):
        parse_temperature("100 degf", "--temperature")


@settings(max_examples=200, derandomize=True)
@given(kelvin=st.floats(1.0, 5000.0), unit=st.sampled_from(["K", "degC", "degF", "degR"]))
def test_temperature_round_trip_in_every_unit(kelvin, unit):
    from contin_thermo.models._units import TEMPERATURE_UNITS
    shown = TEMPERATURE_UNITS[unit][1](kelvin)
    assert parse_temperature(repr(shown) + " " + unit, "--temperature") == pytest.approx(kelvin, rel=1e-12)


@settings(max_examples=200, derandomize=True)
@given(value=st.floats(1e-3, 1e9), unit=st.sampled_from(["Pa", "kPa", "MPa", "bar", "atm", "psia"]))
def test_pressure_round_trip(value, unit):
    from contin_thermo.models._units import PRESSURE_UNITS
    assert parse_pressure(f"{value!r} {unit}") / PRESSURE_UNITS[unit] == pytest.approx(value, rel=1e-14)
