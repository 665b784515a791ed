"""Set-up time (cold and cached) and evaluation time of symbolic systems, for each back end.

Families:
- ``chain``: a sparse chain (a finite-difference reaction-diffusion row, three unknowns per equation),
  n = 2, 10, 50, 200;
- ``dense``: every equation involves every unknown (sums over all pairs), n = 5, 10, 20;
- ``envelope10``: 12 equations in 12 unknowns sized like a 10-component cubic-equation-of-state
  phase-envelope system (log K for each component, temperature, pressure), with mixing sums over all
  component pairs, logs and rationals in each equation. Its numbers mean nothing physical.

Prints one JSON object per case and back end: set-up seconds with an empty cache ("cold"), set-up
seconds read back from the disk cache in a fresh cache object ("cached"), and microseconds per
residual + Jacobian evaluation (``linearise``) and per residual.

Usage: python benchmarks/bench_symbolic.py [--quick] [--backend sympy|symengine]
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time

import numpy as np

from contin.systems._cache import CompileCache
from contin.systems._symbolic import SymbolicSystem, symengine_available


def chain(n: int) -> tuple[dict, dict, dict]:
    h2 = 1.0 / (n + 1) ** 2
    equations = {}
    for i in range(n):
        left = f"u{i - 1}" if i > 0 else "0"
        right = f"u{i + 1}" if i < n - 1 else "0"
        equations[f"node{i}"] = f"({left} - 2*u{i} + {right}) + {h2!r}*lam*exp(u{i})"
    return equations, {f"u{i}": 0.0 for i in range(n)}, {"lam": 1.0}


def dense(n: int) -> tuple[dict, dict, dict]:
    equations = {}
    for i in range(n):
        terms = " + ".join(f"{1.0 / (1 + i + j)!r}*u{j}**2/(1 + u{j}**2)" for j in range(n))
        equations[f"row{i}"] = f"u{i} - lam*log(1 + {terms})"
    return equations, {f"u{i}": 0.1 for i in range(n)}, {"lam": 0.5}


def envelope(components: int = 10) -> tuple[dict, dict, dict]:
    rng = np.random.default_rng(7)
    tc = rng.uniform(150.0, 600.0, components)
    ac = rng.uniform(0.5, 5.0, components)
    bc = rng.uniform(2e-5, 2e-4, components)
    m = rng.uniform(0.4, 1.2, components)
    z = rng.dirichlet(np.ones(components))
    k = np.round(rng.uniform(0.0, 0.1, (components, components)), 3)
    k = (k + k.T) / 2
    constants = {f"z{i}": float(z[i]) for i in range(components)}
    for i in range(components):
        constants.update({f"tc{i}": float(tc[i]), f"ac{i}": float(ac[i]), f"b{i}": float(bc[i]), f"m{i}": float(m[i])})
    alpha = {i: f"ac{i}*(1 + m{i}*(1 - sqrt(T/tc{i})))**2" for i in range(components)}
    x = {i: f"z{i}" for i in range(components)}
    y = {i: f"z{i}*exp(lnK{i})" for i in range(components)}

    def mixture(frac):
        am = " + ".join(
            f"{frac[i]}*{frac[j]}*sqrt(({alpha[i]})*({alpha[j]}))*{float(1 - k[i, j])!r}"
            for i in range(components) for j in range(components)
        )
        bm = " + ".join(f"{frac[i]}*b{i}" for i in range(components))
        return f"({am})", f"({bm})"

    def log_fugacity(i, frac):
        am, bm = mixture(frac)
        sum_a = " + ".join(
            f"{frac[j]}*sqrt(({alpha[i]})*({alpha[j]}))*{float(1 - k[i, j])!r}" for j in range(components)
        )
        beta = f"(P*{bm}/(8.314*T))"
        return (
            f"(b{i}/{bm}*({beta} - 1) - log(1 + {beta}) - {am}/({bm}*8.314*T)*(2*({sum_a})/{am} - b{i}/{bm})"
            f"*log(1 + 2*{beta}))"
        )

    equations = {f"iso{i}": f"lnK{i} + {log_fugacity(i, y)} - {log_fugacity(i, x)}" for i in range(components)}
    equations["sum"] = " + ".join(f"{y[i]} - {x[i]}" for i in range(components))
    equations["spec"] = "log(P) - s"
    unknowns = {f"lnK{i}": 0.1 for i in range(components)}
    unknowns.update({"T": 300.0, "P": 1e6})
    return equations, unknowns, {"s": float(np.log(1e6))}, constants


def measure(family: str, size: int, build, backend: str, repeats: int) -> dict:
    parts = build(size) if size else build()
    equations, unknowns, parameters = parts[:3]
    constants = parts[3] if len(parts) > 3 else None
    with tempfile.TemporaryDirectory() as folder:
        cold_began = time.perf_counter()
        system = SymbolicSystem(equations, unknowns, parameters, constants, backend=backend, cache=CompileCache(folder))
        cold = time.perf_counter() - cold_began
        cached_began = time.perf_counter()
        again = SymbolicSystem(equations, unknowns, parameters, constants, backend=backend, cache=CompileCache(folder))
        cached = time.perf_counter() - cached_began
        assert again.cache_source == "disk"
    u = np.array(list(unknowns.values()), dtype=float)
    p = np.array(list(parameters.values()), dtype=float)
    timings = {}
    for name, call in (("linearise", lambda: system.linearise(u, p, 0)), ("residual", lambda: system.residual(u, p))):
        call()
        loops = max(1, repeats // max(1, len(u) // 10))
        best = float("inf")
        for _ in range(5):
            began = time.perf_counter()
            for _ in range(loops):
                call()
            best = min(best, (time.perf_counter() - began) / loops)
        timings[name] = best * 1e6
    return {
        "case": f"{family}{size or ''}",
        "family": family,
        "unknowns": len(unknowns),
        "backend": backend,
        "jacobian_nonzeros": system.structure.nonzeros,
        "setup_cold_seconds": round(cold, 4),
        "setup_cached_seconds": round(cached, 4),
        "linearise_microseconds": round(timings["linearise"], 2),
        "residual_microseconds": round(timings["residual"], 2),
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small cases only (a smoke run)")
    parser.add_argument("--backend", choices=("sympy", "symengine"), action="append", help="back end(s) to measure")
    options = parser.parse_args(argv)
    backends = options.backend or (["symengine", "sympy"] if symengine_available() else ["sympy"])
    cases = [("chain", n, chain) for n in (2, 10, 50, 200)] + [("dense", n, dense) for n in (5, 10, 20)]
    cases.append(("envelope", 0, envelope))
    if options.quick:
        cases = [("chain", 2, chain), ("chain", 10, chain), ("dense", 5, dense)]
    os.environ.pop("CONTIN_SYMBOLIC_BACKEND", None)
    for backend in backends:
        for family, size, build in cases:
            print(json.dumps(measure(family, size, build, backend, repeats=2000)), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
