"""Gauge pressures (barg, psig, kPag) above a stated atmosphere; temperatures in degF and degR.

Exact identities (definitions): absolute = gauge + atmosphere; 1 psi = 0.45359237 x 9.80665 /
0.0254^2 Pa; degR = K x 9/5; degF = degR - 459.67. JSON stays SI; the summary shows every gauge
input as absolute.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings, strategies as st

from contin import InputError
from contin.commands._cli import main
from contin_thermo.models._units import GAUGE_UNITS, PSI, parse_pressure, parse_temperature


@settings(max_examples=50, deadline=None, derandomize=True)
@given(value=st.floats(-0.999, 1e4), unit=st.sampled_from(sorted(GAUGE_UNITS)), atmosphere=st.floats(5e4, 1.2e5))
def test_gauge_is_absolute_less_the_atmosphere(value, unit, atmosphere):
    gauge = value * 101325.0 / GAUGE_UNITS[unit]  # above -1 atm of the standard atmosphere
    if gauge * GAUGE_UNITS[unit] + atmosphere <= 0:
        return
    absolute = parse_pressure(f"{gauge!r} {unit}", atmosphere=atmosphere)
    assert absolute == pytest.approx(gauge * GAUGE_UNITS[unit] + atmosphere, rel=1e-14, abs=1e-9)


def test_named_gauge_values():
    assert parse_pressure("0 barg") == 101325.0
    assert parse_pressure("5 barg") == 601325.0
    assert parse_pressure("100 psig") == pytest.approx(100 * PSI + 101325.0, rel=1e-15)
    assert parse_pressure("14.69595 psig") == pytest.approx(2 * 101325.0, rel=1e-6)  # 1 atm = 14.69595 psi
    assert parse_pressure("-50 kPag", atmosphere=95000.0) == 45000.0
    assert parse_temperature("491.67 degR") == pytest.approx(273.15, rel=1e-15)
    assert parse_temperature("-40 degF") == pytest.approx(233.15, rel=1e-15)  # -40 degF = -40 degC


@pytest.mark.parametrize("text, atmosphere", [("-1.01325 barg", 101325.0), ("-2 barg", 101325.0),
                                              ("-14.7 psig", 101325.0), ("-95 kPag", 90000.0)])
def test_gauge_at_or_below_minus_one_atmosphere_is_refused(text, atmosphere):
    with pytest.raises(InputError) as error:
        parse_pressure(text, "--pressure", atmosphere=atmosphere)
    assert str(error.value) == (f"--pressure: {text!r} is a gauge pressure at or below -1 atm (the atmosphere of "
                                f"{atmosphere:g} Pa), which leaves no absolute pressure; a gauge pressure must lie "
                                "above minus the atmosphere")


def test_the_summary_shows_gauge_inputs_as_absolute_and_json_stays_si(capsys, tmp_path):
    argv = ["thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--at-pressures", "0 barg,100 psig",
            "--atmosphere", "1 atm"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "gauge    : --at-pressures 0 barg is gauge: 101325 Pa absolute (atmosphere 101325 Pa)" in out
    assert f"--at-pressures 100 psig is gauge: {100 * PSI + 101325.0:.8g} Pa absolute" in out
    assert main([*argv, "--units", "degF-psia"]) == 0
    assert "--at-pressures 100 psig is gauge: 114.69595 psia absolute (atmosphere 101325 Pa)" in capsys.readouterr().out
    record = tmp_path / "run.json"
    assert main([*argv, "--json", "--record", str(record)]) == 0
    document = json.loads(capsys.readouterr().out)
    P = [row[document["columns"].index("P")] for row in document["at"]]
    assert P == pytest.approx([101325.0, 100 * PSI + 101325.0], rel=1e-9)
    assert json.loads(record.read_text())["input"]["gauge_inputs"][1] == {
        "option": "--at-pressures", "given": "100 psig", "absolute_Pa": 100 * PSI + 101325.0, "atmosphere_Pa": 101325.0}


@pytest.mark.parametrize("argv, message", [
    (["thermo", "txy", "--mixture", "propane,n-butane", "--eos", "pr", "--pressure", "-1.1 barg"],
     "--pressure: '-1.1 barg' is a gauge pressure at or below -1 atm"),
    (["thermo", "envelope", "--mixture", "methane=0.9,propane=0.1", "--eos", "pr", "--atmosphere", "0.9 barg"],
     "--atmosphere '0.9 barg': the atmospheric pressure is absolute"),
    (["thermo", "critical", "--fluid", "propane", "--eos", "pr", "--atmosphere", "-3"],
     "--atmosphere: '-3' must be a positive pressure"),
])
def test_bad_gauge_inputs_on_the_command_line(capsys, argv, message):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1
