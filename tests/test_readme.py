"""README cannot drift from the tool: its set-up commands, files and tutorial commands are run here."""

from __future__ import annotations

import json
import math
import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

from contin.commands._cli import main

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def blocks(language: str, text: str = README) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", text, re.S)


def section(title: str) -> str:
    start = README.index(f"## {title}")
    end = README.find("\n## ", start + 1)
    return README[start:end if end > 0 else None]


def test_exactly_two_set_up_commands_and_ci_runs_the_second():
    setup = blocks("sh", section("Set up"))
    assert len(setup) == 2 and all(len(b.strip().splitlines()) == 1 for b in setup)
    first, second = (b.strip() for b in setup)
    assert first.endswith("contin demo") and "pip install ." in first
    assert second.endswith("pytest") and 'pip install ".[test]"' in second
    ci = (ROOT / ".ci" / "run").read_text()
    assert 'pip install --quiet ".[test]"' in ci and "pytest" in ci


@pytest.fixture(scope="module")
def tutorial(tmp_path_factory):
    folder = tmp_path_factory.mktemp("readme")
    for language in ("toml", "python", "csv"):
        for block in blocks(language, section("Tutorial")):
            first = block.splitlines()[0]
            if first.startswith("# file:"):
                (folder / first.split(":", 1)[1].strip()).write_text(block, encoding="utf-8")
    commands = [line.strip() for block in blocks("sh", section("Tutorial")) for line in block.splitlines() if line.strip()]
    return folder, commands


def test_tutorial_commands_all_run(tutorial, capsys, monkeypatch):
    folder, commands = tutorial
    monkeypatch.chdir(folder)
    assert any(c.startswith("contin thermo envelope") for c in commands)
    outputs = {}
    for command in commands:
        words = shlex.split(command)
        if words[0] == "contin":
            code = main(words[1:])
            captured = capsys.readouterr()
            assert code == 0, f"{command}\n{captured.err}"
            outputs[command] = captured.out
        else:
            assert words[0] == "python", command
            result = subprocess.run([sys.executable, *words[1:]], cwd=folder, capture_output=True, text=True,
                                    env={**os.environ, "MPLBACKEND": "Agg"}, timeout=300)
            assert result.returncode == 0, result.stderr
            assert result.stdout.count("cricondenbar") == 4
    # What the prose says about the files and the restart point.
    assert (folder / "results" / "cabinet.csv").exists() and (folder / "cabinet.png").stat().st_size > 10_000
    record = json.loads((folder / "results" / "cabinet-record.json").read_text())
    restart_at = int(re.search(r"--restart-at (\d+)", README).group(1))
    kinds = {sp["index"]: sp["kind"] for sp in record["result"]["special_points"]}
    assert kinds.get(restart_at) == "fold"
    assert sum(kind == "fold" for kind in kinds.values()) == 2  # "the two folds"
    assert len(list((folder / "study").glob("*.json"))) == 4  # the study kept its four cases
    # "your own fluid": the pseudo-components reproduce the plus fraction given (an identity).
    characterised = json.loads(outputs["contin thermo characterise --feed analysis.csv --pseudo 4 --json"])
    pseudo = characterised["components"]
    assert len(pseudo) == 4 and sum(p["z"] for p in pseudo) == pytest.approx(0.0412, rel=1e-12)
    assert sum(p["z"] * p["molar_mass"] for p in pseudo) / 0.0412 == pytest.approx(182.0, rel=1e-10)
    check_tutorial_outputs(outputs, restart_at)
    check_tutorial_sweeps(folder, outputs)


def _summary_rows(path: Path) -> list[dict]:
    import csv

    with open(path) as handle:
        return list(csv.DictReader(line for line in handle if not line.startswith("#")))


