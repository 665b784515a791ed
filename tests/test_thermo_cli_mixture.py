"""Command line of the mixture tools: bad input messages and the JSON contract."""

import json

import pytest

from contin_thermo.commands import _cli_mixture as cli


def run(argv, capsys):
    """Through the real entry point: `contin thermo ...` (errors come out as one 'contin: error:' line)."""
    from contin.commands._cli import main

    code = main(["thermo", *argv])
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
    code, out, _ = run(["critical", "--mixture", "methane=0.8,ethane=0.2", "--eos", "pr", "--json"], capsys)
    assert code == 0
    document = json.loads(out)
    assert document["special_points"][0]["kind"] == "critical"
    # Between the pure critical temperatures of methane (190.56 K) and ethane (305.32 K) (Poling et al., memory)
    values = document["special_points"][0]["values"]
    assert 190.56 < values["T"] < 305.32
    # An independent criterion (Gibbs' conditions for a binary at fixed T and P, common practice):
    # d ln f1 / dx1 = d^2 ln f1 / dx1^2 = 0 at the critical composition; computed here from the
    # model's fugacities by central differences, not by the Heidemann-Khalil solve the tool uses.
    assert_binary_critical(["methane", "ethane"], 0.8, values["T"], values["P"])


def assert_binary_critical(names, x1, T, P):
    import math

    import numpy as np

    from contin_thermo.models._components import lookup
    from contin_thermo.models._eos import family
    from contin_thermo.models._mixture import Mixture

    mixture = Mixture(tuple(lookup(n) for n in names), family("pr"))

    def ln_f1(T, P, x):
        return math.log(x) + mixture.ln_phi(T, P, np.array([x, 1.0 - x]), "stable")[0]

    def derivatives(T, P, h=1e-4):
        a, b, c = (ln_f1(T, P, x1 + k * h) for k in (-1, 0, 1))
        return (c - a) / (2 * h), (c - 2 * b + a) / h**2

    first, second = derivatives(T, P)
    # truncation O(h^2) of the third derivative (about 1e-6 and 1e-5 here) against O(0.1-10) away from it
    assert abs(first) < 1e-5 and abs(second) < 1e-4
    for off in ((T + 5.0, P), (T, P * 1.05)):
        assert abs(derivatives(*off)[0]) > 0.1


def test_pxy_temperature_with_a_unit_and_a_plot(capsys, tmp_path):
    picture = tmp_path / "pxy.png"
    code, out, _ = run(["pxy", "--mixture", "propane,n-butane", "--temperature", "30 degC", "--eos", "pr",
                        "--json", "--plot", str(picture)], capsys)
    assert code == 0
    document = json.loads(out)
    assert document["columns"] == ["x1", "y1", "P", "v_liquid", "v_vapour"]
    assert picture.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # 30 degC = 303.15 K exactly (definition of the Celsius scale): the pure n-butane end sits at that T,
    # where its PR vapour pressure lies between 2 and 4 bar (NIST WebBook about 2.8 bar; memory) and
    # equals the same model's pure-fluid saturation pressure.
    assert 2e5 < document["points"][0][2] < 4e5
    assert document["points"][0][0] == 0.0
    assert document["points"][0][2] == pytest.approx(_pure_row("n-butane", T=303.15)[1], rel=1e-8)


def test_txy_pressure_in_bar(capsys):
    code, out, _ = run(["txy", "--mixture", "propane,n-butane", "--pressure", "5 bar", "--eos", "pr", "--json"], capsys)
    assert code == 0
    rows = json.loads(out)["points"]
    # 5 bar is 5e5 Pa (definition): the pure propane end boils near 273 K there (common practice: about 0 degC),
    # at the same model's pure-fluid saturation temperature.
    assert 265.0 < rows[-1][2] < 280.0
    assert rows[-1][0] == pytest.approx(1.0, abs=1e-12)
    assert rows[-1][2] == pytest.approx(_pure_row("propane", P=5e5)[0], rel=1e-8)


