"""Run records and restarting a branch from any saved point."""

from __future__ import annotations

import json

import numpy as np
import pytest

import contin
from catalogue import cubic_s_curve


def traced():
    problem = cubic_s_curve()
    return problem, contin.trace(problem.system, problem.start, **problem.trace)


def test_record_holds_input_versions_options_and_result(tmp_path):
    problem, branch = traced()
    record = contin.run_record(branch, input={"kind": "python", "what": "cubic"}, command=["contin", "x"],
                               options={"tolerance": 1e-10})
    path = contin.write_record(tmp_path / "run.json", record)
    back = contin.read_record(path)
    assert back["record_version"] == 1
    assert back["contin_version"] == contin.__version__
    assert set(back["dependencies"]) >= {"numpy", "scipy", "sympy", "networkx", "matplotlib"}
    assert back["input"] == {"kind": "python", "what": "cubic"}
    assert back["options"] == {"tolerance": 1e-10}
    assert back["result"]["status"] == "bound_reached"
    assert np.array(back["result"]["points"]) == pytest.approx(branch.points)
    assert np.array(back["result"]["tangents"]) == pytest.approx(branch.tangents)


def test_restart_from_a_fold_in_the_reverse_direction_retraces_the_branch():
    problem, branch = traced()
    fold = branch.special("fold")[0]
    back = contin.restart(branch, fold.index, problem.system, direction=-1, step=0.05, bounds={"p": (-1, 1)})
    assert back.success
    assert back.points[0] == pytest.approx(fold.point, abs=1e-12)  # starts on the fold itself
    assert back.points[-1] == pytest.approx([1.3247179572447460, -1.0], abs=1e-9)  # back to the start end
    assert back.special("fold") == ()


def test_restart_from_a_record_continues_the_same_way(tmp_path):
    problem, branch = traced()
    record = contin.read_record(contin.write_record(tmp_path / "r.json", contin.run_record(branch, input={})))
    onward = contin.restart(record, 5, problem.system, step=0.05, bounds={"p": (-1, 1)})
    assert onward.success
    assert len(onward.special("fold")) == 2
    assert onward.points[0] == pytest.approx(branch.points[5], abs=1e-12)


def test_restart_with_another_free_parameter():
    # u^2 + p^2 = r: from a point of the circle r = 1, free r: u^2 = r - p^2 with p fixed at 0.6.
    system = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 - p[1]], ["u"], {"p": 0.0, "r": 1.0})
    branch = contin.trace(system, {"u": 1.0}, free="p", step=0.1, max_points=6, max_step=0.1)
    moved = contin.restart(branch, -1, system, free="r", bounds={"r": (0.0, 2.0)}, step=0.05)
    assert moved.free == "r"
    p_fixed = branch.points[-1, 1]
    assert moved.parameters["p"] == pytest.approx(p_fixed)
    for u, r in moved.points:
        assert u**2 + p_fixed**2 - r == pytest.approx(0.0, abs=1e-10)


def test_restart_from_a_fold_with_another_free_parameter_uses_the_null_vector():
    # At the fold of the circle (u = 0, p = 1) dF/du = 0; freeing r, the branch u^2 = r - 1 has its
    # own fold there in r; the start direction comes from the null vector of [dF/du, dF/dr].
    system = contin.CallableSystem(lambda u, p: [u[0] ** 2 + p[0] ** 2 - p[1]], ["u"], {"p": 0.0, "r": 1.0})
    branch = contin.trace(system, {"u": 1.0}, free="p", step=0.1)
    fold = branch.special("fold")[0]
    moved = contin.restart(branch, fold.index, system, free="r", bounds={"r": (0.5, 2.0)}, step=0.05)
    assert moved.success
    # At a fold u is pinned only to sqrt(residual tolerance): u^2 = 1e-10 means u ~ 1e-5.
    assert moved.points[0, 0] == pytest.approx(0.0, abs=2e-5)
    assert moved.points[0, 1] == pytest.approx(1.0, abs=1e-10)
    assert moved.points[-1, 1] == pytest.approx(2.0)
    assert abs(moved.points[-1, 0]) == pytest.approx(1.0, abs=1e-9)  # u^2 = r - p^2 = 2 - 1


def test_bad_restart_index_is_refused():
    problem, branch = traced()
    with pytest.raises(contin.InputError, match=r"--restart-at 9999: the branch has points 0 to \d+"):
        contin.restart(branch, 9999, problem.system)


def test_record_from_an_incompatible_version_is_refused(tmp_path):
    _, branch = traced()
    record = contin.run_record(branch, input={})
    record["record_version"] = 99
    record["contin_version"] = "9.0"
    (tmp_path / "old.json").write_text(json.dumps(record))
    with pytest.raises(contin.InputError, match="has record version 99 .*contin 9.0.*reads version 1"):
        contin.read_record(tmp_path / "old.json")


def test_unreadable_and_foreign_records_are_refused(tmp_path):
    (tmp_path / "bad.json").write_text("{not json")
    with pytest.raises(contin.InputError, match="is not readable JSON"):
        contin.read_record(tmp_path / "bad.json")
    (tmp_path / "other.json").write_text(json.dumps({"status": "x"}))
    with pytest.raises(contin.InputError, match="is not a contin run record"):
        contin.read_record(tmp_path / "other.json")
    with pytest.raises(contin.InputError, match="does not exist"):
        contin.read_record(tmp_path / "missing.json")


