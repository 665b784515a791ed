"""Saturation curves from 0.4 Tc to the critical point: continuation against natural-parameter stepping.

For each cubic family: points, Newton iterations per point, warm and cold wall time of the traced
curve, the time spent inside the system's own evaluations (the rest is the engine's per-step work),
and the same curve by natural-parameter stepping in T with scipy.optimize.fsolve (the previous
solution as the guess), reporting how close to Tc that gets and whether it slid onto the trivial
solution v_l = v_v. One JSON object per line.

Run: python benchmarks/bench_saturation.py [--fluid propane] [--repeat 20]
"""

from __future__ import annotations

import argparse
import json
import math
import statistics
import subprocess
import sys
import time

import numpy as np
from scipy.optimize import fsolve

from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.curves._pure import CubicFluid, SaturationSystem, saturation_curve

COLD = """
import time, json
began = time.perf_counter()
from contin_thermo.curves._pure import saturation_curve
imported = time.perf_counter()
result = saturation_curve({fluid!r}, {eos!r})
done = time.perf_counter()
print(json.dumps({{"import_seconds": imported - began, "first_curve_seconds": done - imported}}))
"""


def cold(fluid: str, eos: str) -> dict:
    out = subprocess.run([sys.executable, "-c", COLD.format(fluid=fluid, eos=eos)], capture_output=True, text=True,
                         check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def warm(fluid: str, eos: str, repeat: int) -> tuple[float, object]:
    times = []
    result = None
    for _ in range(repeat):
        began = time.perf_counter()
        result = saturation_curve(fluid, eos)
        times.append(time.perf_counter() - began)
    return statistics.median(times), result


def evaluation_cost(fluid: CubicFluid, repeat: int = 2000) -> float:
    """Seconds per call of the system's combined residual-and-Jacobian evaluation."""
    system = SaturationSystem(fluid)
    x_l, x_v, p = fluid.saturation_at(0.7)
    a_l, a_v = math.log(x_l - 1), math.log(x_v - 1)
    u = np.array([0.5 * (a_l + a_v), (0.5 * (a_v - a_l)) ** 2, math.log(p)])
    theta = np.array([0.7])
    began = time.perf_counter()
    for _ in range(repeat):
        system.linearise(u, theta, 0)
    return (time.perf_counter() - began) / repeat


def natural_stepping(fluid: CubicFluid, points: int) -> dict:
    """Step T on a uniform grid from 0.4 Tc to Tc with fsolve on (ln(v_l/b - 1), ln(v_v/b - 1))."""
    grid = np.linspace(0.4, 1.0, points)
    x_l, x_v, _ = fluid.saturation_at(grid[0])
    guess = np.log([x_l - 1.0, x_v - 1.0])
    solved = 0
    trivial_at = None
    evaluations = 0
    began = time.perf_counter()
    for theta in grid:
        def equations(y, theta=theta):
            xl, xv = 1.0 + np.exp(np.clip(y, -700.0, 700.0))
            pl, pv = float(fluid.reduced_pressure(xl, theta)), float(fluid.reduced_pressure(xv, theta))
            # equal pressures, and equal chemical potentials written without ln P (so a liquid root
            # at negative pressure does not stop the solver): mu/RT = -ln(x - 1) - attraction + p x/theta
            # the pressure difference is scaled by the liquid's repulsive term, of order one
            return [(pl - pv) * (xl - 1.0) / theta,
                    _reduced_mu(fluid, xl, theta, pl) - _reduced_mu(fluid, xv, theta, pv)]
        try:
            solution, info, flag, _ = fsolve(equations, guess, full_output=True, xtol=1e-12)
        except (ValueError, OverflowError, ZeroDivisionError):
            break
        evaluations += int(info["nfev"])
        if flag != 1:
            break
        if abs(solution[1] - solution[0]) < 1e-6:
            trivial_at = float(theta)
            break
        solved += 1
        guess = solution
    seconds = time.perf_counter() - began
    x_c = fluid.family.z_c / fluid.family.omega_b
    last = 1.0 + np.exp(guess)
    # At T = Tc the only answer is v_l = v_v = v_c: a wide gap there means a converged-looking wrong point.
    gap_at_last = float((last[1] - last[0]) / x_c)
    return {"points_requested": points, "points_solved": solved, "highest_reduced_temperature": float(grid[solved - 1]) if solved else None,
            "slid_onto_trivial_at_reduced_temperature": trivial_at, "function_evaluations": evaluations,
            "seconds": seconds, "last_point_volume_gap_over_critical_volume": gap_at_last,
            "last_point_is_the_critical_point": bool(solved == points and abs(gap_at_last) < 1e-9)}


def _reduced_mu(fluid: CubicFluid, x: float, theta: float, p: float) -> float:
    f = fluid.family
    alpha, _ = fluid.alpha(theta)
    if f.delta1 == f.delta2:
        attraction = fluid.k * alpha / theta / (x + f.delta1)
    else:
        attraction = fluid.k * alpha / theta * math.log((x + f.delta1) / (x + f.delta2)) / (f.delta1 - f.delta2)
    return p * x / theta - math.log(x - 1.0) - attraction


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--fluid", default="propane")
    parser.add_argument("--repeat", type=int, default=20)
    args = parser.parse_args()
    for eos in ("vdw", "rk", "srk", "pr"):
        fluid = CubicFluid(lookup(args.fluid), family(eos))
        cold_times = cold(args.fluid, eos)
        seconds, result = warm(args.fluid, eos, args.repeat)
        points = len(result.points)
        stats = result.stats
        per_call = evaluation_cost(fluid)
        calls = int(stats["jacobian_evaluations"]) + int(stats.get("residual_evaluations", 0))
        record = {
            "case": f"saturation {args.fluid} {eos} continuation",
            "points": points,
            "newton_iterations_per_point": stats["newton_iterations"] / points,
            "jacobian_evaluations": stats["jacobian_evaluations"],
            "warm_seconds": seconds,
            "cold_first_curve_seconds": cold_times["first_curve_seconds"],
            "cold_import_seconds": cold_times["import_seconds"],
            "system_evaluation_seconds_per_call": per_call,
            "system_share_of_warm_time": min(1.0, calls * per_call / seconds),
            "reached_critical_point": result.success,
            "target_warm_seconds": 0.030,
        }
        print(json.dumps(record))
        natural = natural_stepping(fluid, points)
        natural["case"] = f"saturation {args.fluid} {eos} natural-parameter stepping with fsolve"
        print(json.dumps(natural))


if __name__ == "__main__":
    main()
