"""contin run: pictures, run records, restarts, progress and the "did you mean" help."""

from __future__ import annotations

import json

import pytest

from contin.commands._cli import main


def run(capsys, *words):
    code = main(list(words))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_plot_with_chosen_axes(tmp_path, capsys):
    code, out, _ = run(capsys, "run", "--example", "stirred_tank", "--plot", str(tmp_path / "t.png"), "--axes", "Da,y")
    assert code == 0 and "status: bound_reached" in out
    assert (tmp_path / "t.png").stat().st_size > 10_000


def test_bad_axes_and_plot_files_are_refused_before_any_work(tmp_path, capsys):
    code, _, err = run(capsys, "run", "--example", "stirred_tank", "--plot", str(tmp_path / "t.png"), "--axes", "Da,z")
    assert code == 2 and "--axes: no column 'z'" in err
    code, _, err = run(capsys, "run", "--example", "stirred_tank", "--plot", str(tmp_path / "t.gif"))
    assert code == 2 and "must end in .png, .svg or .pdf" in err
    code, _, err = run(capsys, "run", "--example", "stirred_tank", "--plot", str(tmp_path / "missing" / "t.png"))
    assert code == 2 and "does not exist" in err
    code, _, err = run(capsys, "run", "--example", "stirred_tank", "--axes", "Da,y")
    assert code == 2 and "--axes goes with --plot FILE" in err
    assert not list(tmp_path.iterdir())


def test_record_then_restart_in_the_reverse_direction(tmp_path, capsys):
    record = tmp_path / "record.json"
    code, out, _ = run(capsys, "run", "--example", "stirred_tank", "--record", str(record), "--json")
    assert code == 0
    first = json.loads(out)
    saved = json.loads(record.read_text())
    assert saved["input"]["kind"] == "problem_file" and "[equations]" in saved["input"]["text"]
    assert saved["command"][:3] == ["contin", "run", "--example"]
    assert saved["result"]["points"] == first["points"]
    fold_index = next(sp["index"] for sp in first["special_points"] if sp["kind"] == "fold")
    code, out, _ = run(capsys, "run", "--from", str(record), "--restart-at", str(fold_index), "--direction", "-1", "--json")
    assert code == 0
    back = json.loads(out)
    assert back["points"][0] == pytest.approx(first["points"][fold_index], abs=1e-12)
    assert back["points"][-1][-1] == pytest.approx(0.0)  # back down to the lower bound Da = 0


def test_restart_options_need_a_record(tmp_path, capsys):
    code, _, err = run(capsys, "run", "--example", "stirred_tank", "--restart-at", "3")
    assert code == 2 and "--restart-at goes with --from RECORD" in err
    record = tmp_path / "r.json"
    run(capsys, "run", "--example", "stirred_tank", "--record", str(record))
    code, _, err = run(capsys, "run", "--from", str(record))
    assert code == 2 and "--from RECORD needs --restart-at INDEX" in err
    code, _, err = run(capsys, "run", "--from", str(record), "--restart-at", "999")
    assert code == 2 and "--restart-at 999: the branch has points 0 to" in err


def test_record_from_an_incompatible_version_is_refused(tmp_path, capsys):
    record = tmp_path / "r.json"
    run(capsys, "run", "--example", "stirred_tank", "--record", str(record))
    data = json.loads(record.read_text())
    data["record_version"] = 7
    record.write_text(json.dumps(data))
    code, _, err = run(capsys, "run", "--from", str(record), "--restart-at", "3")
    assert code == 2 and "has record version 7" in err


def test_mistyped_option_and_subcommand_get_a_suggestion(capsys):
    code, _, err = run(capsys, "run", "--exampel", "stirred_tank")
    assert code == 2 and "did you mean '--example'?" in err
    code, _, err = run(capsys, "rnu")
    assert code == 2 and "did you mean 'run'?" in err


def test_every_command_help_shows_an_example(capsys):
    code, out, _ = run(capsys, "run", "--help")
    assert code == 0 and "examples:" in out and "contin run --example stirred_tank" in out
    code, out, _ = run(capsys, "--help")
    assert code == 0 and "contin demo" in out


def test_json_output_has_no_progress_mixed_in(capsys):
    code, out, err = run(capsys, "run", "--example", "stirred_tank", "--json")
    assert code == 0
    json.loads(out)  # stdout is exactly one JSON document
    assert "points;" not in err
