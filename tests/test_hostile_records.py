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


PLAIN = 'expected a plain file name such as "problem.toml"'
AS_TEXT = 'expected a file name as text, e.g. "problem.toml"'
NAMES = [
    ("../../x.toml", f"'../../x.toml' has a folder part; {PLAIN}"),
    ("/tmp/contin-hostile-x.toml", f"'/tmp/contin-hostile-x.toml' has a folder part; {PLAIN}"),
    ("sub/x.toml", f"'sub/x.toml' has a folder part; {PLAIN}"),
    ("sub\\x.toml", f"'sub\\\\x.toml' has a folder part; {PLAIN}"),
    ("", f"is empty; {PLAIN}"),
    (".", f"is '.', a folder; {PLAIN}"),
    ("..", f"is '..', a folder; {PLAIN}"),
    ("a\0b.toml", f"holds a NUL character; {PLAIN}"),
    (5, f"is a number; {AS_TEXT}"),
    (None, f"is null; {AS_TEXT}"),
    (["x.toml"], f"is a list; {AS_TEXT}"),
    ("x" * 300 + ".toml", f"is longer than 255 bytes; {PLAIN}"),
    ("x" * 252 + ".tom", f"is longer than 255 bytes; {PLAIN}"),
    ("a\nb.toml", f"'a\\nb.toml' holds control characters; {PLAIN}"),
]


@pytest.mark.parametrize("name, problem", NAMES, ids=[repr(name)[:20] for name, _ in NAMES])
def test_a_record_name_never_becomes_a_path(tmp_path, capsys, saved, name, problem):
    record = json.loads(json.dumps(saved))
    record["input"]["name"] = name
    code, _, err, before, path = restart_with(tmp_path, capsys, record)
    assert code == 2
    assert err == f"contin: error: run record {str(path)!r}: input.name {problem}\n"
    assert snapshot(tmp_path) == before  # nothing written anywhere under the test folder
    assert not os.path.exists("/tmp/contin-hostile-x.toml")


def test_a_record_name_of_255_bytes_is_a_plain_name(tmp_path, capsys, saved):
    # 251 + 4 bytes: at the limit of a file name on common file systems, so the record's check passes
    # it; the outputs named after it ("...-restart.csv") are then too long, which their own check says.
    record = json.loads(json.dumps(saved))
    record["input"]["name"] = "x" * 251 + ".tml"
    code, _, err, _, _ = restart_with(tmp_path, capsys, record, "--out", str(tmp_path / "o"))
    assert code == 2 and "input.name" not in err
    assert err.startswith("contin: error: --out: the name 'xxx") and err.endswith("is longer than 255 bytes; give a shorter name\n")


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
    (("result",), [1], "result is a list; expected an object"),
    (("result", "columns"), "x", "result.columns is text; expected a list of column names"),
    (("result", "columns"), {"a": 1}, "result.columns is an object; expected a list of column names"),
    (("result", "columns"), [None, "p"], "result.columns[0] is null; expected a column name as text"),
    (("result", "columns"), ["", "p"], "result.columns[0] is empty; expected a column name"),
    (("result", "columns"), ["q"], "result.columns has fewer than two names; expected the unknowns and the free parameter"),
    (("result", "columns"), ["u", "p", "q"], "result.points[0] has 2 values; expected 3, one per name of result.columns"),
    (("result", "columns"), ["u", "u"], "result.columns names 'u' twice; expected distinct column names"),
    (("result", "columns"), ["v", "p"], "result.columns starts with v; expected the problem's unknowns in order: u"),
    (("result", "columns"), ["u", "z"], "result.free is 'p'; expected the last column, 'z'"),
    (("result", "free"), 3, "result.free is a number; expected the free parameter's name as text"),
    (("result", "free"), "u", "result.free is 'u'; expected the last column, 'p'"),
    (("result", "parameters"), [1], "result.parameters is a list; expected an object of parameter name -> number"),
    (("result", "parameters"), {"p": None}, "result.parameters.p is null; expected a finite number"),
    (("result", "parameters"), {"p": "a"}, "result.parameters.p is text; expected a finite number"),
    (("result", "parameters"), {"p": [1]}, "result.parameters.p is a list; expected a finite number"),
    (("result", "parameters"), {"p": True}, "result.parameters.p is a boolean; expected a finite number"),
    (("result", "parameters"), {"zz": 1.0}, "result.parameters.zz is not a parameter of the problem (p, q)"),
    (("result", "parameters"), {"u": 1.0}, "result.parameters.u is also a column of an unknown; expected parameters only"),
    (("result", "points"), [[1.0, 2.0], [1.0]], "result.points[1] has 1 values; expected 2, one per name of result.columns"),
    (("result", "points"), [[1.0, "a"]], "result.points[0][1] is text; expected a finite number"),
    (("result", "points"), [[1.0, True]], "result.points[0][1] is a boolean; expected a finite number"),
    (("result", "points"), [[1.0, None]], "result.points[0][1] is null; expected a finite number"),
    (("result", "points"), [1.0, 2.0], "result.points[0] is a number; expected a list of 2 numbers"),
    (("result", "tangents"), [[1.0, 0.0]], "result.tangents has 1 rows; expected 35, one per point"),
    (("result", "tangents"), "x", "result.tangents is text; expected a list of rows, one per point, or null"),
    (("result", "tangents"), [[None, 1.0]] * 35, "result.tangents[0][0] is null; expected a finite number"),
    (("result", "status"), 5, "result.status is a number; expected text"),
    (("result", "message"), [1], "result.message is a list; expected text"),
    (("command",), "contin run", "command is text; expected a list of words or null"),
    (("command",), ["run", 5], "command[1] is a number; expected text"),
    (("options",), [], "options is a list; expected an object"),
    (("contin_version",), 5, "contin_version is a number; expected text"),
    (("created",), 5, "created is a number; expected text"),
    (("python",), [1], "python is a list; expected text"),
    (("dependencies",), [1], "dependencies is a list; expected an object"),
    (("dependencies",), {"numpy": 5}, "dependencies.numpy is a number; expected a version as text or null"),
]


