"""Fold curve of the discretised one-dimensional Bratu problem in two parameters: contin.follow against
the equivalent sequence of separate one-parameter traces, one per value of the second parameter.

The system: u'' + lambda e^u + mu = 0 on (0, 1), u(0) = u(1) = 0, central differences on N interior
points (N = 100 by default), exact Jacobian. Its fold in lambda moves with mu. Cases:

- ``follow``: contin.follow from the fold at mu = 0 up to mu = 1, with the fold located exactly at
  each of K requested mu values (``at=``);
- ``separate``: K traces in lambda at those mu values, each from u = 0 until its fold.

Both report points, wall time, the system's Jacobian evaluations (in total and per point) and the
largest difference between the two methods' fold values of lambda at the K values of mu.

Prints one JSON object per case. Run: python benchmarks/bench_follow.py [--json] [--size N] [--values K]
(``--json`` is accepted for symmetry with the other scripts: the output is always JSON lines.)
"""

from __future__ import annotations

import argparse
import json
import time

import numpy as np

import contin


class Counted:
    """Counts Jacobian evaluations of the Bratu system with a second parameter."""

    def __init__(self, size: int) -> None:
        h = 1.0 / (size + 1)
        self.laplacian = (np.diag(-2.0 * np.ones(size)) + np.diag(np.ones(size - 1), 1)
                          + np.diag(np.ones(size - 1), -1)) / h ** 2
        self.jacobians = 0
        self.system = contin.CallableSystem(self.residual, [f"u{i}" for i in range(size)],
                                            {"lambda": 0.0, "mu": 0.0}, jacobian=self.jacobian,
                                            parameter_jacobian=self.parameter_jacobian, start=np.zeros(size))

    def residual(self, u, p):
        return self.laplacian @ u + p[0] * np.exp(u) + p[1]

    def jacobian(self, u, p):
        self.jacobians += 1
        return self.laplacian + np.diag(p[0] * np.exp(u))

    def parameter_jacobian(self, u, p):
        return np.column_stack([np.exp(u), np.ones(u.size)])


def one_parameter(counted: Counted, mu: float) -> contin.Branch:
    middle = f"u{counted.system.size // 2}"
    return contin.trace(counted.system, free="lambda", parameters={"mu": mu, "lambda": 0.0}, step=0.1,
                        max_step=0.5, bounds={"lambda": (-0.1, 6.0), middle: (-1.0, 3.0)}, max_points=400)


def separate(size: int, values: np.ndarray) -> tuple[dict, np.ndarray]:
    counted = Counted(size)
    began = time.perf_counter()
    folds, points = [], 0
    for mu in values:
        branch = one_parameter(counted, float(mu))
        points += len(branch)
        folds.append(branch.special("fold")[0].values["lambda"])
    seconds = time.perf_counter() - began
    return {"case": "separate", "size": size, "values": int(values.size), "points": points, "seconds": seconds,
            "jacobian_evaluations": counted.jacobians,
            "jacobian_evaluations_per_point": counted.jacobians / points}, np.array(folds)


def followed(size: int, values: np.ndarray) -> tuple[dict, np.ndarray]:
    counted = Counted(size)
    began = time.perf_counter()
    branch = one_parameter(counted, 0.0)
    fold = branch.special("fold")[0]
    before = counted.jacobians
    curve = contin.follow(branch, fold, counted.system, free=("lambda", "mu"), step=0.05, max_step=0.25,
                          bounds={"mu": (-0.01, float(values.max()) + 0.01)}, at={"mu": values}, max_points=400)
    seconds = time.perf_counter() - began
    found = {round(sp.values["mu"], 12): sp.values["lambda"] for sp in curve.at}
    folds = np.array([found.get(round(float(mu), 12), np.nan) for mu in values])
    jacobians = counted.jacobians - before
    return {"case": "follow", "size": size, "values": int(values.size), "points": len(curve),
            "status": curve.status.label, "seconds": seconds, "jacobian_evaluations": jacobians,
            "jacobian_evaluations_per_point": jacobians / len(curve),
            "newton_iterations": curve.stats["newton_iterations"]}, folds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", action="store_true", help="JSON lines (the only output format)")
    parser.add_argument("--size", type=int, default=100, help="interior grid points (default 100)")
    parser.add_argument("--values", type=int, default=25, help="values of mu in [0, 1] (default 25)")
    arguments = parser.parse_args()
    values = np.linspace(0.0, 1.0, arguments.values)
    follow_case, follow_folds = followed(arguments.size, values)
    separate_case, separate_folds = separate(arguments.size, values)
    difference = float(np.nanmax(np.abs(follow_folds - separate_folds)))
    for case in (follow_case, separate_case):
        case["max_fold_lambda_difference"] = difference
        case["folds_found_by_follow"] = int(np.count_nonzero(np.isfinite(follow_folds)))
        print(json.dumps(case))


if __name__ == "__main__":
    main()
