"""--volume-translation on the commands that report volumes: equilibrium unchanged, volumes moved.

Identities checked: temperatures, pressures and K-values with and without the translation are the
same numbers (so to 1e-10 and better); every volume moves by the shift of its own phase's
composition. Published check: saturated-liquid densities move towards measured values.
"""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from contin.commands._cli import main
from contin_thermo.models._characterise import characterise, molar_mass_of
from contin_thermo.models._components import lookup
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.models._translation import translate_mixture_result, volume_shifts

# An invented analysis whose envelope closes with the default kij.
FEED = pathlib.Path(__file__).parent / "data" / "light_analysis.csv"
ROWS = [("carbon dioxide", 0.05), ("methane", 0.60), ("ethane", 0.12), ("propane", 0.15), ("C7+", 0.08, 110.0, 0.74)]
# Saturated-liquid densities, kg/m3, NIST Chemistry WebBook, fluid properties (from memory, to about
# 0.5 %): propane at 231.04 K 580.9; n-butane at 272.66 K 601.3; n-heptane at 298.15 K 679.5.
MEASURED = [("propane", 231.04, 580.9, "pr"), ("n-butane", 272.66, 601.3, "pr"), ("n-heptane", 298.15, 679.5, "srk")]


def _run(capsys, argv):
    code = main([*argv, "--json"])
    captured = capsys.readouterr()
    assert code in (0, 1) and captured.out, captured.err  # 1: traced, with a metastable stretch
    return json.loads(captured.out)


def _both(capsys, argv):
    return _run(capsys, argv), _run(capsys, [*argv, "--volume-translation"])


def _columns(document, names):
    k = [document["columns"].index(name) for name in names]
    return np.array([[row[i] for i in k] for row in document["points"]], dtype=float)


@pytest.mark.parametrize("name, T, measured, eos", MEASURED)
def test_saturation_keeps_pressures_and_moves_liquid_densities_towards_measured(capsys, name, T, measured, eos):
    plain, moved = _both(capsys, ["thermo", "saturation", "--fluid", name, "--eos", eos, "--at-temperatures", str(T)])
    assert np.array_equal(_columns(plain, ["T", "P", "h_vaporisation"]), _columns(moved, ["T", "P", "h_vaporisation"]))
    assert plain["special_points"][0]["values"]["P"] == moved["special_points"][0]["values"]["P"]
    k = plain["columns"].index("rho_liquid")
    density = [molar_mass_of(name) * 1e-3 * doc["at"][0][k] for doc in (plain, moved)]
    assert abs(density[1] - measured) < 0.3 * abs(density[0] - measured)
    assert density[1] == pytest.approx(measured, rel=0.02)
    assert "volume_translation" in moved["stats"] and "volume_translation" not in plain["stats"]


def test_envelope_of_a_feed_keeps_t_p_and_k_and_moves_volumes_by_each_phase_shift():
    result = characterise(ROWS)
    envelope = trace_envelope(result.mixture("pr", kij="defaults"), result.z, check_stability=False)
    moved = translate_mixture_result(envelope, result.z, molar_masses=result.molar_masses)
    plain_doc, moved_doc = envelope.to_dict(), moved.to_dict()
    k_names = [c for c in envelope.columns if c.startswith("K_")]
    assert np.array_equal(_columns(plain_doc, ["T", "P", *k_names]), _columns(moved_doc, ["T", "P", *k_names]))
    assert {"critical", "cricondenbar", "cricondentherm"} <= {sp["kind"] for sp in moved.special_points}
    shifts = volume_shifts(result.components, "pr", molar_masses=result.molar_masses)
    assert moved.stats["volume_translation"]["c"] == [float(c) for c in shifts.c]
    assert any("Jhaveri" in s and "M = " in s for s in moved.stats["volume_translation"]["sources"])
    z, K = result.z, _columns(plain_doc, k_names)
    before, after = _columns(plain_doc, ["v_feed", "v_incipient"]), _columns(moved_doc, ["v_feed", "v_incipient"])
    assert after[:, 0] == pytest.approx(before[:, 0] - shifts.c @ z, rel=1e-12)
    incipient = K * z / (K @ z)[:, None]
    assert after[:, 1] == pytest.approx(before[:, 1] - incipient @ shifts.c, rel=1e-12)


