"""Uncertainty of an envelope from its constants' uncertainties, and `thermo envelope --sensitivities/--uncertainty`."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from contin import InputError
from contin_thermo import CAUTION
from contin_thermo.curves._corner_sensitivity import envelope_sensitivities, monte_carlo
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.models._parameters import parse_uncertainties

# Invented gases (demo compositions, not published mixtures).
NAMES = ["methane", "ethane", "propane", "n-butane"]
FEED = np.array([0.80, 0.10, 0.06, 0.04])
CONDENSATE = "methane=0.75,ethane=0.1,propane=0.08,n-heptane=0.07"
ASKED = "kij:methane-n-heptane,Tc:methane,omega:n-heptane"


@pytest.fixture(scope="module")
def lean():
    mixture = Mixture(tuple(lookup(n) for n in NAMES), family("pr"))
    return mixture, trace_envelope(mixture, FEED, check_stability=False)


def run(argv, capsys):
    from contin.commands._cli import main

    code = main(["thermo", *argv])
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.fixture(scope="module")
def document():
    """The JSON of the condensate's envelope with sensitivities and uncertainties (run once)."""
    import contextlib
    import io

    from contin.commands._cli import main

    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = main(["thermo", "envelope", "--mixture", CONDENSATE, "--kij", "methane-n-heptane=0.03", "--eos", "pr",
                     "--sensitivities", ASKED, "--uncertainty", "Tc=0.5%,Pc=1%,omega=3%,kij:methane-n-heptane=0.01",
                     "--json"])
    assert code == 0
    return json.loads(out.getvalue())


def test_a_bare_constant_applies_to_every_component_and_a_named_one_overrides_it(lean):
    mixture, _ = lean
    chosen = dict((p.label, s) for p, s in parse_uncertainties("Tc=1%,Tc:ethane=2,kij=0.01", mixture, FEED))
    assert chosen["Tc:methane"] == pytest.approx(0.01 * mixture.Tc[0], rel=1e-15)
    assert chosen["Tc:ethane"] == 2.0
    assert chosen["kij:propane-n-butane"] == 0.01
    assert len(chosen) == 4 + 6


def test_linear_uncertainty_of_one_constant_is_the_sensitivity_times_its_uncertainty(lean):
    mixture, envelope = lean
    uncertainties = parse_uncertainties("Tc:methane=2", mixture, FEED)
    sensitivities = envelope_sensitivities(envelope, [p for p, _ in uncertainties])
    corners, rows = sensitivities.propagate(uncertainties)
    for kind, (dT, dP) in sensitivities.corners.items():
        assert corners[kind] == {"T": pytest.approx(2 * abs(dT[0]), rel=1e-14), "P": pytest.approx(2 * abs(dP[0]), rel=1e-14)}
    assert np.allclose(rows, 2 * np.abs(sensitivities.rows[:, 0]), rtol=1e-14)


def test_independent_uncertainties_add_in_quadrature(lean):
    mixture, envelope = lean
    uncertainties = parse_uncertainties("Tc:methane=2,omega:propane=0.01", mixture, FEED)
    sensitivities = envelope_sensitivities(envelope, [p for p, _ in uncertainties])
    corners, _ = sensitivities.propagate(uncertainties)
    dT, dP = sensitivities.corners["cricondenbar"]
    assert corners["cricondenbar"]["T"] == pytest.approx(math.hypot(2 * dT[0], 0.01 * dT[1]), rel=1e-14)


def test_monte_carlo_spread_agrees_with_the_linear_propagation_for_small_uncertainties(lean):
    mixture, envelope = lean
    uncertainties = parse_uncertainties("Tc=0.2%,omega=1%", mixture, FEED)
    sensitivities = envelope_sensitivities(envelope, [p for p, _ in uncertainties])
    linear, _ = sensitivities.propagate(uncertainties)
    sampled = monte_carlo(envelope, uncertainties, samples=12, seed=12)
    for kind in ("cricondenbar", "critical"):
        assert sampled[kind]["samples"] == 12 and sampled[kind]["failed"] == 0
        # 12 samples: a standard deviation known to about 1/sqrt(2 x 11) = 21 % (one sigma).
        for variable in ("T", "P"):
            assert 0.4 < sampled[kind][variable] / linear[kind][variable] < 1.6


