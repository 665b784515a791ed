"""Sweep benchmark: a kij sweep of a 5-component envelope over 32 values; one JSON object per case.

Cases: serial with and without warm starts, a 2-process pool, and a 2-worker local dask cluster
(``distributed.LocalCluster``, worker processes; its start-up is timed apart). Wall time is for the
whole ``contin thermo envelope --sweep`` command (stability check included), with a fresh output
folder each time, after one envelope in this process (imports and compile cache paid before timing;
pool and dask workers pay theirs inside the time); the 1-minute load average is reported beside it; Newton iterations are summed over the runs, for the traces and for their start
points (the dew point at the start pressure, where a warm start helps). The feed is an invented
gas-condensate blend (demo data), the same as the 5-component case of bench_envelope.py.
"""

import contextlib
import io
import json
import os
import sys
import tempfile
import time
from pathlib import Path

from contin.commands._cli import main

NAMES = ["methane", "ethane", "propane", "n-butane", "n-pentane"]
WEIGHTS = [(2.0 - 1.8 * k / 4) ** 3 for k in range(5)]  # linspace(2.0, 0.2, 5) ** 3, normalised below
FEED = ",".join(f"{name}={w / sum(WEIGHTS):.10f}" for name, w in zip(NAMES, WEIGHTS))
VALUES = ",".join(f"{0.003 * k:.3f}" for k in range(32))


def sweep(folder: Path, *extra: str) -> dict:
    words = ["thermo", "envelope", "--mixture", FEED, "--eos", "pr", "--sweep", f"kij:methane-n-pentane={VALUES}",
             "--out", str(folder), "--quiet", *extra]
    began = time.perf_counter()
    with contextlib.redirect_stdout(io.StringIO()) as out:
        code = main(words)
    wall = time.perf_counter() - began
    runs = [json.loads((folder / f"run-{k}.json").read_text()) for k in range(32)]
    return {"exit": code, "wall_seconds": round(wall, 3), "runs": len(runs),
            "succeeded": sum(bool(run["success"]) for run in runs),
            "trace_newton_iterations": sum(run["stats"]["newton_iterations"] for run in runs),
            "start_newton_iterations": sum(run["stats"]["start_newton_iterations"] for run in runs),
            "load_average_1min": round(os.getloadavg()[0], 2), "report": out.getvalue().splitlines()[0]}


def main_cases() -> None:
    with tempfile.TemporaryDirectory() as temporary:
        root = Path(temporary)
        sweep_words = ["thermo", "envelope", "--mixture", FEED, "--eos", "pr", "--quiet"]
        with contextlib.redirect_stdout(io.StringIO()):
            main(sweep_words)  # warm-up: this process's imports and compile cache, paid once before timing
        print(json.dumps({"case": "serial, warm starts", **sweep(root / "serial")}), flush=True)
        print(json.dumps({"case": "serial, cold starts", **sweep(root / "cold", "--cold")}), flush=True)
        print(json.dumps({"case": "2-process pool, warm starts", **sweep(root / "pool", "--workers", "2")}), flush=True)
        try:
            from distributed import LocalCluster
        except ImportError:
            print(json.dumps({"case": "2-worker local dask cluster", "skipped": "distributed is not installed"}))
            return
        began = time.perf_counter()
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
            startup = time.perf_counter() - began
            result = sweep(root / "dask", "--scheduler", cluster.scheduler_address)
        print(json.dumps({"case": "2-worker local dask cluster, warm starts", "cluster_startup_seconds": round(startup, 3),
                          **result}), flush=True)


if __name__ == "__main__":
    sys.exit(main_cases())
