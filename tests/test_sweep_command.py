"""`contin sweep`: one trace per combination of a problem file's [sweep] values, saved and resumable.

The reactor here is the shipped stirred tank's model: its folds are exact (x = y (1 + beta)/B on the
branch, Da = x e^-y / (1 - x), folds at y^2 - B' y + B' = 0 with B' = B/(1 + beta); derived in
tests/test_examples.py), so every run's folds are checked against the formula for its own B.
"""

from __future__ import annotations

import csv
import json
import math

import pytest

from contin.commands._cli import main

PROBLEM = """
kind = "algebraic"
[unknowns]
x = 0.001
y = 0.004545
[parameters]
Da = 0.001
B = 12.5
beta = 1.75
[equations]
mass = "-x + Da*(1 - x)*exp(y)"
heat = "-y + B*Da*(1 - x)*exp(y) - beta*y"
[trace]
free = "Da"
bounds = { Da = [0.0, 0.3], y = [-0.5, 6.0] }
max_step = 0.2
[sweep]
over = OVER
output = "reactor-sweep"
"""


def write(tmp_path, over="{ B = [11.5, 14.0], beta = [1.5, 1.75] }"):
    path = tmp_path / "reactor.toml"
    path.write_text(PROBLEM.replace("OVER", over))
    return path


def exact_folds(B, beta):
    reduced = B / (1.0 + beta)
    roots = [(reduced - math.sqrt(reduced**2 - 4 * reduced)) / 2, (reduced + math.sqrt(reduced**2 - 4 * reduced)) / 2]
    return [y / reduced * math.exp(-y) / (1 - y / reduced) for y in roots]


def run(capsys, *words):
    code = main(["sweep", *map(str, words)])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def rows(folder):
    with open(folder / "summary.csv") as handle:
        return list(csv.DictReader(line for line in handle if not line.startswith("#")))