def _pure_row(fluid, T=None, P=None):
    """(T, P) of the pure-fluid PR saturation curve at a requested temperature or pressure."""
    from contin_thermo.curves._pure import saturation_curve

    curve = saturation_curve(fluid, "pr", at_temperatures=[T] if T else (), at_pressures=[P] if P else ())
    (row,) = curve.at
    columns = list(curve.columns)
    return float(row[columns.index("T")]), float(row[columns.index("P")])


def test_unknown_temperature_unit(capsys):
    code, _, err = run(["pxy", "--mixture", "propane,n-butane", "--temperature", "30 degX", "--eos", "pr"], capsys)
    assert code != 0 and "unknown temperature unit 'degX'" in err and "did you mean 'deg" in err


def test_from_pressure_with_a_unit(capsys):
    code, out, _ = run(["envelope", "--mixture", "methane=0.8,ethane=0.1,propane=0.06,n-butane=0.04", "--eos", "pr",
                        "--from-pressure", "2 bar", "--json"], capsys)
    assert code == 0
    points = json.loads(out)["points"]
    assert points[0][1] == pytest.approx(2e5, rel=1e-9) and points[-1][1] == pytest.approx(2e5, rel=1e-9)


# -- output units, run records, readable status, notebook methods -----------------------------------

LEAN = "methane=0.8,ethane=0.1,propane=0.06,n-butane=0.04"  # invented lean gas


def test_envelope_units_and_record(tmp_path, capsys):
    record = tmp_path / "record.json"
    code, out, _ = run(["envelope", "--mixture", LEAN, "--eos", "pr", "--units", "degC-bar",
                        "--kij", "methane-n-butane=0.02", "--record", str(record)], capsys)
    assert code == 0
    assert "degC" in out and "bar" in out
    assert "completed: from the dew point at 100000 Pa through the" in out and "critical point" in out
    saved = json.loads(record.read_text())
    assert saved["input"]["command"] == "envelope" and saved["input"]["eos"] == "pr"
    assert [c["name"] for c in saved["input"]["components"]] == ["methane", "ethane", "propane", "n-butane"]
    assert saved["input"]["kij"][0][3] == 0.02 and saved["input"]["feed"] == [0.8, 0.1, 0.06, 0.04]
    assert {sp["kind"] for sp in saved["result"]["special_points"]} == {"critical", "cricondenbar", "cricondentherm"}


def test_missing_output_folder_refused_before_work(tmp_path, capsys):
    code, out, err = run(["envelope", "--mixture", LEAN, "--eos", "pr", "--csv", str(tmp_path / "no" / "x.csv")], capsys)
    assert code == 2 and "does not exist" in err and out == ""


def test_result_objects_in_a_notebook():
    import contin_thermo

    mixture = contin_thermo.mixture(["methane", "ethane", "propane", "n-butane"], "pr")
    envelope = contin_thermo.trace_envelope(mixture, [0.8, 0.1, 0.06, 0.04], check_stability=False)
    assert repr(envelope).startswith("<Envelope of 4 components (Peng-Robinson)") and "critical" in repr(envelope)
    axes = envelope.plot()
    assert axes.get_xlabel().startswith("temperature") and len(axes.lines) >= 2
    frame = envelope.to_dataframe()
    assert list(frame.columns[:3]) == ["T", "P", "side"] and len(frame) == len(envelope.rows)
    diagram = contin_thermo.pxy(contin_thermo.mixture(["propane", "n-butane"], "pr"), 300.0)
    assert repr(diagram).startswith("<pxy diagram of propane + n-butane at T = 300 K")
    assert diagram.message == "completed: from pure n-butane (x1 = 0) to pure propane (x1 = 1)"
    assert diagram.plot().get_xlabel() == "mole fraction of propane"
    assert list(diagram.to_dataframe().columns) == ["x1", "y1", "P", "v_liquid", "v_vapour"]
