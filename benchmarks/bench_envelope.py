"""Envelope benchmark: N = 2, 5, 10, 20 components; one JSON object per case on stdout.

Cold: a fresh Python process (nothing compiled or cached) imports, builds and traces once.
Warm: the same trace again in that process (median and best of five). The stability check of every
traced point is timed separately.
Compositions are invented gas blends (demo data).
"""

import json
import subprocess
import sys

CHILD = r"""
import json, time, sys
began = time.perf_counter()
import numpy as np
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.curves._envelope import trace_envelope
n = int(sys.argv[1])
# Components of a gas condensate, lightest first; the heaviest get the smallest fractions. Helium and
# hydrogen are left out on purpose: dissolved in a liquid they give no low-pressure bubble point (the
# bubble curve rises to GPa pressures), so such a feed has no complete envelope to time.
names = ["methane", "ethane", "propane", "n-butane", "n-pentane", "n-hexane", "n-heptane", "n-octane",
         "nitrogen", "carbon dioxide", "isobutane", "n-decane", "isopentane", "n-nonane", "hydrogen sulfide",
         "benzene", "cyclohexane", "toluene", "n-dodecane", "argon"][:n]
z = np.linspace(2.0, 0.2, n) ** 3
z /= z.sum()
mixture = Mixture(tuple(lookup(x) for x in names), family("pr"))
envelope = trace_envelope(mixture, z, check_stability=False)
cold = time.perf_counter() - began
times = []
for _ in range(5):
    t = time.perf_counter()
    warm = trace_envelope(mixture, z, check_stability=False)
    times.append(time.perf_counter() - t)
warm_seconds = sorted(times)[2]  # median of five warm traces
t = time.perf_counter()
trace_envelope(mixture, z, check_stability=True)
stability = time.perf_counter() - t - warm_seconds
print(json.dumps({"case": f"envelope N={n}", "components": n, "status": warm.status, "cold_seconds": round(cold, 4),
                  "warm_trace_seconds": round(warm_seconds, 4),
                  "warm_best_seconds": round(min(times), 4), "points": warm.stats["points"],
                  "jacobian_evaluations_per_point": round(warm.stats["jacobian_evaluations_per_point"], 3),
                  "stability_seconds": round(stability, 4),
                  "special_points": sorted(sp["kind"] for sp in warm.special_points)}))
"""

for n in (2, 5, 10, 20):
    result = subprocess.run([sys.executable, "-c", CHILD, str(n)], capture_output=True, text=True)
    line = result.stdout.strip().splitlines()[-1] if result.stdout.strip() else json.dumps(
        {"case": f"envelope N={n}", "error": result.stderr.strip().splitlines()[-1:]})
    print(line, flush=True)
