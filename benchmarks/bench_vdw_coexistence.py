"""Reduced van der Waals coexistence from T = 0.9 towards the critical point: contin.trace against
natural-parameter stepping with scipy.optimize.fsolve (the usual hand-rolled loop), in one process.

The system, in reduced units (T, p, v over their critical values), unknowns v_l, v_v, p, free T:
    P(v_l) - p = 0,  P(v_v) - p = 0,  ∫_{v_l}^{v_v} P dv - p (v_v - v_l) = 0   (equal area),
with P(v) = 8T/(3v - 1) - 3/v². Each method is asked for the same 100 temperatures between 0.9 and
0.999. A point counts as correct when its volumes agree with an independent reference (the outer
roots of P(v) = p with p found by bracketing the equal-area condition) to 1e-6 relative.

Prints one JSON object per case: method, wall time, residual evaluations, points correct.
Run: python benchmarks/bench_vdw_coexistence.py [--repeat N]
"""

from __future__ import annotations

import argparse
import json
import math
import time

import numpy as np
import scipy.optimize

import contin

TEMPERATURES = np.linspace(0.9, 0.999, 100)
# Maxwell construction at Tr = 0.9 (Maxwell, Nature 11 (1875) 357; solved independently at 30 digits,
# see docs/check-values.md).
START = {"v_liquid": 0.6034019, "v_vapour": 2.3488424, "p": 0.6469984}


def pressure(v, t):
    return 8.0 * t / (3.0 * v - 1.0) - 3.0 / v**2


def residual(u, q):
    vl, vv, p = u
    t = q[0]
    area = 8.0 * t / 3.0 * math.log((3.0 * vv - 1.0) / (3.0 * vl - 1.0)) + 3.0 * (1.0 / vv - 1.0 / vl) - p * (vv - vl)
    return np.array([pressure(vl, t) - p, pressure(vv, t) - p, area])


def jacobian(u, q):
    vl, vv, p = u
    t = q[0]
    dp_dv = lambda v: -24.0 * t / (3.0 * v - 1.0) ** 2 + 6.0 / v**3  # noqa: E731
    return np.array([
        [dp_dv(vl), 0.0, -1.0],
        [0.0, dp_dv(vv), -1.0],
        [-8.0 * t / (3.0 * vl - 1.0) + 3.0 / vl**2 + p, 8.0 * t / (3.0 * vv - 1.0) - 3.0 / vv**2 - p, -(vv - vl)],
    ])


def parameter_jacobian(u, q):
    vl, vv, _ = u
    return np.array([[8.0 / (3.0 * vl - 1.0)], [8.0 / (3.0 * vv - 1.0)],
                     [8.0 / 3.0 * math.log((3.0 * vv - 1.0) / (3.0 * vl - 1.0))]])


def reference(t):
    """Independent answer: bracket p between the spinodal pressures and solve the equal-area
    condition by Brent's method, with the outer roots of P(v) = p from numpy.roots polished by Newton."""
    def outer_roots(p):
        # p v^2 (3v - 1) = 8 t v^2 - 3 (3v - 1)  ->  3p v^3 - (p + 8t) v^2 + 9 v - 3 = 0
        coefficients = [3.0 * p, -(p + 8.0 * t), 9.0, -3.0]
        roots = np.sort(np.roots(coefficients).real)  # three real roots inside the spinodal bracket
        polished = []
        for v in (roots[0], roots[-1]):
            for _ in range(3):
                v -= np.polyval(coefficients, v) / np.polyval(np.polyder(coefficients), v)
            polished.append(v)
        return polished

    def area(p):
        vl, vv = outer_roots(p)
        return 8.0 * t / 3.0 * math.log((3.0 * vv - 1.0) / (3.0 * vl - 1.0)) + 3.0 * (1.0 / vv - 1.0 / vl) - p * (vv - vl)

    spinodal = np.roots([4.0 * t, -9.0, 6.0, -1.0])  # dP/dv = 0: 4t v^3 - 9 v^2 + 6 v - 1 = 0
    vs = np.sort(spinodal[np.abs(spinodal.imag) < 1e-9].real)
    vs = vs[vs > 1.0 / 3.0]
    low, high = max(pressure(vs[0], t), 1e-12), pressure(vs[-1], t)
    span = high - low
    p = scipy.optimize.brentq(area, low + 1e-3 * span, high - 1e-3 * span, xtol=1e-15, rtol=1e-15)
    vl, vv = outer_roots(p)
    return vl, vv, p