@pytest.mark.parametrize("path, value, message", CASES, ids=[f"{'.'.join(c[0])}={c[1]!r}" for c in CASES])
def test_each_mistake_in_a_record_is_one_line_naming_the_record_and_field(tmp_path, capsys, saved, path, value,
                                                                          message):
    record = edited(saved, path, value)
    code, out, err, before, file = restart_with(tmp_path, capsys, record, "--out", str(tmp_path / "o"))
    assert code == 2, (out, err)
    assert err == f"contin: error: run record {str(file)!r}: {message}\n"
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("path, value, problem", [
    (("record",), "other", "{file} is not a contin run record (write one with --record FILE)"),
    (("record_version",), 99, ("run record {file} has record version 99 (written by contin {version}); this "
                               "contin reads version 1: re-run the original input with this version")),
    (("result", "points"), [], "run record {file} holds no traced points"),
    (("input", "kind"), "other", ("--from {file}: the record was not written by 'contin run' (it holds no "
                                  "problem file to restart)")),
])
def test_a_record_of_another_kind_or_version_or_with_no_points_is_named_so(tmp_path, capsys, saved, path, value,
                                                                           problem):
    code, _, err, before, file = restart_with(tmp_path, capsys, edited(saved, path, value), "--out", str(tmp_path / "o"))
    assert code == 2
    assert err == "contin: error: " + problem.format(file=repr(str(file)), version=saved["contin_version"]) + "\n"
    assert snapshot(tmp_path) == before


def test_a_record_file_that_is_a_folder_or_not_json_is_refused(tmp_path, capsys):
    code, _, err = run(capsys, "run", "--from", str(tmp_path), "--restart-at", "0")
    assert (code, err) == (2, f"contin: error: run record {str(tmp_path)!r} is a folder, not a file\n")
    (tmp_path / "nan.json").write_text('{"record": "contin run record", "x": NaN}')
    code, _, err = run(capsys, "run", "--from", str(tmp_path / "nan.json"), "--restart-at", "0")
    assert code == 2 and "NaN is not JSON" in err
    (tmp_path / "bin.json").write_bytes(b"\xff\xfe\x00")
    code, _, err = run(capsys, "run", "--from", str(tmp_path / "bin.json"), "--restart-at", "0")
    assert code == 2 and "is not UTF-8 text" in err and err.count("\n") == 1


def test_a_bad_free_parameter_for_a_record_is_named(tmp_path, capsys, saved):
    code, _, err, _, _ = restart_with(tmp_path, capsys, saved, "--free", "qq")
    assert code == 2 and "--free 'qq' is not a parameter of the problem (p, q); did you mean 'q'?" in err
