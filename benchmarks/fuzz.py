"""Longer fuzz runs of the command line, for use before releases.

Generates problem files, ``contin thermo`` command lines and edited run records (the strategies of
tests/fuzz_inputs.py) and runs each in-process through contin's main(). Every run must obey the law
of tests/fuzz_inputs.py: exit 0, 1 or 2; with 2 exactly one line on stderr; never a traceback;
nothing written outside the named targets; no partial outputs.

Prints one JSON object per category (with --json; else a short table):
``{"category", "inputs", "failures", "exit_statuses", "kinds", "examples", "seconds"}`` where ``kinds`` counts the
failures by the first words of their description and ``examples`` shows a few inputs that failed.

Usage: python benchmarks/fuzz.py --examples 300 --json [--seed 0] [--only problem,thermo,record]
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
os.environ.setdefault("MPLBACKEND", "Agg")

import fuzz_inputs as fuzz  # noqa: E402
from hypothesis import HealthCheck, Phase, given, seed, settings, strategies as st  # noqa: E402


def _kind(verdict: str) -> str:
    words = verdict.replace(":", " ").split()
    return " ".join(words[:3])


def run_category(name: str, strategy, attempt, examples: int, chosen_seed: int) -> dict:
    failures: list[tuple[str, str]] = []
    tried = 0
    statuses: dict[str, int] = {}

    @seed(chosen_seed)
    @settings(max_examples=examples, deadline=None, database=None, phases=[Phase.generate],
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def probe(value):
        nonlocal tried
        tried += 1
        verdict = attempt(value)
        status = str(fuzz.last_status[0])
        statuses[status] = statuses.get(status, 0) + 1
        if verdict is not None:
            failures.append((verdict, repr(value)))

    began = time.perf_counter()
    probe()
    kinds: dict[str, int] = {}
    for verdict, _ in failures:
        kinds[_kind(verdict)] = kinds.get(_kind(verdict), 0) + 1
    return {
        "category": name,
        "inputs": tried,
        "failures": len(failures),
        "exit_statuses": dict(sorted(statuses.items())),
        "kinds": dict(sorted(kinds.items(), key=lambda item: (-item[1], item[0]))),
        "examples": [{"failure": v[:200], "input": i[:300]} for v, i in failures[:3]],
        "seconds": round(time.perf_counter() - began, 1),
    }


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--examples", type=int, default=200, help="inputs per category (default 200)")
    parser.add_argument("--seed", type=int, default=0, help="hypothesis seed (default 0)")
    parser.add_argument("--only", default="problem,thermo,record", help="categories, comma-separated")
    parser.add_argument("--json", action="store_true", help="one JSON object per category")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="contin-fuzz-") as folder:
        root = Path(folder) / "root"
        root.mkdir()
        # Temporary files of the code under test go deep inside the watched folder, so that a path
        # such as "../../x.toml" joined onto one of them is still seen (and not written elsewhere).
        deep = root / "t1" / "t2"
        deep.mkdir(parents=True)
        tempfile.tempdir = str(deep)
        record = fuzz.good_record(Path(folder))
        categories = {
            "problem": (st.tuples(fuzz.problem_files(), st.integers(0, 9)),
                        lambda value: fuzz.try_problem(value[0], root, plot=value[1] == 0)),
            "thermo": (fuzz.thermo_words(), lambda words: fuzz.try_thermo(words, root)),
            "record": (st.tuples(fuzz.record_edits(), st.integers(-3, 8)),
                       lambda value: fuzz.try_record(record, value[0], root, value[1])),
        }
        for name in [n.strip() for n in args.only.split(",") if n.strip()]:
            strategy, attempt = categories[name]
            result = run_category(name, strategy, attempt, args.examples, args.seed)
            if args.json:
                print(json.dumps(result), flush=True)
            else:
                print(f"{name:8s} {result['inputs']:6d} inputs {result['failures']:5d} failures "
                      f"{result['seconds']:8.1f} s  {result['kinds']}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
