"""Studies over many cases: any executor, results in case order, saved and resumed."""

from __future__ import annotations

import json
from concurrent.futures import ThreadPoolExecutor

import pytest

import contin


def fold_of_shifted_cubic(case):
    # u^3 - u + p + c = 0 has its folds at p = ±2/(3 sqrt 3) - c (exact).
    system = contin.CallableSystem(lambda u, p: [u[0] ** 3 - u[0] + p[0] + p[1]], ["u"], {"p": -1.0, "c": case["c"]})
    start = {"u": 1.3247179572447460}
    # Start where u = 1.3247 solves it: p = -(u^3 - u) - c.
    branch = contin.trace(system, start, free="p", parameters={"p": -1.0 - case["c"]}, step=0.05,
                          bounds={"p": (-1.0 - case["c"], 1.0 - case["c"])})
    return {"folds": sorted(sp.values["p"] for sp in branch.special("fold"))}


@pytest.mark.parametrize("executor", [None, "threads"])
def test_study_results_in_case_order(executor):
    cases = [{"c": c} for c in (0.0, 0.1, -0.2)]
    pool = ThreadPoolExecutor(max_workers=2) if executor else None
    try:
        results = contin.run_study(fold_of_shifted_cubic, cases, executor=pool)
    finally:
        if pool:
            pool.shutdown()
    fold = 2 / (3 * 3 ** 0.5)
    for case, entry in zip(cases, results, strict=True):
        assert entry["case"] == case
        assert entry["result"]["folds"] == pytest.approx([-fold - case["c"], fold - case["c"]], abs=1e-10)


def test_interrupted_study_resumes_from_saved_results(tmp_path):
    ran = []
    state = {"interrupt_at": 0.2}

    def task(case):
        ran.append(case["c"])
        if case["c"] == state["interrupt_at"]:
            raise KeyboardInterrupt  # Ctrl-C while the third case runs
        return fold_of_shifted_cubic(case)

    cases = [{"c": 0.0}, {"c": 0.1}, {"c": 0.2}]
    with pytest.raises(KeyboardInterrupt):
        contin.run_study(task, cases, folder=tmp_path)
    assert len(list(tmp_path.glob("*.json"))) == 2  # the two finished cases were kept
    ran.clear()
    state["interrupt_at"] = None
    results = contin.run_study(task, cases, folder=tmp_path)
    assert ran == [0.2]  # only the unfinished case ran again
    assert [entry["case"]["c"] for entry in results] == [0.0, 0.1, 0.2]


def test_a_damaged_saved_result_is_run_again(tmp_path):
    cases = [{"c": 0.0}]
    contin.run_study(fold_of_shifted_cubic, cases, folder=tmp_path)
    (saved,) = tmp_path.glob("*.json")
    saved.write_text("{damaged")
    results = contin.run_study(fold_of_shifted_cubic, cases, folder=tmp_path)
    assert json.loads(saved.read_text())["case"] == {"c": 0.0}
    assert len(results[0]["result"]["folds"]) == 2


def test_bad_study_input_is_refused(tmp_path):
    with pytest.raises(contin.InputError, match="each case must be a mapping"):
        contin.run_study(fold_of_shifted_cubic, [0.1])
    with pytest.raises(contin.InputError, match="two cases are equal"):
        contin.run_study(fold_of_shifted_cubic, [{"c": 0.1}, {"c": 0.1}])
    with pytest.raises(contin.InputError, match="the task returned list"):
        contin.run_study(lambda case: [1], [{"c": 0.1}])
    blocker = tmp_path / "file"
    blocker.write_text("")
    with pytest.raises(contin.InputError, match="cannot create the study folder"):
        contin.run_study(fold_of_shifted_cubic, [{"c": 0.1}], folder=blocker / "sub")
