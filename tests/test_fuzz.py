"""Fuzz: generated problem files, thermo command lines and edited run records obey one law.

The law (see tests/fuzz_inputs.py): exit 0, 1 or 2, never a traceback; with 2, exactly one line on
stderr; nothing written outside the named targets, no temporary files, no partial outputs. Runs are
in-process through contin's main() for speed; a few go through a real ``python -m contin`` process.
Longer runs: ``python benchmarks/fuzz.py --examples N --json``.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import fuzz_inputs as fuzz

SETTINGS = settings(max_examples=20, derandomize=True, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


@pytest.fixture(scope="module")
def record(tmp_path_factory):
    return fuzz.good_record(tmp_path_factory.mktemp("base"))


@SETTINGS
@given(text=fuzz.problem_files(), plot=st.integers(0, 9))
def test_generated_problem_files_obey_the_law(tmp_path_factory, text, plot):
    root = tmp_path_factory.mktemp("problem")
    assert fuzz.try_problem(text, root, plot=plot == 0) is None, text


@settings(SETTINGS, max_examples=15)
@given(words=fuzz.thermo_words())
def test_generated_thermo_command_lines_obey_the_law(tmp_path_factory, words):
    root = tmp_path_factory.mktemp("thermo")
    assert fuzz.try_thermo(words, root) is None, words


@SETTINGS
@given(edits=fuzz.record_edits(), index=st.integers(-3, 8))
def test_edited_run_records_obey_the_law(tmp_path_factory, record, edits, index):
    root = tmp_path_factory.mktemp("record")
    assert fuzz.try_record(record, edits, root, index) is None, edits


@pytest.mark.parametrize("words, message", [
    (["run", "--from", "{record}", "--restart-at", "1"], "input.name '../../x.toml' has a folder part"),
    (["thermo", "pxy", "--mixture", "propane,n-butane", "--temperature", "\u0663\u0660\u0660", "--eos", "pr"],
     "--temperature"),
])
def test_a_real_process_gives_one_line_and_no_traceback(tmp_path, record, words, message):
    bad = dict(record, input=dict(record["input"], name="../../x.toml"))
    (tmp_path / "r.json").write_text(json.dumps(bad))
    words = [w.replace("{record}", str(tmp_path / "r.json")) for w in words]
    done = subprocess.run([sys.executable, "-m", "contin", *words], capture_output=True, text=True, timeout=120,
                          cwd=tmp_path)
    assert done.returncode == 2 and done.stderr.count("\n") == 1, done.stderr
    assert message in done.stderr and "Traceback" not in done.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.json"]
