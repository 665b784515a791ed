"""contin thermo: output units, run records, destinations checked first, help examples."""

from __future__ import annotations

import csv
import json

import pytest

from contin.commands._cli import main


def run(capsys, *words):
    code = main(list(words))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def data_rows(path):
    lines = [line for line in path.read_text().splitlines() if not line.startswith("#")]
    return list(csv.reader(lines))


def test_degc_bar_units_in_summary_and_csv_but_json_stays_si(tmp_path, capsys):
    si, engineering = tmp_path / "si.csv", tmp_path / "degc.csv"
    code, out, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--csv", str(si))
    assert code == 0 and "T [K], P [Pa]" in out
    code, out, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--csv", str(engineering),
                       "--units", "degC-bar")
    assert code == 0 and "T [degC], P [bar]" in out
    a, b = data_rows(si), data_rows(engineering)
    assert a[0] == b[0][:len(a[0])]
    for row_si, row_eng in zip(a[1:], b[1:], strict=True):
        assert float(row_eng[0]) == pytest.approx(float(row_si[0]) - 273.15)  # 0 degC = 273.15 K (exact)
        assert float(row_eng[1]) == pytest.approx(float(row_si[1]) / 1e5)    # 1 bar = 1e5 Pa (exact)
        assert float(row_eng[2]) == pytest.approx(float(row_si[2]))          # volumes stay in m3/mol
    assert "# units: T [degC], P [bar]" in engineering.read_text()
    code, out, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--json", "--units", "degC-bar")
    document = json.loads(out)
    assert document["special_points"][0]["values"]["T"] == pytest.approx(369.83)  # JSON in K regardless


def test_run_record_holds_the_command_and_the_component_data(tmp_path, capsys):
    record = tmp_path / "record.json"
    code, _, _ = run(capsys, "thermo", "critical", "--fluid", "ethane", "--eos", "srk", "--record", str(record))
    assert code == 0
    saved = json.loads(record.read_text())
    assert saved["input"]["kind"] == "thermo" and saved["input"]["eos"] == "srk"
    assert saved["input"]["fluid"]["name"] == "ethane" and saved["input"]["fluid"]["Tc"] == pytest.approx(305.32)
    assert "Poling" in saved["input"]["fluid"]["source"]
    assert saved["command"] == ["contin", "thermo", "critical", "--fluid", "ethane", "--eos", "srk", "--record", str(record)]
    assert saved["result"]["special_points"][0]["kind"] == "critical"


def test_unwritable_destinations_are_refused_before_any_work(tmp_path, capsys):
    missing = tmp_path / "no-such-folder"
    for option, name in (("--csv", "x.csv"), ("--plot", "x.png"), ("--record", "x.json")):
        code, out, err = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", option, str(missing / name))
        assert code == 2 and "does not exist" in err and out == ""
    code, _, err = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--plot", str(tmp_path / "x.bmp"))
    assert code == 2 and "must end in .png, .svg or .pdf" in err
    assert not any(tmp_path.iterdir())


def test_unknown_units_option_value_is_refused(capsys):
    code, _, err = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--units", "imperial")
    assert code == 2 and "--units: unknown unit system 'imperial'" in err and "use si, degC-bar or degF-psia" in err


def test_pressure_given_as_a_temperature_is_refused(capsys):
    code, _, err = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--at-pressures", "300 K")
    assert code == 2 and "'300 K' is a temperature, but a pressure is needed" in err


@pytest.mark.parametrize("command", ["saturation", "spinodal", "critical", "components", "envelope", "pxy", "txy"])
def test_every_thermo_command_help_has_an_example(command, capsys):
    code, out, _ = run(capsys, "thermo", command, "--help")
    assert code == 0
    assert "examples:" in out and f"contin thermo {command}" in out


# -- Ctrl-C: what was traced so far is written, with status interrupted ---------------------------

@pytest.fixture
def ctrl_c_at_point_5(monkeypatch):
    import contin

    def interrupt(self, index, x, special_points):
        if index == 5:
            raise KeyboardInterrupt

    monkeypatch.setattr(contin.Progress, "__call__", interrupt)


@pytest.mark.parametrize("command", [
    ["saturation", "--fluid", "propane", "--eos", "pr"],
    ["envelope", "--mixture", "methane=0.8,ethane=0.1,propane=0.06,n-butane=0.04", "--eos", "pr"],
])
def test_ctrl_c_writes_what_was_traced(command, ctrl_c_at_point_5, tmp_path, capsys):
    table = tmp_path / "partial.csv"
    code, out, _ = run(capsys, "thermo", *command, "--csv", str(table), "--json")
    assert code == 1
    document = json.loads(out)
    assert document["status"] == "interrupted"
    assert 1 <= len(document["points"]) <= 7
    assert len(data_rows(table)) == len(document["points"]) + 1  # header + the rows traced so far
    assert "Caution" in table.read_text()


def test_thermo_records_hold_tolerances(tmp_path, capsys):
    record = tmp_path / "r.json"
    code, _, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--record", str(record))
    assert code == 0
    saved = json.loads(record.read_text())
    assert saved["options"] == {"tolerance": 1e-12, "max_step": 0.5}
    assert {"setup_seconds", "trace_seconds"} <= set(saved["result"]["stats"])


def test_degf_psia_units_in_summary_and_csv(tmp_path, capsys):
    si, customary = tmp_path / "si.csv", tmp_path / "degf.csv"
    code, _, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--csv", str(si))
    assert code == 0
    code, out, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--csv", str(customary),
                       "--units", "degF-psia")
    assert code == 0 and "T [degF], P [psia]" in out
    assert "# units: T [degF], P [psia]" in customary.read_text()
    for row_si, row_us in zip(data_rows(si)[1:], data_rows(customary)[1:]):
        # degF = K x 9/5 - 459.67; 1 psi = 6894.757293168361 Pa (both exact, definition)
        assert float(row_us[0]) == pytest.approx(float(row_si[0]) * 1.8 - 459.67)
        assert float(row_us[1]) == pytest.approx(float(row_si[1]) / 6894.757293168361)


def test_units_engineering_is_refused_naming_the_sets(capsys):
    code, out, err = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--units", "engineering")
    assert code == 2 and out == ""
    assert err.strip().splitlines() == [
        "contin: error: --units: unknown unit system 'engineering': the sets are named by the units they contain; "
        "use si, degC-bar or degF-psia"]


def test_temperature_input_in_fahrenheit(capsys):
    code, out, _ = run(capsys, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--json",
                       "--at-temperatures", "32 degF")
    at = json.loads(out)["at"]
    assert code == 0 and len(at) == 1 and at[0][0] == pytest.approx(273.15, rel=1e-12)  # 32 degF = 273.15 K (exact)
