"""The two-dimensional Bratu problem traced through its fold on the sparse path.

-Laplace(u) = lambda e^u on the unit square, u = 0 on the boundary, 5-point differences on an N x N
interior grid (spacing h = 1/(N + 1)); the unknowns are the N^2 interior values, row by row. The
Jacobian h^-2 (5-point Laplacian) + lambda diag(e^u) is given as a scipy.sparse CSR matrix, so the trace
factorises the bordered matrix with sparse LU (SuperLU): memory grows with the non-zeros, not N^4.

The trace starts at lambda = 0, u = 0, goes up the lower branch, through the fold (lambda* about 6.81,
the value reported in the literature on the Bratu problem, from memory) and down the upper branch to
lambda = 1 (or ``--down``), where it stops at a bound.

Run: python benchmarks/bratu2d.py --grid N [--json] [--down LAM] [--solver auto|dense|sparse]
Without --json: one line with the fold and the timings. With --json: the branch object (columns
``lam`` and ``u_max`` among them, the ``fold`` special point, ``stats``) as one JSON document, plus
``case`` (grid, unknowns, seconds, seconds per point, peak resident memory in MiB).
"""

from __future__ import annotations

import argparse
import json
import resource
import sys
import time

import numpy as np
import scipy.sparse as sparse

import contin


def laplacian(grid: int) -> sparse.csr_array:
    """The 5-point approximation of -Laplace on an N x N interior grid of the unit square (zero
    boundary), scaled by 1/h^2, as CSR: 4 on the diagonal, -1 for each of the four neighbours."""
    h = 1.0 / (grid + 1)
    line = sparse.diags_array([-np.ones(grid - 1), 2.0 * np.ones(grid), -np.ones(grid - 1)], offsets=[-1, 0, 1])
    eye = sparse.identity(grid, format="csr")
    return (sparse.kron(eye, line) + sparse.kron(line, eye)).tocsr() / h**2


def bratu2d_system(grid: int, names: bool = False) -> contin.CallableSystem:
    """F(u, lam) = -Laplace_h(u) - lam e^u, with its sparse Jacobian and the parameter column.

    Args:
        grid: N, interior points per side (N^2 unknowns).
        names: name the unknowns ``u_i_j`` (row i, column j, from 0); otherwise ``u0 .. u(N^2 - 1)``.
    """
    matrix = laplacian(grid)
    size = grid * grid

    def residual(u, p):
        return matrix @ u - p[0] * np.exp(u)

    def jacobian(u, p):
        return (matrix - sparse.diags_array(p[0] * np.exp(u))).tocsr()

    def parameter_jacobian(u, p):
        return -np.exp(u)[:, None]

    unknowns = [f"u_{i}_{j}" for i in range(grid) for j in range(grid)] if names else size
    return contin.CallableSystem(residual, unknowns, {"lam": 0.0}, jacobian=jacobian,
                                 parameter_jacobian=parameter_jacobian, start=np.zeros(size))


def trace_bratu2d(grid: int, down_to: float = 1.0, solver: str = "auto", max_points: int = 400) -> contin.Branch:
    """From lambda = 0 through the fold and down to lambda = ``down_to`` on the upper branch."""
    system = bratu2d_system(grid)
    back = contin.Event(f"lam = {down_to:g} on the upper branch", lambda u, p: p[0] - down_to, direction=-1,
                        terminal=True, kind="end")
    # Step lengths are in the Euclidean norm of (u, lam), which grows like N on the upper branch.
    return contin.trace(system, free="lam", step=0.2, max_step=0.05 * grid + 1.0, bounds={"lam": (-1.0, 8.0)},
                        events=[back], max_points=max_points, linear_solver=solver)


def branch_document(branch: contin.Branch, grid: int, seconds: float) -> dict:
    """The branch's JSON document with a ``u_max`` column and the benchmark's case figures."""
    document = json.loads(branch.to_json())
    keep = [k for k, name in enumerate(branch.columns) if name == "lam"]
    document["columns"] = ["lam", "u_max"]
    document["points"] = [[row[keep[0]], float(np.max(row[:-1]))] for row in branch.points.tolist()]
    for point in document.get("special_points", []):
        values = point.get("values", {})
        u = [v for name, v in values.items() if name != "lam"]
        point["values"] = {"lam": values.get("lam"), "u_max": max(u) if u else None}
    document["case"] = {
        "grid": grid,
        "unknowns": grid * grid,
        "seconds": seconds,
        "seconds_per_point": seconds / max(1, len(branch.points)),
        "peak_memory_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
    }
    return document


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--grid", type=int, default=32, help="interior points per side (N; N^2 unknowns)")
    parser.add_argument("--json", action="store_true", help="print the branch as one JSON document")
    parser.add_argument("--down", type=float, default=1.0, help="stop on the upper branch at this lambda")
    parser.add_argument("--solver", choices=("auto", "dense", "sparse"), default="auto")
    arguments = parser.parse_args(argv)
    if arguments.grid < 2:
        parser.error(f"--grid {arguments.grid}: give at least 2 interior points per side")
    began = time.perf_counter()
    branch = trace_bratu2d(arguments.grid, arguments.down, arguments.solver)
    seconds = time.perf_counter() - began
    document = branch_document(branch, arguments.grid, seconds)
    if arguments.json:
        print(json.dumps(document))
    else:
        folds = branch.special("fold")
        fold = f"fold at lam = {folds[0].values['lam']:.10f}" if folds else "no fold"
        print(f"grid {arguments.grid}x{arguments.grid}: {fold}; {len(branch.points)} points in {seconds:.2f} s "
              f"(status {document['status']})")
    return 0 if branch.success else 1


if __name__ == "__main__":
    sys.exit(main())
