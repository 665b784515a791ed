"""--feed on every mixture command and --kij defaults|none with pairs overriding single values.

The analyses are invented. Checks: a feed gives the same answers as the same mixture written out;
every kij used is listed with its source in the JSON output and the run record.
"""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from contin.commands._cli import main
from contin_thermo.curves._binary import pxy
from contin_thermo.curves._mixture_critical import critical_point
from contin_thermo.models._characterise import characterise
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._kij import default_kij
from contin_thermo.models._mixture import Mixture

RICH = """# invented separator gas, mole percent
carbon dioxide, 2.0
methane, 88.0
ethane, 6.0
C7+, 4.0, molar_mass=160.0, specific_gravity=0.80
"""
# A lighter invented analysis: its critical point is found with the default kij too.
LIGHT = pathlib.Path(__file__).parent / "data" / "light_analysis.csv"
LIGHT_ROWS = [("carbon dioxide", 0.05), ("methane", 0.60), ("ethane", 0.12), ("propane", 0.15), ("C7+", 0.08, 110.0, 0.74)]
BINARY = "propane, 40\nn-butane, 60\n"


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


def _json(capsys, argv):
    code = main(argv)
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out)


def _rows():
    return [("carbon dioxide", 0.02), ("methane", 0.88), ("ethane", 0.06), ("C7+", 0.04, 160.0, 0.80)]


def test_critical_point_of_a_feed_is_that_of_its_characterised_mixture(tmp_path, capsys):
    feed = _write(tmp_path, "gas.csv", RICH)
    document = _json(capsys, ["thermo", "critical", "--feed", feed, "--eos", "pr", "--kij", "none", "--json"])
    result = characterise(_rows())
    point = critical_point(result.mixture("pr"), result.z)
    assert document["components"] == [c.name for c in result.components]
    assert document["points"][0][0] == pytest.approx(point.T, rel=1e-12)
    assert document["points"][0][1] == pytest.approx(float(point.P), rel=1e-12)


def test_pxy_of_a_two_component_feed_is_that_of_the_named_binary(tmp_path, capsys):
    feed = _write(tmp_path, "pair.csv", BINARY)
    document = _json(capsys, ["thermo", "pxy", "--feed", feed, "--eos", "pr", "--temperature", "300", "--json"])
    mixture = Mixture((lookup("propane"), lookup("n-butane")), family("pr"), np.zeros((2, 2)))
    assert np.array_equal(np.array(document["points"], dtype=float), np.array(pxy(mixture, 300.0).to_dict()["points"], dtype=float))
    assert document["kij"] == [{"component_1": "propane", "component_2": "n-butane", "kij": 0.0,
                                "source": "no default for this pair: 0 (hydrocarbon pairs: common practice)"}]


@pytest.mark.parametrize("command, option", [("pxy", ["--temperature", "300"]), ("txy", ["--pressure", "5bar"])])
def test_binary_diagrams_refuse_a_plus_fraction_or_three_components(tmp_path, capsys, command, option):
    for text, message in ((RICH, f"{command} needs a binary of two named components, but the feed holds the plus "
                                 "fraction 'C7+'"),
                          ("methane, 0.5\nethane, 0.3\npropane, 0.2\n", f"{command} needs a binary, but the feed "
                                                                          "holds 3 components")):
        feed = _write(tmp_path, "f.csv", text)
        assert main(["thermo", command, "--feed", feed, "--eos", "pr", *option]) == 2
        err = capsys.readouterr().err.strip()
        assert message in err and len(err.splitlines()) == 1


def test_a_feed_takes_the_default_kij_with_sources_and_user_pairs_override_them(tmp_path, capsys):
    feed = str(LIGHT)
    record = tmp_path / "run.json"
    document = _json(capsys, ["thermo", "critical", "--feed", feed, "--eos", "pr", "--json", "--record", str(record),
                              "--kij", "methane-ethane=0.005"])
    result = characterise(LIGHT_ROWS)
    expected = default_kij(result.components, "pr", overrides={("methane", "ethane"): 0.005})
    pairs = {(p["component_1"], p["component_2"]): p for p in document["kij"]}
    n = len(result.components)
    assert len(pairs) == n * (n - 1) // 2
    assert pairs[("methane", "ethane")] == {"component_1": "methane", "component_2": "ethane", "kij": 0.005,
                                            "source": "user"}
    assert "Knapp" in pairs[("carbon dioxide", "methane")]["source"]
    heavy = result.components[-1].name
    assert "Chueh & Prausnitz" in pairs[("methane", heavy)]["source"]
    assert [p["kij"] for p in document["kij"]] == [p["kij"] for p in expected.pairs()]
    saved = json.loads(record.read_text())["input"]
    assert saved["kij_pairs"] == document["kij"]
    assert np.array_equal(np.array(saved["kij"]), expected.matrix)