def test_the_band_lies_one_standard_uncertainty_across_the_curve(lean):
    mixture, envelope = lean
    uncertainties = parse_uncertainties("Tc:methane=2", mixture, FEED)
    sensitivities = envelope_sensitivities(envelope, [p for p, _ in uncertainties])
    T, P = envelope.column("T"), envelope.column("P")
    T_up, P_up, T_down, P_down = sensitivities.band(uncertainties, T, P)
    k = envelope.special("cricondenbar")["index"]
    # At the cricondenbar the curve is level: the band is P +- u(P) straight up and down.
    corners, _ = sensitivities.propagate(uncertainties)
    assert abs(P_up[k] - P[k]) == pytest.approx(corners["cricondenbar"]["P"], rel=1e-6)
    assert np.allclose(T_up + T_down, 2 * T) and np.allclose(P_up + P_down, 2 * P)


def test_json_carries_sensitivities_and_standard_uncertainties_on_each_corner(document):
    assert document["caution"] == CAUTION
    kinds = {sp["kind"]: sp for sp in document["special_points"]}
    assert set(kinds) == {"critical", "cricondenbar", "cricondentherm"}
    for sp in kinds.values():
        assert list(sp["info"]["sensitivities"]) == ASKED.split(",")
        assert all(set(v) == {"T", "P"} and all(math.isfinite(x) for x in v.values())
                   for v in sp["info"]["sensitivities"].values())
        assert sp["info"]["standard_uncertainty"]["T"] > 0 and sp["info"]["standard_uncertainty"]["P"] > 0
    assert document["columns"][-1] == "P_std"
    assert all(row[-1] >= 0 for row in document["points"])


def test_summary_prints_the_table_and_the_caution(capsys, tmp_path):
    code, out, _ = run(["envelope", "--mixture", CONDENSATE, "--eos", "pr", "--sensitivities", "Tc:methane",
                        "--csv", str(tmp_path / "e.csv")], capsys)
    assert code == 0
    assert "sensitivities (SI: K and Pa per unit of the constant):" in out
    assert sum(line.strip().split()[1:2] == ["Tc:methane"] for line in out.splitlines()) == 3
    assert out.rstrip().endswith(CAUTION)
    assert "P_std" not in (tmp_path / "e.csv").read_text()


@pytest.mark.parametrize("extra, message", [
    (["--uncertainty", "Zc=1%"], "--uncertainty entry 'Zc=1%': the model has no constant 'Zc' for every component"),
    (["--uncertainty", "Tc=-1%"], "--uncertainty entry 'Tc=-1%': an uncertainty cannot be negative"),
    (["--uncertainty", "Tc:argon=1"], "'argon' is not a component of the mixture"),
    (["--uncertainty", "kij:methane-ethane=5%"], "kij:methane-ethane is 0, so a relative uncertainty of it is zero"),
    (["--uncertainty", "Tc"], "--uncertainty entry 'Tc' must be CONSTANT=VALUE"),
    (["--sensitivities", "Vc:methane"], "unknown constant 'Vc'"),
    (["--sensitivities", "kij:methane-n-octane"], "is not a pair of components of the mixture"),
    (["--monte-carlo", "5"], "--monte-carlo samples the constants' uncertainties: give them with --uncertainty"),
    (["--uncertainty", "Tc=1%", "--monte-carlo", "1"], "--monte-carlo 1: give a number of samples from 2 to 100000"),
])
def test_bad_sensitivity_and_uncertainty_input_is_one_line_and_exit_2(extra, message, capsys):
    code, out, err = run(["envelope", "--mixture", CONDENSATE, "--eos", "pr", *extra], capsys)
    assert code == 2 and out == ""
    assert message in err and err.count("\n") == 1


