"""`contin thermo envelope|saturation|pxy --sweep`: one run per combination of model constants, in the
folder layout of `contin sweep`, serial, on a process pool and on a real local dask cluster, resumable.

Feeds are invented blends (demo data). Each run is checked against a direct trace of the same model,
and the pure fluid's runs against the cubic's own critical point (exactly Tc and Pc, by construction
of Omega_a and Omega_b).
"""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from contin.commands._cli import main
from contin.studies._sweep import chains, sweep_grid

FEED = ["--mixture", "methane=0.80,ethane=0.12,propane=0.08", "--eos", "pr"]


def run(capsys, *words):
    code = main(["thermo", *map(str, words)])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def rows(folder):
    with open(folder / "summary.csv") as handle:
        return list(csv.DictReader(line for line in handle if not line.startswith("#")))


def document(folder, k):
    return json.loads((folder / f"run-{k}.json").read_text())


def direct_envelope(kij_methane_propane):
    from contin_thermo.curves._envelope import trace_envelope
    from contin_thermo.models._build import mixture

    model = mixture(["methane", "ethane", "propane"], eos="pr", kij={"methane-propane": kij_methane_propane})
    return trace_envelope(model, [0.80, 0.12, 0.08])


def test_each_kij_is_one_run_with_the_envelope_of_that_model(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, _ = run(capsys, "envelope", *FEED, "--sweep", "kij:propane-methane=0,0.03,0.06")
    assert code == 0 and "3 runs (0 reused from an earlier sweep), 3 succeeded" in out
    folder = tmp_path / "envelope-sweep"
    table = rows(folder)
    for k, kij in enumerate((0.0, 0.03, 0.06)):
        saved = document(folder, k)
        assert saved["sweep_values"] == {"kij:methane-propane": kij} and saved["success"] is True
        direct = direct_envelope(kij)
        for kind in ("cricondentherm", "cricondenbar", "critical"):
            swept = next(sp for sp in saved["special_points"] if sp["kind"] == kind)
            # Warm starts change only Newton's first guess: the same points to far below the tolerance.
            assert swept["values"]["T"] == pytest.approx(direct.special(kind)["values"]["T"], rel=1e-9)
            assert swept["values"]["P"] == pytest.approx(direct.special(kind)["values"]["P"], rel=1e-9)
            row = next(r for r in table if r["run"] == str(k) and r["kind"] == kind)
            assert float(row["kij:methane-propane"]) == kij and row["status"] == saved["status"]
            assert float(row["P"]) == swept["values"]["P"]
    assert len(table) == 9  # one row per special point per run
    assert len({float(r["P"]) for r in table if r["kind"] == "cricondenbar"}) == 3  # each run its own model


def test_several_sweeps_give_their_product_and_a_pure_fluid_its_own_critical_point(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, _ = run(capsys, "saturation", "--fluid", "propane", "--eos", "pr", "--sweep", "Tc:propane=360,100 degC",
                       "--sweep", "Pc:C3=42bar,4.3e6", "--sweep", "omega:propane=0.15", "--out", "propane")
    assert code == 0 and "4 runs" in out
    table = rows(tmp_path / "propane")
    expected = [(360.0, 42e5), (360.0, 4.3e6), (373.15, 42e5), (373.15, 4.3e6)]  # the last --sweep fastest
    assert [(float(r["Tc:propane"]), float(r["Pc:propane"])) for r in table] == [
        pytest.approx(pair) for pair in expected]
    for row, (Tc, Pc) in zip(table, expected):
        # The cubic's critical point is exactly (Tc, Pc): Omega_a and Omega_b are fixed by it.
        assert row["kind"] == "critical" and float(row["T"]) == pytest.approx(Tc, rel=1e-12)
        assert float(row["P"]) == pytest.approx(Pc, rel=1e-9) and float(row["omega:propane"]) == 0.15


def test_a_second_sweep_recomputes_only_missing_or_corrupt_runs_and_refuses_a_changed_one(tmp_path, capsys,
                                                                                          monkeypatch):
    monkeypatch.chdir(tmp_path)
    words = ["envelope", *FEED, "--sweep", "kij:methane-ethane=0,0.01,0.02", "--out", "s"]
    assert run(capsys, *words)[0] == 0
    folder = tmp_path / "s"
    kept = (folder / "run-0.json").stat().st_mtime_ns
    (folder / "run-1.json").unlink()
    (folder / "run-2.json").write_text('{"status": ')
    code, out, _ = run(capsys, *words)
    assert code == 0 and "3 runs (1 reused from an earlier sweep), 3 succeeded" in out
    assert (folder / "run-0.json").stat().st_mtime_ns == kept
    assert document(folder, 2)["sweep_values"] == {"kij:methane-ethane": 0.02}
    code, _, err = run(capsys, *[w.replace("0,0.01,0.02", "0,0.01,0.03") for w in words])
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "the sweep there has over.kij:methane-ethane = [0.0, 0.01, 0.02], this one [0.0, 0.01, 0.03]" in err
    code, _, err = run(capsys, *[w.replace("pr", "srk") if w == "pr" else w for w in words])
    assert code == 2 and 'the sweep there has --eos = "pr", this one "srk"' in err
    code, _, err = run(capsys, *words, "--from-pressure", "2 bar")
    assert code == 2 and "the sweep there has --from-pressure = 100000.0, this one 200000.0" in err
    changed = [w.replace("propane=0.08", "blend-P=0.08") for w in words]
    code, _, err = run(capsys, *changed, "--component", "blend-P,369.83,4.3e6,0.152")
    assert code == 2 and "the sweep there has components[2].Pc = 4248000.0, this one 4300000.0" in err


def test_a_process_pool_and_a_local_dask_cluster_give_the_same_runs(tmp_path, capsys, monkeypatch):
    distributed = pytest.importorskip("distributed")
    monkeypatch.chdir(tmp_path)
    words = ["envelope", *FEED, "--sweep", "kij:methane-propane=0,0.02,0.04,0.06"]
    assert run(capsys, *words, "--out", "serial")[0] == 0
    assert run(capsys, *words, "--out", "pool", "--workers", "2")[0] == 0
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        code, out, _ = run(capsys, *words, "--out", "dask", "--scheduler", cluster.scheduler_address)
    assert code == 0 and "4 succeeded" in out
    # Warm-start parents come from the grid alone, so every executor computes the same numbers.
    assert rows(tmp_path / "serial") == rows(tmp_path / "pool") == rows(tmp_path / "dask")


def test_warm_starts_from_a_neighbour_save_newton_iterations_at_the_start(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    words = ["envelope", *FEED, "--sweep", "kij:methane-propane=0,0.01,0.02,0.03"]
    assert run(capsys, *words, "--out", "warm")[0] == 0
    assert run(capsys, *words, "--out", "cold", "--cold")[0] == 0
    parents = chains(sweep_grid({"k": [0.0, 0.01, 0.02, 0.03]}))
    assert parents == [None, 0, None, 2]
    start = {name: [document(tmp_path / name, k)["stats"]["start_newton_iterations"] for k in range(4)]
             for name in ("warm", "cold")}
    for k, parent in enumerate(parents):
        if parent is None:
            assert start["warm"][k] == start["cold"][k]
        else:
            assert start["warm"][k] < start["cold"][k]


def test_chains_depend_on_the_grid_alone_and_point_back_to_a_near_run():
    grid = sweep_grid({"a": [1.0, 2.0, 3.0], "b": [0.1, 0.2, 0.3, 0.4, 0.5]})
    parents = chains(grid)
    assert parents == chains(list(grid))
    assert parents.count(None) == 4  # round(sqrt(15)) chains of ceil(15 / 4) = 4 runs
    for index, parent in enumerate(parents):
        if parent is not None:
            assert index - 4 < index - index % 4 <= parent < index


@pytest.mark.parametrize("words, message", [
    (["--sweep", "kij:methane-ethane="], "--sweep 'kij:methane-ethane=' gives no values"),
    (["--sweep", "kij:methane-ethane=,"], "gives no values; list at least one"),
    (["--sweep", "Tc:methan=190"], "unknown component 'methan'"),
    (["--sweep", "Tc:n-butane=420"], "'n-butane' is not a component of this model (methane, ethane, propane)"),
    (["--sweep", "kji:methane-ethane=0.1"], "cannot sweep 'kji'; did you mean 'kij'?"),
    (["--sweep", "kij:methane-n-butane=0.1"], "pair 'methane-n-butane' is not a pair of components of the mixture"),
    (["--sweep", "kij:methane-methane=0.1"], "pairs a component with itself"),
    (["--sweep", "kij:methane-ethane=0,1.0"], "kij = 1 lies outside (-1, 1)"),
    (["--sweep", "kij:methane-ethane=0.1,0.1"], "gives a value twice"),
    (["--sweep", "kij:methane-ethane=0.1", "--sweep", "kij:ethane-methane=0.2"], "sweeps kij:methane-ethane a second time"),
    (["--sweep", "Pc:ethane=-4e6"], "Pc"),
    (["--sweep", "methane=0.1"], "must be KIND:TARGET=V1,V2,..."),
    (["--sweep", "kij:methane-ethane=0.1", "--plot", "e.png"], "--plot writes one run's result; with --sweep"),
    (["--workers", "2"], "--workers applies to a sweep only"),
    (["--sweep", "kij:methane-ethane=0.1", "--volume-translation"], "--sweep does not yet carry --volume-translation"),
    (["--sweep", "kij:methane-ethane=0.1", "--sensitivities", "Tc:methane"], "--sweep does not yet carry --sensitivities"),
    (["--sweep", "kij:methane-ethane=0.1", "--workers", "0"], "--workers 0 must be a whole number of at least 1"),
])
def test_bad_sweeps_are_refused_with_one_line(tmp_path, capsys, monkeypatch, words, message):
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, "envelope", *FEED, *words)
    assert code == 2 and message in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "envelope-sweep").exists()


def test_a_saturation_sweep_varies_only_the_fluids_constants(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, "saturation", "--fluid", "propane", "--eos", "pr", "--sweep", "kij:propane-ethane=0.1")
    assert code == 2 and "cannot sweep 'kij'; this command sweeps Tc, Pc, omega" in err


def test_an_unreachable_scheduler_is_one_line_within_the_timeout_and_writes_nothing(tmp_path, capsys, monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, "envelope", *FEED, "--sweep", "kij:methane-ethane=0.1", "--scheduler",
                       "tcp://127.0.0.1:9", "--timeout", "1")
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "--scheduler tcp://127.0.0.1:9: no dask scheduler answered within 1 s" in err
    assert not (tmp_path / "envelope-sweep").exists()


def test_a_binary_diagram_sweeps_its_kij(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, _ = run(capsys, "pxy", "--mixture", "propane,n-butane", "--temperature", "300", "--eos", "pr",
                     "--sweep", "kij:propane-n-butane=0,0.05", "--json")
    assert code == 0
    from contin_thermo.curves._binary import pxy
    from contin_thermo.models._build import mixture

    for k, kij in enumerate((0.0, 0.05)):
        saved = document(tmp_path / "pxy-sweep", k)
        direct = pxy(mixture(["propane", "n-butane"], eos="pr", kij={"propane-n-butane": kij}), 300.0).to_dict()
        assert np.allclose(np.array(saved["points"], dtype=float), np.array(direct["points"], dtype=float),
                           rtol=1e-12, atol=0)
