"""README cannot drift from the tool: its set-up commands, files and tutorial commands are run here."""

from __future__ import annotations

import json
import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

from contin._cli import main

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
    for language in ("toml", "python"):
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
    for command in commands:
        words = shlex.split(command)
        if words[0] == "contin":
            code = main(words[1:])
            captured = capsys.readouterr()
            assert code == 0, f"{command}\n{captured.err}"
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