def check_tutorial_sweeps(folder: Path, outputs: dict) -> None:
    """The study section's sweeps: the cabinet's folds for each g against the exact formula, the resumed
    sweep reusing every run, and the kij sweep giving the Python study's corners.

    With f = g t / (g + t) the folds satisfy t f'(t) = 1, i.e. t^2 + (2g - g^2) t + g^2 = 0 (exact; for
    g = 6 it is the t^2 - 24 t + 36 = 0 of the tutorial's first section).
    """
    assert "3 runs (0 reused from an earlier sweep), 3 succeeded" in outputs["contin sweep cabinet-g.toml"]
    assert "3 runs (3 reused from an earlier sweep)" in outputs["contin sweep cabinet-g.toml --workers 2"]
    rows = _summary_rows(folder / "cabinet-g" / "summary.csv")
    for g in (5.0, 6.0, 7.0):
        root = g * math.sqrt(g * g - 4 * g)
        exact = [(g * g - 2 * g - root) / 2, (g * g - 2 * g + root) / 2]
        folds = [float(r["t"]) for r in rows if float(r["g"]) == g and r["kind"] == "fold"]
        assert folds == pytest.approx(exact, abs=1e-8)
    corners = _summary_rows(folder / "kij-sweep" / "summary.csv")
    study = {entry["case"]["kij"]: entry["result"] for entry in
             (json.loads(path.read_text()) for path in (folder / "study").glob("*.json"))}
    assert sorted(study) == [0.0, 0.02, 0.04, 0.06] and len(corners) == 12
    for row in corners:
        expected = study[float(row["kij:methane-n-heptane"])][row["kind"]]
        assert float(row["T"]) == pytest.approx(expected["T"], rel=1e-9)
        assert float(row["P"]) == pytest.approx(expected["P"], rel=1e-9)
    propane = _summary_rows(folder / "propane-sweep" / "summary.csv")
    # The cubic's critical point is its Tc and Pc exactly (Omega_a, Omega_b are fixed by them).
    assert [float(r["T"]) for r in propane] == pytest.approx([369.0, 370.0] * 3, rel=1e-12)


def _special_lines(summary: str, word: str) -> list[dict]:
    """The coordinate values of the summary lines that start with ``word`` (and their point number)."""
    found = []
    for line in summary.splitlines():
        if line.strip().startswith(word):
            values = {k: float(v) for k, v in re.findall(r"(\w+) = ([-+0-9.e]+)", line)}
            point = re.search(r"\(point (\d+)\)", line)
            found.append({"values": values, "point": int(point.group(1)) if point else None})
    return found


def check_tutorial_outputs(outputs: dict, restart_at: int) -> None:
    """What the tutorial's prose claims of each command's output, checked against exact answers.

    The cabinet's balance q exp(t / (1 + t/6)) = t (exact): a fold where t f'(t) = 1 with
    f = 6t / (6 + t), i.e. t^2 - 24 t + 36 = 0, t = 12 -+ 6 sqrt 3 (the runaway limit and the return).
    """
    summary = outputs["contin run cabinet.toml"]

    def q_of(t):
        return t * math.exp(-t / (1 + t / 6))

    folds = _special_lines(summary, "fold")
    assert [f["values"]["t"] for f in folds] == pytest.approx([12 - 6 * math.sqrt(3), 12 + 6 * math.sqrt(3)], abs=1e-8)
    assert [f["values"]["q"] for f in folds] == pytest.approx([q_of(f["values"]["t"]) for f in folds], abs=1e-8)
    assert folds[0]["point"] == restart_at  # "the summary lists it as point 12"
    (event,) = _special_lines(summary, "event")
    assert event["values"]["t"] == pytest.approx(10.0, abs=1e-8) and event["values"]["q"] == pytest.approx(q_of(10.0), abs=1e-8)
    at = [line for line in _special_lines(summary, "q = 0.2")]
    assert len(at) == 3  # q = 0.2 is met on the lower, middle and upper parts of the S
    for item in at:
        assert item["values"]["q"] == 0.2 and q_of(item["values"]["t"]) == pytest.approx(0.2, abs=1e-9)
    document = json.loads(outputs["contin run cabinet.toml --json --out results --record results/cabinet-record.json"])
    assert document["status"] == "bound_reached" and document["columns"] == ["t", "q"]
    # The restart from the first fold in the other direction runs back down the lower part to q = 0,
    # meeting q = 0.2 again on the lower part only.
    restarted = outputs["contin run --from results/cabinet-record.json --restart-at 12 --direction -1"]
    assert "status: bound_reached" in restarted
    # it ends in the corner q = 0, t = 0, on both bounds at once: each is a special point
    assert [b["values"] for b in _special_lines(restarted, "bound")] == [{"q": 0.0, "t": 0.0}] * 2
    assert "bound  q = 0  t = 0, q = 0" in restarted and "bound  t = 0  t = 0, q = 0" in restarted
    (again,) = _special_lines(restarted, "q = 0.2")
    assert again["values"]["t"] == pytest.approx(at[0]["values"]["t"], abs=1e-9) and again["values"]["t"] < folds[0]["values"]["t"]
