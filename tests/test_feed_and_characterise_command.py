"""Feeds from a file and `contin thermo characterise`: a laboratory analysis ending in a plus fraction.

The analysis is invented (the Fernhollow separator gas, made-up numbers). Identities checked: the
split and the lumps reproduce the plus fraction's mole fraction, molar mass and specific gravity.
"""

from __future__ import annotations

import json
import math

import pytest

from contin.commands._cli import main
from contin.base._errors import InputError
from contin_thermo.models._feed import read_feed

CSV = """# invented analysis (mole percent)
nitrogen, 1.20
carbon dioxide, 2.10
methane, 74.30
ethane, 8.10
propane, 4.60
n-butane, 2.40
n-pentane, 1.30
n-hexane, 1.88
C7+, 4.12, molar_mass=182.0, specific_gravity=0.815
"""

TOML = """
[[component]]
name = "methane"
percent = 90.0
[[component]]
name = "ethane"
percent = 6.0
[[component]]
name = "C7+"
percent = 4.0
molar_mass = 160.0
specific_gravity = 0.80
"""


def test_mole_percent_in_csv_become_mole_fractions(tmp_path):
    path = tmp_path / "analysis.csv"
    path.write_text(CSV)
    rows = read_feed(path)
    assert [row["name"] for row in rows][-1] == "C7+" and len(rows) == 9
    assert math.fsum(row["z"] for row in rows) == pytest.approx(1.0, abs=1e-12)
    assert rows[-1]["z"] == pytest.approx(0.0412) and rows[-1]["molar_mass"] == 182.0
    assert rows[-1]["specific_gravity"] == 0.815


def test_a_toml_feed_reads_the_same_way(tmp_path):
    path = tmp_path / "analysis.toml"
    path.write_text(TOML)
    rows = read_feed(path)
    assert [(row["name"], round(row["z"], 12)) for row in rows] == [("methane", 0.9), ("ethane", 0.06), ("C7+", 0.04)]


@pytest.mark.parametrize("text, message", [
    ("methane\n", "line 1: expected 'name, amount'"),
    ("methane, -3\n", "line 1: the amount of 'methane' is -3"),
    ("methane, 0.5\nmethane, 0.5\n", "line 2: 'methane' is given twice (first at"),
    ("methane, 0.9\nC7+, 0.1, density=0.8\n", "line 2: unknown field 'density'"),
    ("methane, 0.9\nC7+, 0.1, molar_mass\n", "line 2: expected key=value after the amount"),
    ("methane, abc\n", "line 1: the amount of 'methane'"),
    ("# nothing\n", "no components"),
])
def test_bad_csv_feeds_name_the_file_and_line(tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(InputError, match="bad.csv") as caught:
        read_feed(path)
    assert message in str(caught.value)


def test_bad_toml_feeds_and_files(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text('[[component]]\nname = "methane"\nz = 0.5\npercent = 50.0\n')
    with pytest.raises(InputError, match=r"\[\[component\]\] number 1: give exactly one of z"):
        read_feed(path)
    path.write_text('feed = 3\n')
    with pytest.raises(InputError, match="unknown key 'feed'"):
        read_feed(path)
    with pytest.raises(InputError, match="no such file"):
        read_feed(tmp_path / "missing.csv")
    with pytest.raises(InputError, match="not a regular file"):
        read_feed(tmp_path)
    binary = tmp_path / "binary.csv"
    binary.write_bytes(b"methane\0, 1\n")
    with pytest.raises(InputError, match="binary file"):
        read_feed(binary)


def test_characterise_prints_the_pseudo_components_methods_and_checks(tmp_path, capsys):
    path = tmp_path / "analysis.csv"
    path.write_text(CSV)
    assert main(["thermo", "characterise", "--feed", str(path), "--json", "--pseudo", "4"]) == 0
    document = json.loads(capsys.readouterr().out)
    pseudo = document["components"]
    assert len(pseudo) == 4
    assert set(pseudo[0]) == {"name", "z", "molar_mass", "specific_gravity", "boiling_point", "Tc", "Pc", "omega"}
    # The lumps reproduce the plus fraction (an identity of the split and the mixing rules).
    z = sum(p["z"] for p in pseudo)
    assert z == pytest.approx(0.0412, rel=1e-12)
    assert sum(p["z"] * p["molar_mass"] for p in pseudo) / z == pytest.approx(182.0, rel=1e-10)
    mass = sum(p["z"] * p["molar_mass"] for p in pseudo)
    assert mass / sum(p["z"] * p["molar_mass"] / p["specific_gravity"] for p in pseudo) == pytest.approx(0.815, rel=1e-10)
    assert {"split", "critical_constants", "lumping"} <= set(document["methods"])
    assert "Whitson" in document["methods"]["split"] and "Caution" in document["caution"]
    assert math.fsum(row["z"] for row in document["feed"]) == pytest.approx(1.0, abs=1e-12)
    assert main(["thermo", "characterise", "--feed", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Kesler & Lee" in out and "Caution" in out and "C7-" in out


def test_characterise_refuses_unknown_methods_in_one_line(tmp_path, capsys):
    path = tmp_path / "analysis.csv"
    path.write_text(CSV)
    assert main(["thermo", "characterise", "--feed", str(path), "--split", "gama"]) == 2
    err = capsys.readouterr().err
    assert "split='gama' is not known" in err and len(err.strip().splitlines()) == 1


def test_an_envelope_of_an_analysis_uses_its_pseudo_components(tmp_path, capsys):
    path = tmp_path / "analysis.csv"
    path.write_text(CSV)
    # kij none: with the default table this rich analysis's envelope runs open (see test_feed_commands.py)
    assert main(["thermo", "envelope", "--feed", str(path), "--eos", "pr", "--kij", "none", "--json"]) in (0, 1)
    document = json.loads(capsys.readouterr().out)
    names = document["components"]
    assert names[:8] == ["nitrogen", "carbon dioxide", "methane", "ethane", "propane", "n-butane", "n-pentane",
                         "n-hexane"]
    assert [name.startswith("C") for name in names[8:]] == [True, True, True]  # three pseudo-components
    assert sum(document["feed"]) == pytest.approx(1.0, abs=1e-12)
    assert {"critical", "cricondenbar", "cricondentherm"} <= {sp["kind"] for sp in document["special_points"]}
    code = main(["thermo", "envelope", "--feed", str(path), "--mixture", "methane=1", "--eos", "pr"])
    assert code == 2 and "not allowed with argument" in capsys.readouterr().err
