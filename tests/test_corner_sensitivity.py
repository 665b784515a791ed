"""Exact derivatives of the envelope system in the model's constants, and how the corners move with them."""

from __future__ import annotations

import math

import numpy as np
import pytest

from contin import InputError
from contin_thermo.curves._corner_sensitivity import envelope_sensitivities
from contin_thermo.curves._envelope import EnvelopeSystem, _newton, trace_envelope
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.models._parameters import parameter_value, parse_parameters, perturbed

# An invented lean gas (demo composition, not a published mixture).
NAMES = ["methane", "ethane", "propane", "n-butane"]
FEED = np.array([0.80, 0.10, 0.06, 0.04])
EVERY_KIND = "kij:methane-n-butane,Tc:methane,Pc:ethane,omega:n-butane,z:propane"


def _mixture(eos="pr"):
    kij = np.zeros((4, 4))
    kij[0, 3] = kij[3, 0] = 0.02
    return Mixture(tuple(lookup(n) for n in NAMES), family(eos), kij)


@pytest.fixture(scope="module")
def traced():
    mixture = _mixture()
    envelope = trace_envelope(mixture, FEED, check_stability=False)
    parameters = parse_parameters(EVERY_KIND, mixture.names)
    return mixture, envelope, parameters, envelope_sensitivities(envelope, parameters)


def _step(mixture, parameter, relative):
    """A central-difference step: relative to Tc and Pc, absolute for the dimensionless constants."""
    value = parameter_value(mixture, FEED, parameter)
    return relative * abs(value) if parameter.kind in ("Tc", "Pc") else relative


