"""Loci of an envelope's corners in one constant or a blend: `contin thermo corners`."""

from __future__ import annotations

import json

import numpy as np
import pytest

from contin_thermo import CAUTION
from contin_thermo.curves._corner_loci import corner_loci, envelope_corners
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.models._parameters import blend_parameter, parse_parameter, perturbed

# Invented feeds (demo compositions, not published mixtures).
NAMES = ["methane", "ethane", "propane", "n-butane", "n-octane"]
FEED = np.array([0.70, 0.10, 0.10, 0.07, 0.03])
SECOND = np.array([0.80, 0.08, 0.06, 0.04, 0.02])
GAS = "methane=0.7,ethane=0.1,propane=0.1,n-butane=0.07,n-octane=0.03"
SAMPLES = (0.04, 0.09)


def _mixture():
    return Mixture(tuple(lookup(n) for n in NAMES), family("pr"))


def run(argv, capsys):
    from contin.commands._cli import main

    code = main(["thermo", *argv])
    out = capsys.readouterr()
    return code, out.out, out.err


def _check_against_separate_envelopes(mixture, z, parameter, loci, samples):
    for corner in ("critical", "cricondenbar", "cricondentherm"):
        at = {round(row[0], 12): row for row in loci.loci[corner].stats["at"]}
        assert sorted(at) == sorted(samples), corner
        for value in samples:
            envelope = trace_envelope(*perturbed(mixture, z, parameter, value), check_stability=False)
            T, P = envelope_corners(envelope)[corner]
            assert at[value][1] == pytest.approx(T, rel=1e-8), (corner, value)
            assert at[value][2] == pytest.approx(P, rel=1e-8), (corner, value)


def test_each_kij_locus_meets_the_corners_of_separately_traced_envelopes():
    mixture = _mixture()
    parameter = parse_parameter("kij:methane-n-octane", mixture.names)
    loci = corner_loci(mixture, FEED, parameter, (0.0, 0.12), at=SAMPLES)
    assert loci.success
    for corner in loci.loci:
        q = loci.curve(corner)[:, 0]
        assert q[0] == 0.0 and q[-1] == pytest.approx(0.12, abs=1e-12) and np.all(np.diff(q) > 0)
    _check_against_separate_envelopes(mixture, FEED, parameter, loci, SAMPLES)


def test_each_blend_locus_meets_the_corners_of_separately_traced_envelopes():
    mixture = _mixture()
    parameter = blend_parameter(FEED, SECOND)
    loci = corner_loci(mixture, FEED, parameter, (0.0, 1.0), at=(0.5,))
    assert loci.success
    _check_against_separate_envelopes(mixture, FEED, parameter, loci, (0.5,))
    _, middle = perturbed(mixture, FEED, parameter, 0.5)
    assert np.allclose(middle, 0.5 * (FEED + SECOND), rtol=1e-15)


def test_a_corner_that_ceases_to_exist_ends_its_locus_where_it_does():
    # A feed richer in n-octane: the envelope loses its critical point near kij = 0.03 (the model's
    # critical line reaches zero pressure) and its cricondenbar near kij = 0.10 (the locus turns back).
    names = ["methane", "ethane", "propane", "n-octane"]
    mixture = Mixture(tuple(lookup(n) for n in names), family("pr"))
    loci = corner_loci(mixture, np.array([0.82, 0.09, 0.05, 0.04]),
                       parse_parameter("kij:methane-n-octane", names), (0.0, 0.12))
    critical, cricondenbar = loci.loci["critical"], loci.loci["cricondenbar"]
    assert critical.status == "zero_pressure" and abs(critical.rows[-1][2]) < 1e-3
    assert cricondenbar.status == "turned_back" and "where the locus turns back" in cricondenbar.message
    q = loci.curve("cricondenbar")[:, 0]
    assert np.all(np.diff(q) > 0) and 0.09 < q[-1] < 0.12
    assert loci.loci["cricondentherm"].status == "bound_reached"


def test_json_has_a_branch_object_for_each_corner_with_the_constant_first(capsys, tmp_path):
    code, out, _ = run(["corners", "--mixture", GAS, "--eos", "pr", "--vary", "kij:methane-n-octane=0:0.06", "--json",
                        "--csv", str(tmp_path / "c.csv"), "--plot", str(tmp_path / "c.png")], capsys)
    assert code == 0
    document = json.loads(out)
    assert document["caution"] == CAUTION
    assert list(document["corners"]) == ["critical", "cricondenbar", "cricondentherm"]
    for branch in document["corners"].values():
        assert branch["columns"][:3] == ["kij", "T", "P"]
        assert branch["status"] == "bound_reached" and branch["points"][-1][0] == pytest.approx(0.06)
    text = (tmp_path / "c.csv").read_text()
    assert "corner,kij,T,P" in text and "Caution" in text
    assert (tmp_path / "c.png").stat().st_size > 10000


@pytest.mark.parametrize("vary, message", [
    ("kij:methane-n-octane", "--vary 'kij:methane-n-octane' must be CONSTANT=FIRST:LAST"),
    ("kij:methane-n-octane=0.1:0.1", "the range 0.1:0.1 is empty; give two different values"),
    ("Vc:methane=0:1", "unknown constant 'Vc'"),
    ("kij:methane-n-decane=0:0.1", "is not a pair of components of the mixture"),
    ("kij:methane-n-octane=0:1.5", "lies outside (-1, 1)"),
    ("blend:methane=0.9,ethane=0.1=0:1", "--vary blend: the second feed has methane, ethane; give it the components"),
    ("blend:methane=0.8,ethane=0.08,propane=0.06,n-butane=0.04,n-octane=0.02=0:4",
     "blend = 4 gives a feed with a mole fraction of zero or below"),
])
def test_bad_vary_is_one_line_and_exit_2(vary, message, capsys):
    code, out, err = run(["corners", "--mixture", GAS, "--eos", "pr", "--vary", vary], capsys)
    assert code == 2 and out == ""
    assert message in err and err.count("\n") == 1


def test_a_cricondenbar_that_runs_into_the_critical_point_stops_there_and_says_so():
    # More n-heptane moves the critical point up the bubble side until it meets the cricondenbar (K = 1).
    names = ["methane", "ethane", "propane", "n-butane", "n-heptane"]
    mixture = Mixture(tuple(lookup(n) for n in names), family("pr"))
    z = np.array([0.70, 0.10, 0.08, 0.05, 0.07])
    loci = corner_loci(mixture, z, parse_parameter("z:n-heptane", names), (0.07, 0.12), pictured=False)
    columns, rows, status, message, success, _ = loci.loci["cricondenbar"]
    assert status == "meets_critical" and not success
    assert "where the cricondenbar comes within |ln K| = 0.02 of the critical point (K = 1)" in message
    critical = loci.curve("critical")
    # Where it stops (|ln K| = 0.02, not at K = 1 itself), the critical locus passes nearly through the same state.
    stop = rows[-1]
    assert stop[1] == pytest.approx(np.interp(stop[0], critical[:, 0], critical[:, 1]), rel=1e-2)
    assert stop[2] == pytest.approx(np.interp(stop[0], critical[:, 0], critical[:, 2]), rel=1e-2)