def test_the_envelope_and_critical_commands_translate_with_the_feed_molar_masses(capsys):
    plain, moved = _both(capsys, ["thermo", "envelope", "--mixture", "methane=0.9,propane=0.1", "--eos", "pr",
                                  "--quiet"])
    columns = ["T", "P", "K_methane", "K_propane"]
    assert np.array_equal(_columns(plain, columns), _columns(moved, columns))
    assert [sp["values"] for sp in plain["special_points"]] == [sp["values"] for sp in moved["special_points"]]
    assert not np.array_equal(_columns(plain, ["v_feed"]), _columns(moved, ["v_feed"]))
    plain, moved = _both(capsys, ["thermo", "critical", "--feed", str(FEED), "--eos", "pr"])
    assert plain["points"][0][:2] == moved["points"][0][:2]
    result = characterise(ROWS)
    shifts = volume_shifts(result.components, "pr", molar_masses=result.molar_masses)
    assert moved["stats"]["volume_translation"]["sources"] == list(shifts.sources)
    assert moved["points"][0][2] == pytest.approx(plain["points"][0][2] - shifts.of(result.z), rel=1e-12)


def test_binary_diagram_and_mixture_critical_point(capsys):
    plain, moved = _both(capsys, ["thermo", "pxy", "--mixture", "propane,n-butane", "--eos", "srk", "--temperature",
                                  "300", "--quiet"])
    assert np.array_equal(_columns(plain, ["x1", "y1", "P"]), _columns(moved, ["x1", "y1", "P"]))
    c = volume_shifts([lookup("propane"), lookup("n-butane")], "srk").c
    x1 = _columns(plain, ["x1"])[:, 0]
    assert _columns(moved, ["v_liquid"])[:, 0] == pytest.approx(
        _columns(plain, ["v_liquid"])[:, 0] - (x1 * c[0] + (1 - x1) * c[1]), rel=1e-12)
    plain, moved = _both(capsys, ["thermo", "critical", "--mixture", "methane=0.9,propane=0.1", "--eos", "pr"])
    assert plain["points"][0][:2] == moved["points"][0][:2]
    shifts = volume_shifts([lookup("methane"), lookup("propane")], "pr")
    assert moved["points"][0][2] == pytest.approx(plain["points"][0][2] - shifts.of([0.9, 0.1]), rel=1e-12)


def test_spinodal_and_critical_point_of_one_fluid(capsys):
    plain, moved = _both(capsys, ["thermo", "spinodal", "--fluid", "n-butane", "--eos", "pr"])
    pressures = ["T", "P_liquid_spinodal", "P_vapour_spinodal"]
    assert np.array_equal(_columns(plain, pressures), _columns(moved, pressures))
    c = float(volume_shifts([lookup("n-butane")], "pr").c[0])
    assert _columns(moved, ["v_liquid_spinodal"]) == pytest.approx(_columns(plain, ["v_liquid_spinodal"]) - c, rel=1e-12)
    plain, moved = _both(capsys, ["thermo", "critical", "--fluid", "n-butane", "--eos", "pr"])
    v, Z = (_columns(moved, ["v", "Z"])[0])
    T, P = _columns(moved, ["T", "P"])[0]
    assert v == pytest.approx(_columns(plain, ["v"])[0, 0] - c, rel=1e-12) and Z == pytest.approx(P * v / (8.31446261815324 * T), rel=1e-12)


@pytest.mark.parametrize("argv, message", [
    (["thermo", "critical", "--fluid", "propane", "--eos", "vdw", "--volume-translation"],
     "--volume-translation with --eos vdw: shifts are defined for srk and pr only"),
    (["thermo", "saturation", "--fluid", "propane", "--eos", "srk", "--volume-translation", "jhaveri-youngren"],
     "--volume-translation jhaveri-youngren: not a correlation for srk; choose peneloux"),
    (["thermo", "pxy", "--mixture", "propane,n-butane", "--eos", "pr", "--temperature", "300",
      "--volume-translation", "rackett"], "--volume-translation rackett: not a correlation for pr; choose "
                                          "jhaveri-youngren or peneloux"),
])
def test_bad_translation_requests_are_refused_in_one_line(capsys, argv, message):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1


def test_the_csv_says_its_volumes_are_translated(tmp_path, capsys):
    plain, moved = tmp_path / "plain.csv", tmp_path / "moved.csv"
    argv = ["thermo", "pxy", "--mixture", "propane,n-butane", "--eos", "srk", "--temperature", "300", "--quiet"]
    assert main([*argv, "--csv", str(plain)]) == 0 and main([*argv, "--csv", str(moved), "--volume-translation"]) == 0
    capsys.readouterr()
    note = [line for line in moved.read_text().splitlines() if "translated" in line]
    assert len(note) == 1 and note[0].startswith("# volumes and densities translated") and "Peneloux" in note[0]
    assert "translated" not in plain.read_text()
