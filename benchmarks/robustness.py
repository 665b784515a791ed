"""Robustness of the phase envelope: seeded mixtures traced whole, their claims checked independently.

For each of ``--count`` seeded feeds (150 by default: lean and rich gases, gas condensates up to
n-decane, nitrogen-rich feeds with heavy ends, CO2-rich feeds; 2 to 13 components; SRK and PR; kij = 0
and small random kij) the envelope is traced from the dew point at 1 bar and checked by
``tests/envelope_checks.py`` (status, cricondenbar and cricondentherm the highest P and T traced,
critical point present, special points are their rows and in branch order, side labels change only
at the critical point, no row on the trivial K = 1 set, every row's residual re-evaluated).

Then the characterised set (``tests/envelope_checks.py``'s ``characterised_set``: five invented
laboratory analyses ending in a C7+ fraction, each characterised and traced with kij = 0 and with the
default kij, in PR and SRK), counted apart under ``"characterised"`` in the summary.

``--kernels`` runs the whole set in fresh processes under several BLAS / CPU kernel settings
(``OPENBLAS_CORETYPE`` and the ``NPY_DISABLE_CPU_FEATURES`` names this numpy build accepts), each
child printing the OpenBLAS core it really ran on, and with ``--perturb REL`` also with the start
pressure times (1 + REL); a case is kernel-independent when every run gives the same status and the
same critical point, cricondenbar and cricondentherm (T and P to 1e-7 relative).

Then the engine's own time per accepted step (trace time less the time inside the system's calls)
on ``tests/data/vdw_equal_area.toml``, the reduced van der Waals coexistence problem file.

Prints one JSON object per case (``--json``; a short line otherwise) and a final summary object.
Run: python benchmarks/robustness.py [--count N] [--seed S] [--json] [--kernels] [--perturb REL]
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import pathlib
import sys
import time


def _checks():
    """tests/envelope_checks.py, imported by its path (the checks are shared with the test suite)."""
    path = pathlib.Path(__file__).resolve().parents[1] / "tests" / "envelope_checks.py"
    spec = importlib.util.spec_from_file_location("envelope_checks", path)
    module = importlib.util.module_from_spec(spec)
    sys.modules["envelope_checks"] = module
    spec.loader.exec_module(module)
    return module


checks = _checks()


def _show(record: dict, as_json: bool) -> None:
    if as_json:
        print(json.dumps(record), flush=True)
        return
    mark = "ok" if record["consistent"] else ",".join(record["failed"])
    extra = "" if record.get("kernel_independent", True) else "  KERNEL-DEPENDENT: " + "; ".join(
        f"{name}: {', '.join(found)}" for name, found in record["differences"].items())
    print(f"{record['case']} {record['family']:15s} {record['eos']:3s} N={len(record['components']):2d} "
          f"{record['status']:20s} {record['seconds']:7.3f} s  {mark}{extra}", flush=True)


def engine_overhead(repeat: int = 100) -> dict:
    """The engine's own time per accepted step on tests/data/vdw_equal_area.toml: the trace's wall
    time less the time spent inside the system's residual and derivative calls, over the accepted
    steps (best of ``repeat`` traces; the compiled system is built once, before timing)."""
    import contin

    problem = contin.load_problem(pathlib.Path(__file__).resolve().parents[1] / "tests" / "data" / "vdw_equal_area.toml")
    system = problem.system
    inside = {"seconds": 0.0, "depth": 0}

    def timed(method):
        def call(*args, **kwargs):
            inside["depth"] += 1
            began = time.perf_counter()
            try:
                return method(*args, **kwargs)
            finally:
                inside["depth"] -= 1
                if inside["depth"] == 0:
                    inside["seconds"] += time.perf_counter() - began
        return call

    for name in ("residual", "linearise", "evaluate", "jacobian", "parameter_jacobian"):
        if callable(getattr(system, name, None)):
            setattr(system, name, timed(getattr(system, name)))
    best = None
    for _ in range(repeat):
        inside["seconds"] = 0.0
        began = time.perf_counter()
        branch = contin.run_problem(problem)
        wall = time.perf_counter() - began
        steps = max(1, branch.stats["accepted_steps"])
        result = {"wall": wall, "system": inside["seconds"], "steps": steps, "branch": branch}
        if best is None or wall - inside["seconds"] < best["wall"] - best["system"]:
            best = result
    branch = best["branch"]
    T = branch.points[:, list(branch.columns).index("T")]
    return {"case": "engine overhead per accepted step, vdW equal-area problem file",
            "status": branch.status.label, "accepted_steps": best["steps"],
            "rejected_steps": branch.stats["rejected_steps"], "points": len(branch.points),
            "largest_T": float(T.max()), "requested_T_returned": len(branch.at),
            "special_points": [sp.kind for sp in branch.special_points],
            "trace_seconds": round(best["wall"], 6), "system_seconds": round(best["system"], 6),
            "overhead_per_step_us": round(1e6 * (best["wall"] - best["system"]) / best["steps"], 1),
            "wall_per_step_us": round(1e6 * best["wall"] / best["steps"], 1), "repeat": repeat}


def _counts(records) -> dict:
    failures = {}
    for record in records:
        for name in record["failed"]:
            failures[name] = failures.get(name, 0) + 1
    return {"tried": len(records), "complete": sum(r["complete"] for r in records),
            "consistent": sum(r["consistent"] for r in records), "failed_checks": dict(sorted(failures.items()))}


def main() -> None:
    from contin_thermo import CAUTION

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=150, help="number of seeded mixtures (default 150)")
    parser.add_argument("--seed", type=int, default=2026, help="seed of the mixture set (default 2026)")
    parser.add_argument("--json", action="store_true", help="one JSON object per case and for the summary")
    parser.add_argument("--kernels", action="store_true", help="also run under several BLAS/CPU kernel settings")
    parser.add_argument("--perturb", type=float, default=0.0,
                        help="relative change of the start pressure (with --kernels: an extra run)")
    args = parser.parse_args()
    if args.count < 1:
        parser.error(f"--count {args.count} must be at least 1")
    began = time.perf_counter()
    summary = {"summary": True, "seed": args.seed}
    if not args.kernels:
        records = []
        for case in checks.benchmark_set(args.count, args.seed):
            record = checks.run_case(case, perturb=args.perturb)
            records.append(record)
            _show(record, args.json)
        summary.update(_counts(records), perturb=args.perturb, blas=checks.blas_info())
        characterised = []
        for case in checks.characterised_set():
            record = checks.run_case(case, perturb=args.perturb)
            characterised.append(record)
            _show(record, args.json)
        summary["characterised"] = _counts(characterised)
    else:
        settings = checks.kernel_settings()
        runs = []  # (setting name, child's blas info, records)
        for name, environment in settings:
            t = time.perf_counter()
            info, records = checks.run_in_subprocess("benchmark", environment, count=args.count, seed=args.seed)
            runs.append((name, info, records, time.perf_counter() - t))
            print(json.dumps({"setting": name, "blas": info, **_counts(records),
                              "seconds": round(time.perf_counter() - t, 2)}), flush=True)
        if args.perturb:
            t = time.perf_counter()
            name = f"default, start pressure x (1 + {args.perturb:g})"
            info, records = checks.run_in_subprocess("benchmark", {}, count=args.count, seed=args.seed,
                                                     perturb=args.perturb)
            runs.append((name, info, records, time.perf_counter() - t))
            print(json.dumps({"setting": name, "blas": info, **_counts(records),
                              "seconds": round(time.perf_counter() - t, 2)}), flush=True)
        reference = runs[0][2]
        independent = 0
        for k, record in enumerate(reference):
            found = {}
            for name, _, records, _ in runs[1:]:
                difference = checks.differences(record["outcome"], records[k]["outcome"])
                if difference:
                    found[name] = difference
            record["kernel_independent"] = not found
            record["differences"] = found
            record["consistent_in_every_setting"] = all(records[k]["consistent"] for _, _, records, _ in runs)
            independent += not found
            _show(record, args.json)
        distinct = sorted({" / ".join(info["blas_cores"]) + " | numpy " + ",".join(info["numpy_dispatch_active"])
                           for _, info, _, _ in runs})
        summary.update(_counts(reference), kernel_independent=independent,
                       consistent_in_every_setting=sum(r["consistent_in_every_setting"] for r in reference),
                       settings=[{"setting": name, "blas_cores": info["blas_cores"],
                                  "numpy_dispatch_active": info["numpy_dispatch_active"], **_counts(records),
                                  "seconds": round(seconds, 2)} for name, info, records, seconds in runs],
                       distinct_kernel_configurations=len(distinct), perturb=args.perturb)
    overhead = engine_overhead()
    print(json.dumps(overhead) if args.json else "engine: " + json.dumps(overhead), flush=True)
    summary["engine_overhead_per_step_us"] = overhead["overhead_per_step_us"]
    summary["wall_seconds"] = round(time.perf_counter() - began, 2)
    summary["caution"] = CAUTION
    print(json.dumps(summary) if args.json else "summary: " + json.dumps(summary), flush=True)


if __name__ == "__main__":
    main()
