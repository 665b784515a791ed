"""contin demo: the main job on its embedded default, its files, summary and failure modes."""

from __future__ import annotations

import json
import os

import pytest

from contin.commands._cli import main
from contin_thermo.commands._demo import FEED, INTERACTION_STUDY, PLUS_FRACTION


def test_feed_is_a_valid_made_up_composition():
    assert sum(FEED.values()) == pytest.approx(1.0, abs=1e-12)
    assert all(value > 0 for value in FEED.values())
    assert len(INTERACTION_STUDY[1]) >= 3


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo") / "out"
    import io
    from contextlib import redirect_stdout

    stream = io.StringIO()
    with redirect_stdout(stream):
        code = main(["demo", "--out", str(folder)])
    return code, stream.getvalue(), folder


def test_demo_writes_every_file_and_prints_the_special_points(demo):
    code, out, folder = demo
    assert code == 0
    names = sorted(p.name for p in folder.iterdir())
    assert names == sorted([
        "envelope.csv", "envelope.json", "envelope.png", "interaction-study.json", "interaction-study.png",
        "saturation-n-butane.csv", "saturation-n-butane.json", "saturation-propane.csv",
        "saturation-propane.json", "saturation.png",
    ])
    for kind in ("cricondentherm", "critical", "cricondenbar"):
        assert kind in out
    assert "degC" in out and "bar" in out  # degC-bar units in the summary by default
    assert out.rstrip().splitlines()[-1].startswith("Caution:")
    envelope = json.loads((folder / "envelope.json").read_text())
    kinds = {sp["kind"] for sp in envelope["special_points"]}
    assert kinds == {"cricondentherm", "critical", "cricondenbar"}
    assert envelope["status"] in ("bound_reached", "completed")
    assert "Caution" in envelope["caution"]
    assert (folder / "envelope.png").stat().st_size > 20_000
    study = json.loads((folder / "interaction-study.json").read_text())
    assert [run["kij"] for run in study["runs"]] == list(INTERACTION_STUDY[1])
    bars = [run["cricondenbar"]["P"] for run in study["runs"]]
    assert bars == sorted(bars)  # a larger methane - heaviest pseudo-component kij widens the envelope here
    assert study["pair"] == ["methane", envelope["components"][-1]]
    # The corners' paths run through the corners of each of the study's envelopes.
    for corner, path in study["corner_paths"].items():
        assert path["status"] == "bound_reached" and path["kij"][0] == 0.0 and path["kij"][-1] == pytest.approx(0.12)
        for run in study["runs"]:
            k = min(range(len(path["kij"])), key=lambda i: abs(path["kij"][i] - run["kij"]))
            assert path["kij"][k] == pytest.approx(run["kij"], abs=1e-12)
            assert path["T"][k] == pytest.approx(run[corner]["T"], rel=1e-8)
            assert path["P"][k] == pytest.approx(run[corner]["P"], rel=1e-8)


def test_demo_characterises_its_plus_fraction_and_shows_the_pseudo_components(demo):
    _, out, folder = demo
    envelope = json.loads((folder / "envelope.json").read_text())
    characterisation = envelope["characterisation"]
    names = [row["name"] for row in characterisation["components"]]
    assert envelope["components"][-len(names):] == names and "C7+" not in envelope["components"]
    assert f"{PLUS_FRACTION['name']} characterised into {len(names)} pseudo-components:" in out
    for name in names:
        assert f"\n  {name} " in out
    for key in ("molar_mass", "specific_gravity"):  # the split reproduces the plus fraction (identity)
        assert characterisation["checks"]["split"][key]["relative_error"] < 1e-10
        assert characterisation["checks"]["split"][key]["given"] == PLUS_FRACTION[key]
    assert sum(envelope["feed"][-len(names):]) == pytest.approx(FEED["C7+"], rel=1e-14)
    sources = {(p["component_1"], p["component_2"]): p["source"] for p in envelope["kij"]}
    assert "Chueh & Prausnitz" in sources[("methane", names[-1])]
    assert "Knapp" in sources[("carbon dioxide", "methane")]
    assert "Whitson" in out and "Kesler & Lee" in out  # the methods with their sources


def test_demo_envelope_special_points_are_ordered_as_on_a_gas_envelope(demo):
    _, _, folder = demo
    values = {sp["kind"]: sp["values"] for sp in json.loads((folder / "envelope.json").read_text())["special_points"]}
    # A lean-to-rich natural gas: critical point left of the cricondenbar, which is left of the
    # cricondentherm (common practice for gas envelopes).
    assert values["critical"]["T"] < values["cricondenbar"]["T"] < values["cricondentherm"]["T"]
    assert values["cricondenbar"]["P"] > values["critical"]["P"] > values["cricondentherm"]["P"]


def test_unwritable_folder_is_refused_before_any_work(tmp_path, capsys):
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    code = main(["demo", "--out", str(blocker / "inside")])
    assert code == 2
    assert "--out: cannot write into" in capsys.readouterr().err


@pytest.mark.parametrize("inside", ["inside", "inside/deeper"])
def test_a_folder_that_cannot_be_made_is_refused_in_one_line_before_any_work(tmp_path, capsys, monkeypatch, inside):
    # Independent of permissions (so it runs as root, as in CI): the folder's parent is a file.
    import contin_thermo.curves._envelope as envelope_module

    def no_work(*args, **kwargs):
        raise AssertionError("an envelope was traced before the output folder was checked")

    monkeypatch.setattr(envelope_module, "trace_envelope", no_work)
    blocker = tmp_path / "a-file"
    blocker.write_text("kept")
    target = blocker / inside
    assert main(["demo", "--out", str(target)]) == 2
    captured = capsys.readouterr()
    assert captured.err.splitlines() == [
        f"contin: error: --out: cannot write into {str(target)!r} (Not a directory); choose another folder"]
    assert captured.out == ""
    assert blocker.read_text() == "kept" and sorted(p.name for p in tmp_path.iterdir()) == ["a-file"]


@pytest.mark.skipif(os.geteuid() == 0, reason="root can write into read-only folders")
def test_read_only_folder_is_refused(tmp_path, capsys):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        assert main(["demo", "--out", str(locked)]) == 2
        assert "cannot write into" in capsys.readouterr().err
        assert list(locked.iterdir()) == []
    finally:
        locked.chmod(0o700)
