"""`contin run`: summary, --json (the object of docs/contracts.md), --out files, examples, errors and plug-ins."""

from __future__ import annotations

import json
import math
import subprocess
import sys
import textwrap

import pytest

import contin.commands._cli as cli
from contin.commands._cli import main

PROBLEM = textwrap.dedent(
    """\
    [unknowns]
    u = -1.5
    [parameters]
    p = 1.875
    [equations]
    balance = "u**3 - u + p"
    [trace]
    free = "p"
    direction = -1
    bounds = { p = [-2.0, 2.0] }
    at = { p = [0.1] }
    """
)
FOLD = 2 / (3 * math.sqrt(3))  # folds of u^3 - u + p at p = -+2/(3 sqrt 3) (exact)


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "cache"))


@pytest.fixture
def problem(tmp_path):
    path = tmp_path / "cubic.toml"
    path.write_text(PROBLEM)
    return path


def test_summary_names_status_points_and_special_points(problem, capsys):
    assert main(["run", str(problem)]) == 0
    out = capsys.readouterr().out
    assert "status: bound_reached (success)" in out
    assert "points: " in out and "special points:" in out
    assert out.count("fold in p") == 2
    assert f"p = {-FOLD:.10g}" in out and f"p = {FOLD:.10g}" in out


def test_json_is_the_design_object(problem, capsys):
    assert main(["run", str(problem), "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert {"status", "message", "columns", "points", "special_points", "at", "stats"} <= set(document)
    assert document["status"] == "bound_reached" and document["columns"] == ["u", "p"]
    assert {"setup_seconds", "trace_seconds", "newton_iterations", "jacobian_evaluations"} <= set(document["stats"])
    folds = sorted(sp["values"]["p"] for sp in document["special_points"] if sp["kind"] == "fold")
    assert folds == pytest.approx([-FOLD, FOLD], abs=1e-9)
    for sp in document["special_points"]:
        assert document["points"][sp["index"]] == pytest.approx([sp["values"]["u"], sp["values"]["p"]], abs=1e-12)
    # The cubic has three real roots at p = 0.1 (exact), each reported.
    assert [round(row[1], 12) for row in document["at"]] == [0.1, 0.1, 0.1]  # rows in column order


def test_out_writes_csv_and_json(problem, tmp_path, capsys):
    folder = tmp_path / "results"
    assert main(["run", str(problem), "--out", str(folder), "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert sorted(p.name for p in folder.iterdir()) == ["cubic.csv", "cubic.json"]
    written = json.loads((folder / "cubic.json").read_text())
    assert written["points"] == printed["points"] and written["columns"] == ["u", "p"]
    rows = [line for line in (folder / "cubic.csv").read_text().splitlines() if line and not line.startswith("#")]
    assert rows[0].replace(" ", "") == "u,p" and len(rows) == len(printed["points"]) + 1


def test_out_leaves_nothing_on_error(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(PROBLEM.replace('free = "p"', 'free = "q"'))
    folder = tmp_path / "results"
    assert main(["run", str(bad), "--out", str(folder)]) == 2
    assert not folder.exists()


def test_out_that_is_a_file(problem, tmp_path, capsys):
    blocker = tmp_path / "taken"
    blocker.write_text("x")
    assert main(["run", str(problem), "--out", str(blocker)]) == 2
    assert "--out" in capsys.readouterr().err and blocker.read_text() == "x"


def test_bad_file_is_one_line_without_traceback(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(PROBLEM.replace("u**3 - u + p", "u**3 - u + qq"))
    assert main(["run", str(bad)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1].startswith("contin: error: ") and "line 6: equation 'balance', column 12" in err[-1]
    assert "Traceback" not in "\n".join(err)


def test_missing_file(tmp_path, capsys):
    assert main(["run", str(tmp_path / "absent.toml")]) == 2
    assert "no such problem file" in capsys.readouterr().err


def test_failed_trace_exits_with_one(tmp_path, capsys):
    path = tmp_path / "none.toml"
    path.write_text(PROBLEM.replace("u**3 - u + p", "exp(u) + p*p + 1"))  # no real solution (exact)
    assert main(["run", str(path)]) == 1
    assert "(failure)" in capsys.readouterr().out


def test_run_needs_a_source(capsys):
    assert main(["run"]) == 2
    assert "needs a problem file, --example NAME, --from RECORD or --list-examples" in capsys.readouterr().err


def test_problem_and_example_together_are_refused(problem, capsys):
    assert main(["run", str(problem), "--example", "stirred_tank"]) == 2
    assert "not allowed with" in capsys.readouterr().err


def test_list_examples(capsys):
    assert main(["run", "--list-examples"]) == 0
    out = capsys.readouterr().out
    for name in ("pellet_ignition", "roof_truss", "stirred_tank"):
        assert name in out


def test_misspelt_example(capsys):
    assert main(["run", "--example", "stirred_tnk"]) == 2
    assert "did you mean 'stirred_tank'" in capsys.readouterr().err


def test_no_command_prints_help(capsys):
    assert main([]) == 2
    assert "run" in capsys.readouterr().out


class FakeEntry:
    def __init__(self, name, target):
        self.name, self.target = name, target

    def load(self):
        if isinstance(self.target, Exception):
            raise self.target
        return self.target


def test_broken_plugin_warns_and_run_still_works(problem, monkeypatch, capsys):
    monkeypatch.setattr(cli.metadata, "entry_points", lambda group: [FakeEntry("broken", ImportError("no module named nowhere"))])
    assert main(["run", str(problem)]) == 0
    captured = capsys.readouterr()
    assert "plug-in 'broken' could not be loaded" in captured.err and "status: bound_reached" in captured.out


def test_plugins_add_subcommands_in_name_order(monkeypatch, capsys):
    order = []

    def register_named(name):
        def register(subparsers):
            order.append(name)
            sub = subparsers.add_parser(name)
            sub.set_defaults(handler=lambda namespace: print(f"hello from {name}") or 0)
        return register

    entries = [FakeEntry("zeta", register_named("zeta")), FakeEntry("alpha", register_named("alpha"))]
    monkeypatch.setattr(cli.metadata, "entry_points", lambda group: entries)
    assert main(["zeta"]) == 0
    assert order == ["alpha", "zeta"] and "hello from zeta" in capsys.readouterr().out


def test_python_dash_m_contin(tmp_path):
    result = subprocess.run(
        [sys.executable, "-m", "contin", "run", "--list-examples"], capture_output=True, text=True, timeout=120,
        env={"CONTIN_CACHE_DIR": str(tmp_path), "PATH": "", "HOME": str(tmp_path)},
    )
    assert result.returncode == 0 and "stirred_tank" in result.stdout


def test_the_summary_shows_hopf_frequencies_and_the_notes_that_qualify_a_result(tmp_path, capsys):
    # Brusselator x' = A - (B + 1) x + x^2 y, y' = B x - x^2 y with A = 1.5: Hopf at B = 1 + A^2 = 3.25 with
    # angular frequency A (Lefever & Nicolis, J. Theor. Biol. 30, 1971). The start is given far from the
    # equilibrium (A, B/A), so Newton moves it: a note says so.
    problem = tmp_path / "oscillator.toml"
    problem.write_text(
        'kind = "ode"\n[unknowns]\nx = 2.0\ny = 0.4\n[parameters]\nB = 1.0\n[constants]\nA = 1.5\n'
        '[equations]\nfx = "A - (B + 1)*x + x**2*y"\nfy = "B*x - x**2*y"\n'
        '[trace]\nfree = "B"\nbounds = { B = [1.0, 4.0] }\n')
    assert main(["run", str(problem)]) == 0
    out = capsys.readouterr().out
    (line,) = [line for line in out.splitlines() if line.strip().startswith("hopf")]
    assert "B = 3.25" in line and "angular frequency 1.5" in line
    assert "note: the start was moved by" in out
    kinds = [line.split()[0] for line in out.splitlines() if line.startswith("  ") and "(point" in line]
    widths = {line.index("(point") - len(line.split("(point")[0].rstrip()) for line in out.splitlines() if "(point" in line}
    assert kinds == ["hopf", "bound"] and widths == {2}


def test_ctrl_c_mid_trace_writes_the_partial_files_and_exits_130(tmp_path, capsys, monkeypatch):
    import contin.studies._run as problem_module

    real = problem_module.run_problem

    def interrupted_after_five_points(problem, **keywords):
        def on_point(index, x, special):
            if index == 5:
                raise KeyboardInterrupt

        return real(problem, on_point=on_point)

    monkeypatch.setattr(problem_module, "run_problem", interrupted_after_five_points)
    out = tmp_path / "out"
    assert main(["run", "--example", "stirred_tank", "--out", str(out)]) == 130
    captured = capsys.readouterr()
    assert captured.err.strip().splitlines() == [
        "contin: interrupted after 6 points; the partial results were written"]
    document = json.loads((out / "stirred_tank.json").read_text())
    assert document["status"] == "interrupted" and len(document["points"]) == 6


# A real SIGINT (what Ctrl-C sends) delivered to a `contin run` process at its sixth point.
# The child restores Python's own SIGINT handler first: a child of a process started in the background
# (nohup, "&") inherits SIGINT ignored, and the signal would then do nothing.
_SIGINT_AT_POINT_5 = """\
import os, signal, sys
signal.signal(signal.SIGINT, signal.default_int_handler)
import contin.studies._run as run_module
from contin.commands._cli import main
real = run_module.run_problem
def run_problem(problem, **keywords):
    def on_point(index, x, special):
        if index == 5:
            signal.raise_signal(signal.SIGINT)  # delivered to this thread, at once
    return real(problem, on_point=on_point)
run_module.run_problem = run_problem
sys.exit(main(sys.argv[1:]))
"""


def test_a_real_sigint_mid_trace_exits_130_with_one_line_and_the_partial_files(tmp_path):
    out = tmp_path / "out"
    done = subprocess.run([sys.executable, "-c", _SIGINT_AT_POINT_5, "run", "--example", "stirred_tank",
                           "--out", str(out)], capture_output=True, text=True, timeout=120, stdin=subprocess.DEVNULL)
    assert done.returncode == 130, done.stderr
    assert done.stderr.splitlines() == ["contin: interrupted after 6 points; the partial results were written"]
    assert "interrupted" in done.stdout
    document = json.loads((out / "stirred_tank.json").read_text())
    assert document["status"] == "interrupted" and len(document["points"]) == 6
    rows = [line for line in (out / "stirred_tank.csv").read_text().splitlines() if line and line[0] not in "#"]
    assert len(rows) == 1 + 6  # the header and the six points traced


SPLIT_PROBLEM = """\
kind = "algebraic"

[unknowns]
x = 0.1
y = 1.0

[parameters]
a = 0.01

[equations]
first = "x**2 - a"
second = "y**2 - a - 1"

[trace]
free = "a"
bounds = { a = [0.0, 1.0] }
max_points = 50
"""


def test_a_structure_warning_reaches_the_user_as_one_line_once(tmp_path, capsys):
    path = tmp_path / "split.toml"
    path.write_text(SPLIT_PROBLEM)
    code = main(["run", str(path), "--quiet"])
    out, err = capsys.readouterr()
    assert code == 0 and "bound" in out
    # x**2 = a and y**2 = a + 1 share no unknown: two independent subsystems, told once, without a file path
    assert err.splitlines() == [
        "contin: warning: the system splits into 2 independent subsystems (equation groups {first}; {second}); "
        "the free parameter moves each of them separately"]