def test_kij_none_and_the_mixture_default(tmp_path, capsys):
    feed = str(LIGHT)
    document = _json(capsys, ["thermo", "critical", "--feed", feed, "--eos", "srk", "--json",
                              "--kij", "none,carbon dioxide-methane=0.09"])
    sources = {(p["component_1"], p["component_2"]): (p["kij"], p["source"]) for p in document["kij"]}
    assert sources.pop(("carbon dioxide", "methane")) == (0.09, "user")
    assert set(sources.values()) == {(0.0, "none: 0 (kij none)")}
    mixture = _json(capsys, ["thermo", "critical", "--mixture", "methane=0.9,carbon dioxide=0.1", "--eos", "pr",
                             "--json"])  # --mixture starts from none
    assert mixture["kij"] == [{"component_1": "methane", "component_2": "carbon dioxide", "kij": 0.0,
                               "source": "none: 0 (kij none)"}]
    table = _json(capsys, ["thermo", "critical", "--mixture", "methane=0.9,carbon dioxide=0.1", "--eos", "pr",
                           "--json", "--kij", "defaults"])
    assert table["kij"][0]["kij"] == 0.0919 and "Knapp" in table["kij"][0]["source"]  # data/kij.csv


@pytest.mark.parametrize("kij, message", [
    ("nonee", "--kij entry 'nonee' must be NAME-NAME=VALUE"),
    ("defaults,none", "--kij entry 'none' must be NAME-NAME=VALUE"),
    ("defaults,methane-C7=0.01", "--kij pair 'methane-C7' is not a pair of components of the mixture"),
    ("methane-ethane=0.01,ethane-methane=0.02", "--kij gives the pair methane-ethane twice"),
])
def test_bad_kij_requests_are_refused_in_one_line(tmp_path, capsys, kij, message):
    feed = _write(tmp_path, "gas.csv", RICH)
    assert main(["thermo", "critical", "--feed", feed, "--eos", "pr", "--kij", kij]) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1


def test_mixture_and_feed_together_are_refused(tmp_path, capsys):
    feed = _write(tmp_path, "gas.csv", RICH)
    assert main(["thermo", "critical", "--feed", feed, "--mixture", "methane=1", "--eos", "pr"]) == 2
    assert "--mixture and --feed cannot be combined" in capsys.readouterr().err


def test_the_summary_says_what_the_feed_and_the_kij_became(capsys):
    assert main(["thermo", "critical", "--feed", str(LIGHT), "--eos", "pr", "--kij", "defaults,methane-ethane=0.01"]) == 0
    out = capsys.readouterr().out
    names = ", ".join(p.name for p in characterise(LIGHT_ROWS).pseudo)
    assert f"  feed     : C7+ of {LIGHT} characterised into {names} (" in out
    # 4 explicit components and 3 pseudo-components: 21 pairs; CO2 with methane, ethane, propane and
    # the 3 lumps from the table, methane with the 3 lumps by Chueh-Prausnitz, one from the user.
    assert ("  kij      : defaults: 6 from the table, 3 by Chueh-Prausnitz, 1 from you, 11 at 0 (every pair with "
            "its source in --json and --record)") in out
    assert out.rstrip().splitlines()[-1].startswith("Caution:")


def test_default_kij_need_an_equation_of_state_of_the_table(capsys):
    assert main(["thermo", "critical", "--feed", str(LIGHT), "--eos", "vdw"]) == 2
    assert capsys.readouterr().err.strip() == ("contin: error: --kij defaults: the default table is for the pr and srk "
                                               "equations only; with vdw use '--kij none' (then pairs, if you have "
                                               "values)")
    document = _json(capsys, ["thermo", "critical", "--feed", str(LIGHT), "--eos", "rk", "--kij", "none", "--json"])
    assert document["model"] == "Redlich-Kwong" and {p["source"] for p in document["kij"]} == {"none: 0 (kij none)"}