def test_every_combination_is_one_run_with_its_own_exact_folds(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, _ = run(capsys, write(tmp_path))
    assert code == 0 and "4 runs (0 reused from an earlier sweep), 4 succeeded" in out
    folder = tmp_path / "reactor-sweep"
    grid = [(11.5, 1.5), (11.5, 1.75), (14.0, 1.5), (14.0, 1.75)]  # the last parameter changes fastest
    for k, (B, beta) in enumerate(grid):
        document = json.loads((folder / f"run-{k}.json").read_text())
        assert document["sweep_values"] == {"B": B, "beta": beta}
        assert document["status"] == "bound_reached" and document["parameters"]["B"] == B
        folds = [sp["values"]["Da"] for sp in document["special_points"] if sp["kind"] == "fold"]
        assert folds == pytest.approx(exact_folds(B, beta), abs=1e-10)
    table = rows(folder)
    assert [(row["run"], row["kind"]) for row in table] == [(str(k), kind) for k in range(4)
                                                           for kind in ("fold", "fold", "bound")]
    assert {row["status"] for row in table} == {"bound_reached"}
    assert float(table[0]["B"]) == 11.5 and float(table[0]["beta"]) == 1.5


def test_a_second_sweep_recomputes_only_missing_or_corrupt_runs(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = write(tmp_path)
    assert run(capsys, path)[0] == 0
    folder = tmp_path / "reactor-sweep"
    kept = (folder / "run-0.json").stat().st_mtime_ns
    (folder / "run-1.json").unlink()
    (folder / "run-2.json").write_text("{ not json")
    code, out, _ = run(capsys, path)
    assert code == 0 and "4 runs (2 reused from an earlier sweep)" in out
    assert (folder / "run-0.json").stat().st_mtime_ns == kept
    document = json.loads((folder / "run-2.json").read_text())
    assert document["sweep_values"] == {"B": 14.0, "beta": 1.5}


def test_a_changed_sweep_definition_is_refused_naming_what_differs(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert run(capsys, write(tmp_path))[0] == 0
    code, _, err = run(capsys, write(tmp_path, "{ B = [11.5, 15.0], beta = [1.5, 1.75] }"))
    assert code == 2
    assert "the sweep there has over.B = [11.5, 14.0], this one [11.5, 15.0]" in err and len(err.splitlines()) == 1
    path = write(tmp_path)
    path.write_text(path.read_text().replace("max_step = 0.2", "max_step = 0.1"))
    code, _, err = run(capsys, path)
    assert code == 2 and "the sweep there has problem file sha256 = " in err


def test_a_process_pool_gives_the_same_runs(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = write(tmp_path)
    assert run(capsys, path, "--out", "serial")[0] == 0
    assert run(capsys, path, "--out", "pool", "--workers", "2")[0] == 0
    assert rows(tmp_path / "serial") == rows(tmp_path / "pool")


def test_warm_starts_from_a_finished_neighbour_save_newton_iterations(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = write(tmp_path, "{ B = [12.0, 12.1, 12.2, 12.3] }")
    path.write_text(path.read_text().replace("x = 0.001\n", "x = 0.3\n").replace("y = 0.004545\n", "y = 1.0\n"))
    assert run(capsys, path, "--out", "warm")[0] == 0
    assert run(capsys, path, "--out", "cold", "--cold")[0] == 0

    def start_iterations(folder):
        return [json.loads((tmp_path / folder / f"run-{k}.json").read_text())["stats"]["newton_iterations"]
                for k in range(1, 4)]

    assert sum(start_iterations("warm")) < sum(start_iterations("cold"))
    assert rows(tmp_path / "warm")[0]["kind"] == rows(tmp_path / "cold")[0]["kind"]


@pytest.mark.parametrize("over, message", [
    ("{ Da = [0.1, 0.2] }", "the free parameter, which varies along each trace"),
    ("{ C = [1.0] }", "over names 'C', which is not a declared parameter"),
    ("{ B = [] }", "give a non-empty list of finite numbers"),
    ("{ B = [12.0, 12.0] }", "gives a value twice"),
    ("{ B = [true] }", "give a non-empty list of finite numbers"),
    ("[1, 2]", "[sweep] needs over = { name = [values] }"),
])
def test_bad_sweeps_are_refused_with_one_line(tmp_path, capsys, monkeypatch, over, message):
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, write(tmp_path, over))
    assert code == 2 and message in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "reactor-sweep").exists()


def test_bad_command_lines_are_refused(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = write(tmp_path)
    code, _, err = run(capsys, path, "--workers", "0")
    assert code == 2 and "--workers 0 must be a whole number of at least 1" in err
    code, _, err = run(capsys, path, "--workers", "2", "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2 and "--workers and --scheduler both given" in err
    plain = tmp_path / "plain.toml"
    plain.write_text(PROBLEM.split("[sweep]")[0])
    code, _, err = run(capsys, plain)
    assert code == 2 and "has no [sweep] section" in err
    (tmp_path / "taken").write_text("a file")
    code, _, err = run(capsys, path, "--out", "taken")
    assert code == 2 and "output folder is a file" in err


def test_a_scheduler_needs_the_distributed_extra_or_an_answer(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, write(tmp_path), "--scheduler", "tcp://127.0.0.1:9", "--timeout", "1")
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "optional extra" in err or "no dask scheduler answered" in err
    assert not (tmp_path / "reactor-sweep").exists()


def test_a_sweep_on_a_real_local_dask_cluster_gives_the_same_runs(tmp_path, capsys, monkeypatch):
    distributed = pytest.importorskip("distributed")
    monkeypatch.chdir(tmp_path)
    path = write(tmp_path, "{ B = [11.5, 14.0] }")
    assert run(capsys, path, "--out", "serial")[0] == 0
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        code, out, _ = run(capsys, path, "--out", "dask", "--scheduler", cluster.scheduler_address)
    assert code == 0 and "2 succeeded" in out
    assert rows(tmp_path / "serial") == rows(tmp_path / "dask")


def shifted_cubic_folds(description, values, start):
    """A sweep task of u^3 - u + p + c = 0 (folds at p = -c -+ 2/(3 sqrt 3), exact) that reports its start."""
    import contin

    c = values["c"]
    system = contin.CallableSystem(lambda u, p: [u[0] ** 3 - u[0] + p[0] + p[1]], ["u"], {"p": 0.0, "c": c})
    u0 = description["u0"] if start is None else start
    branch = contin.trace(system, {"u": u0}, free="p", parameters={"p": u0 - u0 ** 3 - c, "c": c}, step=0.05,
                          bounds={"p": (-1.5 - c, 1.0 - c)})
    document = branch.to_dict()
    document["success"], document["started_from"] = branch.success, start
    return document


def test_a_task_of_ones_own_runs_through_run_sweep_with_starts_from_its_chain(tmp_path):
    import contin

    task = contin.SweepTask(shifted_cubic_folds, {"u0": 1.3247179572447460}, {"model": "shifted cubic"},
                            start_of=lambda document: document["points"][0][0])
    runs = contin.run_sweep(task, {"c": [0.0, 0.1, 0.2, 0.3]}, tmp_path / "cubic")
    fold = 2 / (3 * math.sqrt(3))
    for run in runs:
        folds = sorted(sp["values"]["p"] for sp in run.document["special_points"] if sp["kind"] == "fold")
        assert folds == pytest.approx([-fold - run.values["c"], fold - run.values["c"]], abs=1e-10)
    # Chains [0, 1] and [2, 3]: the second run of each starts from the first's start point.
    assert [run.document["started_from"] for run in runs] == [None, 1.3247179572447460, None, 1.3247179572447460]
    assert rows(tmp_path / "cubic")[0].keys() >= {"run", "c", "status", "kind", "u", "p"}
    assert "4 runs (0 reused from an earlier sweep), 4 succeeded" in contin.sweep_report(runs, "cubic", tmp_path)
