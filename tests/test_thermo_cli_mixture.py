"""Command line of the mixture tools: bad input messages and the JSON contract."""

import argparse
import json

import pytest

from contin_thermo import _cli_mixture as cli


def parser():
    top = argparse.ArgumentParser(prog="contin thermo")
    sub = top.add_subparsers(dest="command")
    cli.register(sub)
    return top


def run(argv, capsys):
    args = parser().parse_args(argv)
    code = args.handler(args)
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.mark.parametrize(
    "mixture, extra, message",
    [
        ("metane=0.5,ethane=0.5", [], "did you mean 'methane'"),
        ("methane=1.2,ethane=-0.2", [], "negative"),
        ("methane=0,ethane=0", [], "every mole fraction is zero"),
        ("methane=0.5,ethane=0.4", [], "sum to 0.9, not 1; fix them or pass --normalise"),
        ("methane=1.0", [], "contin thermo saturation"),
        ("methane=0.5,C1=0.5", [], "twice"),
        ("methane=0.5,ethane=0.5", ["--kij", "methane-propane=0.1"], "not a pair of components of the mixture"),
        ("methane=0.5,ethane=0.5", ["--kij", "methane-ethane=1.5"], "outside (-1, 1)"),
    ],
)
def test_bad_input_messages(mixture, extra, message, capsys):
    code, _, err = run(["envelope", "--mixture", mixture, "--eos", "pr", *extra], capsys)
    assert code != 0
    assert message in err
    assert err.count("\n") == 1  # one line


def test_kij_with_hyphenated_names():
    kij = cli.parse_kij("methane-n-butane=0.02", ["methane", "n-butane"])
    assert kij[0, 1] == kij[1, 0] == 0.02 and kij[0, 0] == 0.0


def test_normalise_scales_fractions():
    _, z = cli.parse_mixture("methane=0.5,ethane=0.4", normalise=True)
    assert z.sum() == pytest.approx(1.0)


def test_envelope_json_contract(capsys, tmp_path):
    csv = tmp_path / "envelope.csv"
    code, out, _ = run(["envelope", "--mixture", "methane=0.8,ethane=0.1,propane=0.06,n-butane=0.04", "--eos", "srk",
                        "--json", "--csv", str(csv)], capsys)
    assert code == 0
    document = json.loads(out)
    assert document["columns"][:6] == ["T", "P", "side", "v_feed", "v_incipient", "stable"]
    assert {sp["kind"] for sp in document["special_points"]} == {"critical", "cricondenbar", "cricondentherm"}
    assert all(set(sp["values"]) == {"T", "P"} for sp in document["special_points"])
    assert "Caution" in document["caution"]
    assert csv.read_text().startswith("# phase envelope") and "Caution" in csv.read_text()


def test_critical_json(capsys):
    args = argparse.Namespace(mixture="methane=0.8,ethane=0.2", kij=None, component=[], eos="pr", json=True,
                              csv=None, plot=None, normalise=False)
    assert cli.run_critical(args) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["special_points"][0]["kind"] == "critical"
    # Between the pure critical temperatures of methane (190.56 K) and ethane (305.32 K) (Poling et al., memory)
    assert 190.56 < document["special_points"][0]["values"]["T"] < 305.32


def test_pxy_temperature_with_a_unit_and_a_plot(capsys, tmp_path):
    picture = tmp_path / "pxy.png"
    code, out, _ = run(["pxy", "--mixture", "propane,n-butane", "--temperature", "30 degC", "--eos", "pr",
                        "--json", "--plot", str(picture)], capsys)
    assert code == 0
    document = json.loads(out)
    assert document["columns"] == ["x1", "y1", "P", "v_liquid", "v_vapour"]
    assert picture.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # 30 degC = 303.15 K exactly (definition of the Celsius scale): the pure n-butane end sits at that T,
    # where its PR vapour pressure lies between 2 and 4 bar (NIST WebBook about 2.8 bar; memory).
    assert 2e5 < document["points"][0][2] < 4e5


def test_txy_pressure_in_bar(capsys):
    code, out, _ = run(["txy", "--mixture", "propane,n-butane", "--pressure", "5 bar", "--eos", "pr", "--json"], capsys)
    assert code == 0
    rows = json.loads(out)["points"]
    # 5 bar is 5e5 Pa (definition): the pure propane end boils near 273 K there (common practice: about 0 degC).
    assert 265.0 < rows[-1][2] < 280.0


def test_unknown_temperature_unit(capsys):
    code, _, err = run(["pxy", "--mixture", "propane,n-butane", "--temperature", "30 degF", "--eos", "pr"], capsys)
    assert code != 0 and "unknown temperature unit 'degF'" in err and "did you mean 'degC'" in err


def test_from_pressure_with_a_unit(capsys):
    code, out, _ = run(["envelope", "--mixture", "methane=0.8,ethane=0.1,propane=0.06,n-butane=0.04", "--eos", "pr",
                        "--from-pressure", "2 bar", "--json"], capsys)
    assert code == 0
    points = json.loads(out)["points"]
    assert points[0][1] == pytest.approx(2e5, rel=1e-9) and points[-1][1] == pytest.approx(2e5, rel=1e-9)
