"""The `contin thermo` command line for pure fluids: outputs, files, and each bad input's message."""

import json

import pytest

from contin.commands._cli import main


def run(capsys, *argv):
    code = main(["thermo", *argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_saturation_json_layout(capsys):
    code, out, _ = run(capsys, "saturation", "--fluid", "propane", "--eos", "pr", "--at-pressures", "101325",
                       "--at-temperatures", "300", "--json")
    assert code == 0
    document = json.loads(out)
    assert document["columns"] == ["T", "P", "v_liquid", "v_vapour", "rho_liquid", "rho_vapour", "h_vaporisation"]
    (critical,) = document["special_points"]
    assert critical["kind"] == "critical" and critical["index"] == len(document["points"]) - 1
    # Peng-Robinson reproduces the table's Pc exactly at its own critical point (by construction).
    assert critical["values"]["P"] == pytest.approx(42.48e5, rel=1e-9)
    assert [round(row[0], 6) for row in document["at"]] == [pytest.approx(230.93, abs=0.01), 300.0]
    assert document["at"][0][1] == pytest.approx(101325.0, rel=1e-12)
    assert {"setup_seconds", "trace_seconds", "newton_iterations", "jacobian_evaluations"} <= set(document["stats"])
    assert document["caution"].startswith("Caution:")


def test_saturation_summary_carries_the_caution(capsys):
    code, out, _ = run(capsys, "saturation", "--fluid", "C1", "--eos", "srk")
    assert code == 0
    assert "saturation of methane with Soave-Redlich-Kwong" in out
    assert "critical : T = 190.56" in out
    assert "Caution: cubic equations of state are approximate" in out


def test_own_fluid_csv_and_plot(capsys, tmp_path):
    csv_path, plot_path = tmp_path / "own.csv", tmp_path / "own.png"
    code, _, _ = run(capsys, "saturation", "--tc", "500", "--pc", "3e6", "--omega", "0.3", "--name", "my cut",
                     "--eos", "pr", "--csv", str(csv_path), "--plot", str(plot_path))
    assert code == 0
    text = csv_path.read_text()
    assert "# Caution: cubic equations of state" in text and "my cut" in text
    assert plot_path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_spinodal_json_columns(capsys):
    code, out, _ = run(capsys, "spinodal", "--fluid", "CO2", "--eos", "pr", "--json", "--at-temperatures", "250")
    assert code == 0
    document = json.loads(out)
    assert document["columns"] == ["T", "v_liquid_spinodal", "P_liquid_spinodal", "v_vapour_spinodal", "P_vapour_spinodal"]
    assert document["special_points"][0]["kind"] == "critical"
    assert document["at"][0][0] == 250.0
    assert document["at"][0][1] < document["at"][0][3]


def test_critical_json(capsys):
    code, out, _ = run(capsys, "critical", "--fluid", "water", "--eos", "vdw", "--json")
    assert code == 0
    document = json.loads(out)
    assert document["columns"] == ["T", "P", "v", "rho", "Z"]
    (row,) = document["points"]
    # van der Waals: Zc = 3/8 (textbook).
    assert row[0] == pytest.approx(647.14, rel=1e-12) and row[4] == pytest.approx(0.375, rel=1e-12)


def test_components_list(capsys):
    code, out, _ = run(capsys, "components")
    assert code == 0 and "n-decane" in out and "carbon dioxide" in out and "Poling" in out
    code, out, _ = run(capsys, "components", "--json")
    names = [c["name"] for c in json.loads(out)["components"]]
    assert len(names) >= 20 and "methane" in names


def test_components_file(capsys, tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text('[[component]]\nname = "heavy cut"\nTc = 700.0\nPc = 1.5e6\nomega = 0.9\n')
    code, out, _ = run(capsys, "critical", "--fluid", "heavy cut", "--components-file", str(path), "--eos", "srk")
    assert code == 0 and "heavy cut" in out


@pytest.mark.parametrize("argv, message", [
    (["saturation", "--fluid", "metane", "--eos", "pr"], "unknown component 'metane' in --fluid; did you mean 'methane'?"),
    (["saturation", "--tc", "-5", "--pc", "1e6", "--omega", "0.1", "--eos", "pr"], "--tc: '-5' is at or below absolute zero"),
    (["saturation", "--tc", "300", "--pc", "0", "--omega", "0.1", "--eos", "pr"], "--pc: '0' must be a positive pressure"),
    (["saturation", "--tc", "300", "--pc", "1e6", "--omega", "4", "--eos", "pr"], "omega=4 of 'custom fluid' is outside the plausible range"),
    (["saturation", "--fluid", "propane", "--eos", "pr", "--at-temperatures", "400"], "400 K is above the critical temperature 369.83 K"),
    (["saturation", "--fluid", "propane", "--eos", "pr", "--at-temperatures", "100"], "100 K is below the traced range"),
    (["saturation", "--fluid", "propane", "--eos", "pr", "--at-pressures", "5e6"], "5e+06 Pa is above the critical pressure"),
    (["saturation", "--fluid", "propane", "--tc", "300", "--eos", "pr"], "--fluid and --tc cannot be combined"),
    (["saturation", "--tc", "300", "--eos", "pr"], "your own fluid needs --tc, --pc and --omega; missing --pc, --omega"),
    (["saturation", "--eos", "pr"], "name the fluid with --fluid NAME"),
    (["saturation", "--fluid", "propane", "--eos", "pengrobinson"], "unknown equation of state 'pengrobinson' in --eos"),
    (["critical", "--fluid", "propane", "--eos", "pr", "--kij", "a-b=0.1"], "--kij, --component and --normalise apply to mixtures only"),
    (["saturation", "--fluid", "propane", "--eos", "pr", "--from-temperature", "500"], "--from-temperature 500 K is not below the critical temperature"),
])
def test_bad_input_messages(capsys, argv, message):
    code, out, err = run(capsys, *argv)
    assert code != 0
    assert message in err


def test_unusual_omega_warns_but_runs(capsys):
    code, _, err = run(capsys, "critical", "--tc", "300", "--pc", "1e6", "--omega", "1.8", "--eos", "pr")
    assert code == 0
    assert "warning: --tc/--pc/--omega: acentric factor omega=1.8" in err


def test_missing_eos_is_a_usage_error(capsys):
    code, _, err = run(capsys, "saturation", "--fluid", "propane")
    assert code == 2 and "--eos" in err


def test_critical_with_mixture_dispatches_to_the_mixture_commands(capsys):
    pytest.importorskip("contin_thermo.commands._cli_mixture")
    code, out, _ = run(capsys, "critical", "--mixture", "methane=0.5,ethane=0.5", "--eos", "pr", "--json")
    assert code == 0
    document = json.loads(out)
    (point,) = [p for p in document["special_points"] if p["kind"] == "critical"]
    # A binary's critical temperature lies between its components' (common practice for such a pair).
    assert 190.56 < point["values"]["T"] < 305.32