def test_uncertainty_errors_raise_input_error_from_python(lean):
    with pytest.raises(InputError, match="cannot be negative"):
        parse_uncertainties("omega:ethane=-0.1", lean[0], FEED)


@pytest.mark.parametrize("r", [1.0, -1.0, 0.3])
def test_correlated_uncertainties_combine_with_their_correlation(lean, r):
    mixture, envelope = lean
    uncertainties = parse_uncertainties("Tc:methane=2,omega:propane=0.01", mixture, FEED)
    sensitivities = envelope_sensitivities(envelope, [p for p, _ in uncertainties])
    correlation = np.array([[1.0, r], [r, 1.0]])
    corners, rows = sensitivities.propagate(uncertainties, correlation)
    dT, _ = sensitivities.corners["cricondenbar"]
    a, b = 2 * dT[0], 0.01 * dT[1]
    assert corners["cricondenbar"]["T"] == pytest.approx(math.sqrt(a * a + b * b + 2 * r * a * b), rel=1e-12)
    independent, _ = sensitivities.propagate(uncertainties)
    assert (corners["cricondenbar"]["T"] > independent["cricondenbar"]["T"]) == (r * a * b > 0)


def _correlations(tmp_path, text):
    path = tmp_path / "r.csv"
    path.write_text(text)
    return str(path)


def test_a_correlation_file_changes_the_corners_uncertainty(capsys, tmp_path):
    path = _correlations(tmp_path, "# invented correlations\nconstant,Tc:methane,Tc:n-heptane\n"
                                   "Tc:methane,1,0.8\nTc:n-heptane,0.8,1\n")
    base = ["envelope", "--mixture", CONDENSATE, "--eos", "pr", "--uncertainty", "Tc=1%", "--json"]
    results = []
    for extra in ([], ["--correlations", path]):
        code, out, _ = run(base + extra, capsys)
        assert code == 0
        results.append({sp["kind"]: sp["info"]["standard_uncertainty"] for sp in json.loads(out)["special_points"]})
    assert all(results[0][kind] != results[1][kind] for kind in results[0])


@pytest.mark.parametrize("text, message", [
    ("constant,Tc:methane,Tc:ethane\nTc:methane,1,0.5\nTc:ethane,0.4,1\n",
     "not symmetric: Tc:methane with Tc:ethane is 0.5, Tc:ethane with Tc:methane is 0.4"),
    ("constant,Tc:methane,Tc:ethane,Tc:propane\nTc:methane,1,0.9,0.9\nTc:ethane,0.9,1,-0.9\nTc:propane,0.9,-0.9,1\n",
     "the correlations are not positive semidefinite (smallest eigenvalue -0.8): they cannot all hold at once"),
    ("constant,Tc:methane,Tc:ethane\nTc:methane,0.9,0.5\nTc:ethane,0.5,1\n", "(the diagonal) must be 1"),
    ("constant,Tc:methane,Pc:ethane\nTc:methane,1,0.5\nPc:ethane,0.5,1\n", "'Pc:ethane' has no uncertainty"),
    ("constant,Tc:methane,Tc:ethane\nTc:methane,1,1.5\nTc:ethane,1.5,1\n", "correlation 1.5 lies outside [-1, 1]"),
    ("constant,Tc:methane,Tc:ethane\nTc:ethane,1,0\nTc:methane,0,1\n", "line 2: expected the row of 'Tc:methane'"),
])
def test_bad_correlation_files_are_one_line_and_exit_2(text, message, capsys, tmp_path):
    path = _correlations(tmp_path, text)
    code, out, err = run(["envelope", "--mixture", CONDENSATE, "--eos", "pr", "--uncertainty", "Tc=1%",
                          "--correlations", path], capsys)
    assert code == 2 and out == ""
    assert message in err and err.count("\n") == 1


def test_correlations_need_uncertainties(capsys, tmp_path):
    code, _, err = run(["envelope", "--mixture", CONDENSATE, "--eos", "pr", "--correlations", "r.csv"], capsys)
    assert code == 2 and "--correlations correlates the constants' uncertainties: give them with --uncertainty" in err