def test_bad_initial_tangent_is_refused():
    problem = cubic_s_curve()
    with pytest.raises(contin.InputError, match="tangent must be 2 finite numbers, not all zero"):
        contin.trace(problem.system, problem.start, free="p", tangent=[0.0, 0.0])


def test_contin_run_record_holds_the_effective_tolerances(tmp_path, capsys):
    from contin.commands._cli import main

    record = tmp_path / "r.json"
    assert main(["run", "--example", "stirred_tank", "--record", str(record)]) == 0
    options = json.loads(record.read_text())["options"]
    assert options["tolerance"] == 1e-10 and options["max_step"] == 0.2  # from the file
    assert options["max_iterations"] == 8 and options["corrector"] == "arclength"  # engine defaults


def test_a_restart_from_a_record_in_memory_checks_it_and_names_what_is_wrong():
    problem, branch = traced()
    record = contin.run_record(branch, input={})
    count = len(branch.points)

    def refused(source, index=0):
        with pytest.raises(contin.InputError) as caught:
            contin.restart(source, index, problem.system)
        return str(caught.value)

    assert refused(5) == "restart needs a Branch or a run record, not int"
    assert refused({"result": [1]}) == "run record 'given': result is a list; expected an object"
    assert refused({"result": {"columns": ["u", "p"], "points": []}}) == "run record 'given' holds no traced points"
    assert refused({"columns": ["u", "p"], "points": [[1.0]]}) == (
        "run record 'given': result.points[0] has 1 values; expected 2, one per name of result.columns")
    tangent_free = {key: value for key, value in record["result"].items() if key != "tangents"}
    assert refused(dict(tangent_free, points=[[1.0, float("nan")]])) == (
        "run record 'given': result.points[0][1] is nan; expected a finite number")
    for index in (True, count, -count - 1, 1.0):
        assert refused(record, index) == f"--restart-at {index!r}: the branch has points 0 to {count - 1}"
    # A result without tangents or a free parameter: the last column is the free one and the start's
    # direction comes from the null vector; -count is the first row.
    bare = {key: value for key, value in tangent_free.items() if key != "free"}
    onward = contin.restart(bare, -count, problem.system, step=0.05, bounds={"p": (-1, 1)})
    assert onward.points[0] == pytest.approx(branch.points[0], abs=1e-12)
    assert onward.free == "p" and onward.success and len(onward.special("fold")) == 2


def test_a_record_says_what_it_is_and_where_it_was_made(tmp_path):
    import datetime
    import platform

    _, branch = traced()
    record = contin.run_record(branch, input={"kind": "python"}, command=["contin", "run", "x.toml"])
    assert (record["record"], record["record_version"]) == ("contin run record", 1)
    assert list(record["dependencies"]) == ["numpy", "scipy", "sympy", "networkx", "matplotlib", "symengine"]
    assert record["dependencies"]["numpy"] == np.__version__
    assert record["python"] == platform.python_version() and record["command"] == ["contin", "run", "x.toml"]
    created = datetime.datetime.fromisoformat(record["created"])
    assert created.utcoffset() == datetime.timedelta(0) and created.microsecond == 0
    assert contin.run_record(branch, input={})["command"] is None
    back = contin.read_record(contin.write_record(tmp_path / "r.json", record))
    assert back["command"] == record["command"] and back["created"] == record["created"]


def test_each_unreadable_record_is_refused_with_its_whole_message(tmp_path):
    def refused(text):
        path = tmp_path / "r.json"
        path.write_text(text)
        with pytest.raises(contin.InputError) as caught:
            contin.read_record(path)
        return str(caught.value).replace(repr(str(path)), "FILE")

    assert refused('{"record": "contin run record", "x": NaN}') == (
        "run record FILE is not readable JSON: NaN is not JSON (contin writes non-finite values as null)")
    assert refused("[" * 100_000 + "]" * 100_000) == "run record FILE is not readable JSON: nested too deeply"
    assert refused('{"record": "something else"}') == "FILE is not a contin run record (write one with --record FILE)"
    assert refused('{"record": "contin run record", "record_version": 2, "contin_version": 7}') == (
        "run record FILE has record version 2 (written by contin unknown); this contin reads version 1: re-run the "
        "original input with this version")
    huge = tmp_path / "huge.json"
    with open(huge, "wb") as stream:  # a sparse file one byte over the limit: refused by its size, unread
        stream.truncate(256 * 2**20 + 1)
    with pytest.raises(contin.InputError) as caught:
        contin.read_record(huge)
    assert str(caught.value) == f"run record {str(huge)!r} is larger than 256 MiB"


def test_a_plug_in_document_record_may_hold_labels_and_nulls_but_not_other_values(tmp_path):
    document = {"columns": ["T", "side"], "points": [[300.0, "dew"], [None, "bubble"]], "status": "completed"}
    path = contin.write_record(tmp_path / "d.json", contin.document_record(document, input={"kind": "command"}))
    back = contin.read_record(path)
    assert back["result"]["points"] == [[300.0, "dew"], [None, "bubble"]]
    bad = contin.document_record(dict(document, points=[[300.0, True]]), input={"kind": "command"})
    contin.write_record(path, bad)
    with pytest.raises(contin.InputError) as caught:
        contin.read_record(path)
    assert str(caught.value) == f"run record {str(path)!r}: result.points[0][1] is a boolean; expected a number"
    empty = contin.document_record(dict(document, points=[]), input={"kind": "command"})
    contin.write_record(path, empty)
    assert contin.read_record(path)["result"]["points"] == []  # a plug-in's empty result is still a record