def correct(rows, references):
    good = 0
    for (vl, vv, _), (rl, rv, _) in zip(rows, references):
        good += abs(vl - rl) <= 1e-6 * rl and abs(vv - rv) <= 1e-6 * rv
    return int(good)


def run_engine(system):
    counts = {"residual_evaluations": 0}
    began = time.perf_counter()
    branch = contin.trace(system, START, free="T", parameters={"T": 0.9}, step=0.02, max_step=0.05,
                          at={"T": TEMPERATURES}, bounds={"T": (0.85, 0.9995)})
    seconds = time.perf_counter() - began
    # The start point itself is T = 0.9: the trace reports it among the at-points.
    rows = [sp.point[:3] for sp in sorted(branch.at, key=lambda sp: sp.values["T"])]
    counts["residual_evaluations"] = branch.stats["residual_evaluations"]
    counts["jacobian_evaluations"] = branch.stats["jacobian_evaluations"]
    return rows, seconds, counts, branch


def run_fsolve(with_jacobian: bool):
    calls = {"residual": 0, "jacobian": 0}

    def f(u, t):
        calls["residual"] += 1
        return residual(u, [t])

    def j(u, t):
        calls["jacobian"] += 1
        return jacobian(u, [t])

    began = time.perf_counter()
    guess = np.array([START["v_liquid"], START["v_vapour"], START["p"]])
    rows = []
    for t in TEMPERATURES:
        guess = scipy.optimize.fsolve(f, guess, args=(t,), fprime=j if with_jacobian else None, xtol=1e-12)
        rows.append(guess.copy())
    seconds = time.perf_counter() - began
    return rows, seconds, {"residual_evaluations": calls["residual"], "jacobian_evaluations": calls["jacobian"]}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5, help="timed repetitions (best is reported)")
    args = parser.parse_args()
    system = contin.CallableSystem(residual, ["v_liquid", "v_vapour", "p"], {"T": 0.9},
                                   jacobian=jacobian, parameter_jacobian=parameter_jacobian)
    references = [reference(t) for t in TEMPERATURES]
    cases = []
    engine_best = math.inf
    for _ in range(args.repeat):
        rows, seconds, counts, branch = run_engine(system)
        engine_best = min(engine_best, seconds)
    cases.append({"case": "vdw-coexistence", "method": "contin.trace (pseudo-arclength, at=100 temperatures)",
                  "seconds": engine_best, **counts, "points_requested": len(TEMPERATURES),
                  "points_returned": len(rows), "points_correct": correct(rows, references),
                  "branch_points": len(branch), "status": branch.status.label})
    for with_jacobian in (False, True):
        best = math.inf
        for _ in range(args.repeat):
            rows, seconds, counts = run_fsolve(with_jacobian)
            best = min(best, seconds)
        wrong = [float(t) for t, row, ref in zip(TEMPERATURES, rows, references)
                 if not (abs(row[0] - ref[0]) <= 1e-6 * ref[0] and abs(row[1] - ref[1]) <= 1e-6 * ref[1])]
        last = rows[-1]
        cases.append({"case": "vdw-coexistence",
                      "method": "natural-parameter fsolve loop" + (" with analytic Jacobian" if with_jacobian else ""),
                      "seconds": best, **counts, "points_requested": len(TEMPERATURES),
                      "points_returned": len(rows), "points_correct": correct(rows, references),
                      "wrong_at_temperatures": wrong[:5] + (["..."] if len(wrong) > 5 else []),
                      "at_0.999": {"v_liquid": float(last[0]), "v_vapour": float(last[1]),
                                   "reference_v_liquid": references[-1][0], "reference_v_vapour": references[-1][1]},
                      "speedup_of_trace": best / engine_best})
    for case in cases:
        print(json.dumps(case))


if __name__ == "__main__":
    main()
