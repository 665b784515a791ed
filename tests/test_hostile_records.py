"""Run records are untrusted input: a record never chooses a path, and every field is checked."""

from __future__ import annotations

import json
import os

import pytest

from contin.commands._cli import main
from hostile import PROBLEM, run, snapshot




@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    """A good record of the latch problem, as a dict."""
    folder = tmp_path_factory.mktemp("record")
    problem = folder / "latch.toml"
    problem.write_text(PROBLEM)
    record = folder / "latch-record.json"
    assert main(["run", str(problem), "--quiet", "--record", str(record)]) == 0
    return json.loads(record.read_text())



def restart_with(tmp_path, capsys, record, *extra):
    work = tmp_path / "work"
    work.mkdir(exist_ok=True)
    path = work / "r.json"
    path.write_text(json.dumps(record))
    before = snapshot(tmp_path)
    code, out, err = run(capsys, "run", "--from", str(path), "--restart-at", "2", "--quiet", *extra)
    return code, out, err, before, path


@pytest.mark.parametrize("name", ["../../x.toml", "/tmp/contin-hostile-x.toml", "sub/x.toml", "", ".", "..",
                                  "a\0b.toml", 5, None, ["x.toml"], "x" * 300 + ".toml", "a\nb.toml"])
def test_a_record_name_never_becomes_a_path(tmp_path, capsys, saved, name):
    record = json.loads(json.dumps(saved))
    record["input"]["name"] = name
    code, out, err, before, path = restart_with(tmp_path, capsys, record)
    assert code == 2
    assert err.count("\n") == 1 and "Traceback" not in err
    assert f"run record {str(path)!r}: input.name" in err
    assert "expected" in err
    assert snapshot(tmp_path) == before  # nothing written anywhere under the test folder
    assert not os.path.exists("/tmp/contin-hostile-x.toml")


def test_a_good_record_restarts_and_names_outputs_after_the_plain_name(tmp_path, capsys, saved):
    code, out, err, _, _ = restart_with(tmp_path, capsys, saved, "--out", str(tmp_path / "o"))
    assert code == 0, err
    assert sorted(p.name for p in (tmp_path / "o").iterdir()) == ["latch-restart.csv", "latch-restart.json"]


def edited(saved, path, value):
    record = json.loads(json.dumps(saved))
    target = record
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    return record


CASES = [
    (("input",), "text", "input is text; expected an object"),
    (("input", "text"), 5, "input.text is a number; expected the problem file's text"),
    (("result", "columns"), "x", "result.columns is text; expected a list of column names"),
    (("result", "columns"), {"a": 1}, "result.columns is an object; expected a list"),
    (("result", "columns"), [None, "p"], "result.columns[0] is null; expected a column name"),
    (("result", "columns"), ["q"], "result.columns has fewer than two names"),
    (("result", "columns"), ["u", "p", "q"], "result.points[0] has 2 values; expected 3"),
    (("result", "columns"), ["u", "u"], "result.columns names 'u' twice"),
    (("result", "columns"), ["v", "p"], "result.columns starts with v; expected the problem's unknowns in order: u"),
    (("result", "columns"), ["u", "z"], "result.free is 'p'; expected the last column, 'z'"),
    (("result", "free"), 3, "result.free is a number; expected the free parameter's name"),
    (("result", "free"), "u", "result.free is 'u'; expected the last column, 'p'"),
    (("result", "parameters"), [1], "result.parameters is a list; expected an object"),
    (("result", "parameters"), {"p": None}, "result.parameters.p is null; expected a finite number"),
    (("result", "parameters"), {"p": "a"}, "result.parameters.p is text; expected a finite number"),
    (("result", "parameters"), {"p": [1]}, "result.parameters.p is a list; expected a finite number"),
    (("result", "parameters"), {"p": True}, "result.parameters.p is a boolean; expected a finite number"),
    (("result", "parameters"), {"zz": 1.0}, "result.parameters.zz is not a parameter of the problem"),
    (("result", "points"), [[1.0, 2.0], [1.0]], "result.points[1] has 1 values; expected 2"),
    (("result", "points"), [[1.0, "a"]], "result.points[0][1] is text; expected a finite number"),
    (("result", "points"), [[1.0, True]], "result.points[0][1] is a boolean; expected a finite number"),
    (("result", "points"), [[1.0, None]], "result.points[0][1] is null; expected a finite number"),
    (("result", "points"), [1.0, 2.0], "result.points[0] is a number; expected a list of 2 numbers"),
    (("result", "tangents"), [[1.0, 0.0]], "result.tangents has 1 rows; expected"),
    (("result", "tangents"), "x", "result.tangents is text; expected a list of rows"),
    (("command",), "contin run", "command is text; expected a list of words or null"),
    (("options",), [], "options is a list; expected an object"),
]


@pytest.mark.parametrize("path, value, message", CASES, ids=[f"{'.'.join(c[0])}={c[1]!r}" for c in CASES])
def test_each_mistake_in_a_record_is_one_line_naming_the_record_and_field(tmp_path, capsys, saved, path, value,
                                                                          message):
    record = edited(saved, path, value)
    code, out, err, before, file = restart_with(tmp_path, capsys, record, "--out", str(tmp_path / "o"))
    assert code == 2, (out, err)
    assert err.count("\n") == 1 and "Traceback" not in err
    assert f"run record {str(file)!r}" in err and message in err
    assert snapshot(tmp_path) == before


def test_a_record_file_that_is_a_folder_or_not_json_is_refused(tmp_path, capsys):
    code, _, err = run(capsys, "run", "--from", str(tmp_path), "--restart-at", "0")
    assert code == 2 and "is a folder, not a file" in err
    (tmp_path / "nan.json").write_text('{"record": "contin run record", "x": NaN}')
    code, _, err = run(capsys, "run", "--from", str(tmp_path / "nan.json"), "--restart-at", "0")
    assert code == 2 and "NaN is not JSON" in err
    (tmp_path / "bin.json").write_bytes(b"\xff\xfe\x00")
    code, _, err = run(capsys, "run", "--from", str(tmp_path / "bin.json"), "--restart-at", "0")
    assert code == 2 and "is not UTF-8 text" in err and err.count("\n") == 1


def test_a_bad_free_parameter_for_a_record_is_named(tmp_path, capsys, saved):
    code, _, err, _, _ = restart_with(tmp_path, capsys, saved, "--free", "qq")
    assert code == 2 and "--free 'qq' is not a parameter of the problem (p, q); did you mean 'q'?" in err
