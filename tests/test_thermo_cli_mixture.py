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
