"""Start-up time of the command line, as a ratio to starting Python and importing numpy.

Cases: ``contin --help``, ``contin thermo saturation --fluid propane --eos pr`` with a warm compile
cache, and ``contin run --example stirred_tank`` (warm cache too). Each command runs as its own process;
the figure is the median of ``--repeat`` runs (default 5) of the wall time and of the child's CPU time
(user + system), and the ratio of each to ``python -c "import numpy"`` measured the same way on the same
machine. Targets: ``--help`` at most 2x, a warm saturation run at most 5x.

Run: python benchmarks/startup.py --json [--repeat 5]
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

CONTIN = [sys.executable, "-c", "import sys; from contin.commands._cli import main; sys.exit(main())"]
CASES = {
    "help": [*CONTIN, "--help"],
    "saturation_warm": [*CONTIN, "thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--quiet"],
    "run_example_warm": [*CONTIN, "run", "--example", "stirred_tank", "--quiet"],
}
BASELINE = [sys.executable, "-c", "import numpy"]
TARGETS = {"help": 2.0, "saturation_warm": 5.0}


def _once(command: list[str], env: dict) -> tuple[float, float]:
    began = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
    _, status, usage = os.wait4(process.pid, 0)
    wall = time.perf_counter() - began
    process.returncode = os.waitstatus_to_exitcode(status)
    if process.returncode != 0:
        raise SystemExit(f"{' '.join(command[3:]) or command}: exit status {process.returncode}")
    return wall, usage.ru_utime + usage.ru_stime


def measure(command: list[str], env: dict, repeat: int) -> dict:
    runs = [_once(command, env) for _ in range(repeat)]
    return {"wall_seconds": statistics.median(r[0] for r in runs),
            "cpu_seconds": statistics.median(r[1] for r in runs)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--json", action="store_true", help="one JSON object per case (the only output form)")
    parser.add_argument("--repeat", type=int, default=5, help="runs per case; the median is reported")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="contin-startup-") as cache:
        env = {**os.environ, "CONTIN_CACHE_DIR": cache, "MPLBACKEND": "Agg"}
        for command in CASES.values():  # warm the compile cache (and the file-system cache)
            _once(command, env)
        baseline = measure(BASELINE, env, args.repeat)
        print(json.dumps({"case": "python -c 'import numpy'", **baseline, "repeat": args.repeat}))
        for name, command in CASES.items():
            figures = measure(command, env, args.repeat)
            row = {"case": name, "command": "contin " + " ".join(command[3:]), **figures,
                   "wall_ratio": figures["wall_seconds"] / baseline["wall_seconds"],
                   "cpu_ratio": figures["cpu_seconds"] / baseline["cpu_seconds"], "repeat": args.repeat}
            if name in TARGETS:
                row["target_ratio"] = TARGETS[name]
            print(json.dumps(row))


if __name__ == "__main__":
    main()
