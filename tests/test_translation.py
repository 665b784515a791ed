"""Peneloux-type volume translation: equilibrium unchanged, liquid densities nearer measured values."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from contin import InputError
from contin_thermo import lookup, saturation_curve
from contin_thermo.models._characterise import characterise, molar_mass_of
from contin_thermo.models._eos import GAS_CONSTANT, family
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.models._translation import (
    rackett_compressibility,
    translate_curve,
    translate_volume,
    translated_ln_phi,
    volume_shifts,
)

R = GAS_CONSTANT


def _translated_saturation_pressure(name: str, eos: str, T: float, c: float, near: float) -> float:
    """Psat of the translated cubic P(T, v + c), found from scratch: roots by bisection on a scanned
    isotherm, Maxwell's equal areas with the closed-form integral of the cubic (no project solver);
    ``near`` only brackets the answer (within a factor of 1.5)."""
    fluid, model = lookup(name), family(eos)
    a_c, b = model.a_b(fluid.Tc, fluid.Pc)
    a = float(a_c * model.alpha(T, fluid.Tc, fluid.omega)[0])
    d1, d2 = model.delta1, model.delta2

    def pressure(v):
        w = v + c
        return R * T / (w - b) - a / ((w + d1 * b) * (w + d2 * b))

    def integral(v):  # antiderivative of the translated pressure in v
        w = v + c
        return R * T * math.log(w - b) + a / (b * (d1 - d2)) * math.log((w + d1 * b) / (w + d2 * b))

    grid = b - c + b * np.geomspace(1e-4, 1e4, 20001)
    p = pressure(grid)
    turns = np.flatnonzero(np.diff(np.sign(np.diff(p))))
    v_min, v_max = grid[turns[0] + 1], grid[turns[1] + 1]  # liquid spinodal (minimum), vapour spinodal (maximum)

    def area(P):
        liquid = brentq(lambda v: pressure(v) - P, b - c + 1e-9 * b, v_min, xtol=1e-300, rtol=1e-15)
        vapour = brentq(lambda v: pressure(v) - P, v_max, 10.0 * R * T / P, xtol=1e-300, rtol=1e-15)
        return (integral(vapour) - integral(liquid)) / (vapour - liquid) - P

    return brentq(area, max(pressure(v_min), near / 1.5), min(pressure(v_max), near * 1.5), xtol=1e-300, rtol=1e-15)


@pytest.mark.parametrize("name, eos, T", [("propane", "srk", 300.0), ("n-heptane", "pr", 450.0),
                                          ("carbon dioxide", "pr", 260.0)])
def test_saturation_pressure_is_unchanged_by_the_translation(name, eos, T):
    # By construction (Peneloux et al. 1982): the isotherm moves rigidly along v, so equal areas hold
    # at the same pressure. The translated Psat, solved from scratch, equals the untranslated one.
    c = float(volume_shifts([lookup(name)], eos).c[0])
    assert abs(c) > 1e-7  # a real shift, not a trivial one
    curve = saturation_curve(name, eos, at_temperatures=[T])
    untranslated = curve.at[0][curve.columns.index("P")]
    assert _translated_saturation_pressure(name, eos, T, c, untranslated) == pytest.approx(untranslated, rel=1e-10)
    assert _translated_saturation_pressure(name, eos, T, 0.0, untranslated) == pytest.approx(untranslated, rel=1e-10)


def test_mixture_k_values_and_envelope_are_unchanged():
    # ln phi_i - c_i P/RT in both phases: the K-values of every envelope point are those untranslated.
    result = characterise([("methane", 0.85), ("ethane", 0.07), ("C7+", 0.08, 140.0, 0.76)], n_pseudo=2)
    mixture = result.mixture("pr")
    shifts = volume_shifts(result.components, "pr", molar_masses=result.molar_masses)
    envelope = trace_envelope(mixture, result.z, check_stability=False)
    k_columns = [k for k, c in enumerate(envelope.columns) if c.startswith("K_")]
    for row in envelope.rows[::10]:
        T, P = row[0], row[1]
        K = np.array([row[k] for k in k_columns])
        x, y = (result.z, K * result.z) if row[2] == "bubble" else (result.z / K, result.z)
        liquid = translated_ln_phi(mixture.ln_phi(T, P, x, "liquid"), shifts, T, P)
        vapour = translated_ln_phi(mixture.ln_phi(T, P, y, "vapour"), shifts, T, P)
        plain = mixture.ln_phi(T, P, x, "liquid") - mixture.ln_phi(T, P, y, "vapour")
        assert liquid - vapour == pytest.approx(plain, rel=0, abs=1e-12)
        v = mixture.volume(T, P, x, "liquid")
        assert float(translate_volume(v, x, shifts)) == pytest.approx(v - float(shifts.c @ x / x.sum()), rel=1e-15)


# Saturated-liquid densities (kg/m3), NIST Chemistry WebBook, fluid properties (memory, to about
# 0.5 %: the tolerance below leaves room for table editions): propane at its normal boiling point
# 231.04 K: 580.9; n-butane at 272.66 K: 601.3; n-heptane at 298.15 K: 679.5.
MEASURED = [("propane", 231.04, 580.9), ("n-butane", 272.66, 601.3), ("n-heptane", 298.15, 679.5)]


def _liquid_density(curve, name):
    return molar_mass_of(name) * 1e-3 * curve.at[0][curve.columns.index("rho_liquid")]


@pytest.mark.parametrize("name, T, measured", MEASURED)
def test_srk_liquid_densities_move_towards_measured_values(name, T, measured):
    # Measured here: propane 549.8 -> 587.0, n-butane 560.7 -> 608.4, n-heptane 597.0 -> 692.3 kg/m3.
    curve = saturation_curve(name, "srk", at_temperatures=[T])
    plain = _liquid_density(curve, name)
    moved = _liquid_density(translate_curve(curve), name)
    assert abs(moved - measured) < 0.3 * abs(plain - measured)
    assert moved == pytest.approx(measured, rel=0.025)


@pytest.mark.parametrize("name, T, measured", MEASURED)
def test_pr_liquid_densities_with_jhaveri_youngren(name, T, measured):
    # Measured here: propane 621.4 -> 582.1, n-butane 633.9 -> 603.3 (much nearer); n-heptane 672.3 ->
    # 687.0 (PR alone is already within 1.1 % there, and the shift only swaps the sign of the error).
    curve = saturation_curve(name, "pr", at_temperatures=[T])
    plain = _liquid_density(curve, name)
    moved = _liquid_density(translate_curve(curve), name)
    if name == "n-heptane":
        assert abs(moved - measured) < 0.015 * measured and abs(plain - measured) < 0.015 * measured
    else:
        assert abs(moved - measured) < 0.2 * abs(plain - measured)
        assert moved == pytest.approx(measured, rel=0.01)


def test_translated_curve_keeps_pressures_and_moves_volumes():
    curve = saturation_curve("n-butane", "pr", at_temperatures=[300.0])
    moved = translate_curve(curve, correlation="peneloux")
    c = moved.stats["volume_translation"]["c"]
    assert "Peneloux" in moved.stats["volume_translation"]["source"]
    for column in ("T", "P", "h_vaporisation"):
        assert np.array_equal(moved.column(column), curve.column(column))
    assert moved.column("v_liquid") == pytest.approx(curve.column("v_liquid") - c, rel=1e-14)
    assert moved.column("rho_vapour") == pytest.approx(1.0 / (curve.column("v_vapour") - c), rel=1e-14)
    assert moved.special("critical")["values"]["v"] == pytest.approx(curve.special("critical")["values"]["v"] - c)
    assert moved.to_dict()["stats"]["volume_translation"]["c"] == c


def test_shift_correlations_as_published():
    # Peneloux et al. (1982): c = 0.40768 (0.29441 - Z_RA) R Tc/Pc; Yamada & Gunn (1973) Z_RA (memory).
    propane = lookup("propane")
    z_ra = 0.29056 - 0.08775 * 0.152
    assert float(rackett_compressibility(0.152)) == pytest.approx(z_ra, rel=1e-15)
    expected = 0.40768 * (0.29441 - z_ra) * R * propane.Tc / propane.Pc
    assert float(volume_shifts([propane], "srk").c[0]) == pytest.approx(expected, rel=1e-15)
    # Jhaveri & Youngren (1988): s = c/b = -0.08501 for propane (memory).
    b = family("pr").a_b(propane.Tc, propane.Pc)[1]
    assert float(volume_shifts([propane], "pr").c[0]) == pytest.approx(-0.08501 * b, rel=1e-14)
    pseudo = characterise([("methane", 0.9), ("C7+", 0.1, 180.0, 0.80)], n_pseudo=2)
    shifts = volume_shifts(pseudo.components, "pr", molar_masses=pseudo.molar_masses)
    assert all("1 - 2.258/M^0.1823" in s for s in shifts.sources[1:])
    assert all(c > 0 for c in shifts.c[1:])  # heavy ends: PR's liquid is too large, the shift is positive


@pytest.mark.parametrize(
    "call, message",
    [
        (lambda: volume_shifts([lookup("propane")], "vdw"), "eos='vdw': volume translation is defined here for 'srk' and 'pr' only"),
        (lambda: volume_shifts([lookup("propane")], "srk", correlation="jhaveri-youngren"),
         "correlation='jhaveri-youngren' is not one for srk; choose peneloux"),
    ],
)
def test_bad_requests_are_refused_with_a_message(call, message):
    with pytest.raises(InputError) as error:
        call()
    assert message in str(error.value)