@pytest.mark.parametrize("eos", ["pr", "srk"])
@pytest.mark.parametrize("beta", [0.0, 0.3])
def test_residual_derivative_in_every_kind_of_constant_matches_central_differences(traced, eos, beta):
    mixture = _mixture(eos)
    envelope = traced[1]
    parameters = parse_parameters(EVERY_KIND + ",Tc:n-butane,kij:ethane-propane", mixture.names)
    x = envelope.branch.points[len(envelope.rows) // 3]
    system = EnvelopeSystem(mixture, FEED, beta)
    for parameter in parameters:
        exact = system.constant_derivative(x[:-1], x[-1], parameter)
        h = _step(mixture, parameter, 1e-6)
        value = parameter_value(mixture, FEED, parameter)
        ahead, behind = (EnvelopeSystem(*perturbed(mixture, FEED, parameter, value + s * h), beta).residual(
            x[:-1], [x[-1]]) for s in (1, -1))
        difference = (ahead - behind) / (2 * h)
        # Central differences err by O(h^2) and by round-off eps |F| / h, about 1e-10 / 1e-6 here.
        assert np.max(np.abs(exact - difference)) <= 1e-6 * np.max(np.abs(difference)), parameter.label


def test_a_feed_fraction_moves_alone_and_the_others_shrink_in_proportion():
    mixture = _mixture()
    parameter = parse_parameters("z:propane", mixture.names)[0]
    _, z = perturbed(mixture, FEED, parameter, 0.10)
    assert z[2] == 0.10
    assert math.isclose(z.sum(), 1.0, rel_tol=1e-15)
    assert np.allclose(z[[0, 1, 3]] / FEED[[0, 1, 3]], 0.90 / 0.94, rtol=1e-14)


def test_corner_sensitivities_match_central_differences_of_re_traced_envelopes(traced):
    mixture, envelope, parameters, sensitivities = traced
    relative = 1e-4
    for parameter in (parameters[0], parameters[1], parameters[4]):  # kij, Tc, a feed fraction
        h = _step(mixture, parameter, relative)
        value = parameter_value(mixture, FEED, parameter)
        ahead, behind = (trace_envelope(*perturbed(mixture, FEED, parameter, value + s * h), check_stability=False)
                         for s in (1, -1))
        for kind in ("critical", "cricondenbar", "cricondentherm"):
            exact = sensitivities.corner(kind)[parameter.label]
            for variable in ("T", "P"):
                a, b = ahead.special(kind)["values"][variable], behind.special(kind)["values"][variable]
                difference = (a - b) / (2 * h)
                # Truncation O(h^2): 100 (h / scale)^2 relative, scale 1 for kij and z, the value for Tc;
                # plus each corner's location (1e-9 relative, generous) divided by the step.
                noise = 1e-9 * abs(a) / h
                assert abs(exact[variable] - difference) <= 100 * relative**2 * abs(difference) + noise, (
                    parameter.label, kind, variable)


def test_the_cricondenbar_moves_in_pressure_as_the_envelope_does_at_its_temperature(traced):
    _, envelope, _, sensitivities = traced
    # Envelope theorem: at a maximum of P, dP_max/dq is the partial derivative at fixed T.
    row = sensitivities.rows[envelope.special("cricondenbar")["index"]]
    assert np.allclose(sensitivities.corners["cricondenbar"][1], row, rtol=1e-6)


def test_row_sensitivities_at_fixed_temperature_match_re_solved_points(traced):
    mixture, envelope, parameters, sensitivities = traced
    n = mixture.size
    for index in (5, len(envelope.rows) // 2, len(envelope.rows) - 5):
        x = envelope.branch.points[index]
        for k, parameter in enumerate(parameters):
            h = _step(mixture, parameter, 1e-5)
            value = parameter_value(mixture, FEED, parameter)
            pressures = []
            for s in (1, -1):
                system = EnvelopeSystem(*perturbed(mixture, FEED, parameter, value + s * h), 0.0)
                solved, _, converged = _newton(system, x, n, x[n])  # the same temperature
                assert converged
                pressures.append(math.exp(solved[-1]))
            difference = (pressures[0] - pressures[1]) / (2 * h)
            assert abs(sensitivities.rows[index, k] - difference) <= 1e-5 * abs(difference) + 1e-9 * pressures[0] / h


def test_every_row_has_a_finite_sensitivity_including_the_critical_one(traced):
    assert np.all(np.isfinite(traced[3].rows))


@pytest.mark.parametrize("text, message", [
    ("Tc:methan", r"^unknown component 'methan' in --sensitivities; did you mean 'methane'\?$"),
    ("Zc:methane", r"^--sensitivities entry 'Zc:methane': unknown constant 'Zc'; use one of kij, Tc, Pc, omega, z"),
    ("kij:methane-n-heptane", r"^--sensitivities pair 'methane-n-heptane' is not a pair of components of the mixture"),
    ("Tc:n-heptane", r"^--sensitivities entry 'Tc:n-heptane': 'n-heptane' is not a component of the mixture "
                     r"\(methane, ethane, propane, n-butane\)$"),
    ("Tc", r"^--sensitivities entry 'Tc' must be KIND:NAME, e.g. 'Tc:methane' or 'kij:methane-ethane'$"),
    ("Tc:methane,Tc:C1", r"^--sensitivities names one constant twice \('Tc:methane' and 'Tc:C1'\)$"),
    (" , ", r"^--sensitivities is empty; give constants such as 'kij:methane-ethane,Tc:methane'$"),
])
def test_bad_constants_are_refused_with_one_line(text, message):
    with pytest.raises(InputError, match=message):
        parse_parameters(text, NAMES)


@pytest.mark.parametrize("eos", ["pr", "srk", "rk"])
def test_saturation_pressure_sensitivities_match_central_differences_of_re_traced_curves(eos):
    from dataclasses import replace

    from contin_thermo.curves._corner_sensitivity import annotate_saturation
    from contin_thermo.curves._pure import saturation_curve

    propane = lookup("propane")
    temperatures = [230.0, 300.0, 360.0]
    curve = annotate_saturation(saturation_curve(propane, eos, at_temperatures=temperatures), ("Tc", "Pc", "omega"))
    for k, constant in enumerate(("Tc", "Pc", "omega")):
        value = getattr(propane, constant)
        h = 1e-5 * value
        ahead, behind = (saturation_curve(replace(propane, **{constant: value + s * h}), eos,
                                          at_temperatures=temperatures).at[:, 1] for s in (1, -1))
        difference = (ahead - behind) / (2 * h)
        exact = curve.at[:, curve.columns.index(f"dP_d{constant}")]
        # Central differences: O(h^2) ~ 1e-10 relative; the rows are solved to about 1e-12.
        assert np.allclose(exact, difference, rtol=1e-7, atol=1e-9 * np.max(np.abs(ahead)) / h), constant


def test_at_the_critical_row_the_saturation_pressure_moves_along_the_critical_isochore():
    from dataclasses import replace

    from contin_thermo.curves._corner_sensitivity import annotate_saturation
    from contin_thermo.curves._pure import saturation_curve

    propane = lookup("propane")
    curve = annotate_saturation(saturation_curve(propane, "pr"), ("Tc", "Pc", "omega"))
    critical = curve.special("critical")
    row = curve.points[critical["index"]]
    assert row[curve.columns.index("dP_dPc")] == 1.0 and row[curve.columns.index("dP_domega")] == 0.0
    assert critical["info"]["sensitivities"] == {"Tc": {"T": 1.0, "P": 0.0}, "Pc": {"T": 0.0, "P": 1.0},
                                                 "omega": {"T": 0.0, "P": 0.0}}
    # One-sided (Tc can only grow for T = Tc to stay on the curve): error O(h), h = 1e-5 Tc.
    h = 1e-5 * propane.Tc
    raised = saturation_curve(replace(propane, Tc=propane.Tc + h), "pr", at_temperatures=[propane.Tc]).at[0, 1]
    assert row[curve.columns.index("dP_dTc")] == pytest.approx((raised - propane.Pc) / h, rel=1e-4)


def test_saturation_sensitivities_on_the_command_line_and_a_constant_a_fluid_lacks(capsys):
    from contin.commands._cli import main

    assert main(["thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--sensitivities", "omega,Tc", "--json"]) == 0
    document = __import__("json").loads(capsys.readouterr().out)
    assert document["columns"][-2:] == ["dP_domega", "dP_dTc"] and document["units"]["dP_dTc"] == "Pa/K"
    critical = next(sp for sp in document["special_points"] if sp["kind"] == "critical")
    assert list(critical["info"]["sensitivities"]) == ["omega", "Tc"]
    assert main(["thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--sensitivities", "Zc"]) == 2
    err = capsys.readouterr().err
    assert err == "contin: error: --sensitivities: a fluid has no constant 'Zc'; use Tc, Pc or omega; did you mean 'Pc'?\n"
