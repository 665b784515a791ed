"""Large sparse systems: time and peak memory of traces on the sparse path against the dense one.

Cases (each run in its own process, so its peak resident memory is its own):

- ``bratu2d``: benchmarks/bratu2d.py on N x N grids (N = 32, 64, 100, 128, 256 by default), from
  lambda = 0 through the fold and down to lambda = 1: seconds, points, seconds per point, Jacobians,
  the fold, peak memory;
- ``bratu1d``: the one-dimensional Bratu problem with 640 unknowns (u'' + lambda e^u = 0, central
  differences), from lambda = 0 through the fold, with the dense LU (its Jacobian a dense array, as
  every system had before the sparse path) and with the sparse LU (the same Jacobian as scipy.sparse).

Prints one JSON object per case. Run: python benchmarks/bench_sparse.py [--grids 32 64 128] [--json]
(``--json`` is accepted for symmetry with the other scripts: the output is always JSON lines.)
"""

from __future__ import annotations

import argparse
import json
import pathlib
import subprocess
import sys

HERE = pathlib.Path(__file__).resolve().parent

_BRATU1D = """
import json, resource, sys, time
import numpy as np, scipy.sparse as sparse
import contin
n, solver = {size}, {solver!r}
h = 1.0 / (n + 1)
line = sparse.diags_array([np.ones(n - 1), -2.0 * np.ones(n), np.ones(n - 1)], offsets=[-1, 0, 1]).tocsr() / h**2
dense_line = line.toarray()
if solver == "dense":
    jacobian = lambda u, p: dense_line + np.diag(p[0] * np.exp(u))
else:
    jacobian = lambda u, p: (line + sparse.diags_array(p[0] * np.exp(u))).tocsr()
system = contin.CallableSystem(lambda u, p: line @ u + p[0] * np.exp(u), n, {{"lambda": 0.0}}, jacobian=jacobian,
                               parameter_jacobian=lambda u, p: np.exp(u)[:, None], start=np.zeros(n))
began = time.perf_counter()
branch = contin.trace(system, free="lambda", step=0.1, max_step=0.5, max_points=400,
                      bounds={{"lambda": (-0.1, 4.0), f"u{{n // 2}}": (-1.0, 3.0)}})
seconds = time.perf_counter() - began
print(json.dumps({{"case": "bratu1d", "unknowns": n, "solver": branch.stats["linear_solver"], "seconds": seconds,
                  "points": len(branch.points), "jacobians": branch.stats["jacobian_evaluations"],
                  "fold": branch.special("fold")[0].values["lambda"],
                  "peak_memory_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0}}))
"""


def bratu2d_case(grid: int) -> dict:
    done = subprocess.run([sys.executable, str(HERE / "bratu2d.py"), "--grid", str(grid), "--json"],
                          capture_output=True, text=True, check=True)
    document = json.loads(done.stdout)
    folds = [p for p in document["special_points"] if p["kind"] == "fold"]
    case = document["case"]
    return {"case": "bratu2d", "grid": grid, "unknowns": case["unknowns"], "seconds": case["seconds"],
            "points": len(document["points"]), "seconds_per_point": case["seconds_per_point"],
            "jacobians": document["stats"]["jacobian_evaluations"], "fold": folds[0]["values"]["lam"] if folds else None,
            "status": document["status"], "peak_memory_mib": case["peak_memory_mib"]}


def bratu1d_case(size: int, solver: str) -> dict:
    done = subprocess.run([sys.executable, "-c", _BRATU1D.format(size=size, solver=solver)],
                          capture_output=True, text=True, check=True)
    return json.loads(done.stdout)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--grids", type=int, nargs="*", default=[32, 64, 100, 128, 256])
    parser.add_argument("--json", action="store_true", help="(always JSON lines)")
    arguments = parser.parse_args(argv)
    for solver in ("dense", "sparse"):
        print(json.dumps(bratu1d_case(640, solver)), flush=True)
    for grid in arguments.grids:
        print(json.dumps(bratu2d_case(grid)), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
