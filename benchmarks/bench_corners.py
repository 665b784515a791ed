"""Corner loci and sensitivities of a 10-component envelope; one JSON object per case on stdout.

Case 1 (issue 13): the kij loci of the critical point, cricondenbar and cricondentherm over a range,
against 25 separate envelopes at evenly spaced values of kij (the equivalent sequence of one-parameter
traces): wall time, points, Jacobian evaluations, and the largest relative difference between the
loci and the separate envelopes' corners at those 25 values. The three envelopes the loci draw at the
ends and the middle are timed apart (they are for the picture, not for the loci).

Case 2 (issue 14): the cost of sensitivities to 10 constants relative to the envelope alone: to the
trace without the stability check (median of five) and to the envelope as ``contin thermo envelope``
computes it, with the tangent-plane test at every row (median of three).

The feed is an invented gas condensate (demo data). Run: ``python benchmarks/bench_corners.py``.
"""

from __future__ import annotations

import json
import statistics
import time

import numpy as np

from contin_thermo.curves._corner_loci import corner_loci, envelope_corners
from contin_thermo.curves._corner_sensitivity import envelope_sensitivities
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.models._parameters import parse_parameter, parse_parameters, perturbed

NAMES = ["methane", "ethane", "propane", "n-butane", "n-pentane", "n-hexane", "n-heptane", "n-octane",
         "nitrogen", "carbon dioxide"]
SPAN = (0.0, 0.06)
PAIR = "kij:methane-n-heptane"
CONSTANTS = ("kij:methane-n-heptane,kij:methane-n-octane,Tc:methane,Tc:n-heptane,Pc:methane,Pc:n-octane,"
             "omega:n-heptane,omega:n-octane,z:ethane,z:n-hexane")


def _feed():
    z = np.linspace(2.0, 0.2, len(NAMES)) ** 3
    return z / z.sum()


def loci_case(mixture, z) -> dict:
    parameter = parse_parameter(PAIR, mixture.names)
    values = np.linspace(*SPAN, 25)
    corner_loci(mixture, z, parameter, SPAN, pictured=False)  # warm up the compiled functions
    began = time.perf_counter()
    loci = corner_loci(mixture, z, parameter, SPAN, at=values[1:-1], pictured=False)
    loci_seconds = time.perf_counter() - began  # the start envelope and the three loci
    traces = sum(locus.stats.get("trace_seconds", 0.0) for locus in loci.loci.values())
    began = time.perf_counter()
    corner_loci(mixture, z, parameter, SPAN)
    with_picture = time.perf_counter() - began
    began = time.perf_counter()
    separate = [trace_envelope(*perturbed(mixture, z, parameter, q), check_stability=False) for q in values]
    separate_seconds = time.perf_counter() - began
    worst = 0.0
    for corner, locus in loci.loci.items():
        rows = [locus.rows[0], *locus.stats["at"], locus.rows[-1]]
        for row, envelope in zip(rows, separate):
            T, P = envelope_corners(envelope)[corner]
            worst = max(worst, abs(row[1] / T - 1), abs(row[2] / P - 1))
    return {"case": f"kij loci, N={len(NAMES)}", "status": {c: locus.status for c, locus in loci.loci.items()},
            "loci_seconds": round(loci_seconds, 4), "of_which_start_envelope_seconds": round(loci_seconds - traces, 4),
            "loci_with_pictured_envelopes_seconds": round(with_picture, 4),
            "loci_points": {c: len(locus.rows) for c, locus in loci.loci.items()},
            "loci_jacobian_evaluations": {c: locus.stats.get("jacobian_evaluations") for c, locus in loci.loci.items()},
            "separate_envelopes": len(values), "separate_seconds": round(separate_seconds, 4),
            "separate_jacobian_evaluations": int(sum(e.stats["jacobian_evaluations"] for e in separate)),
            "speed_up": round(separate_seconds / loci_seconds, 2),
            "speed_up_with_pictured_envelopes": round(separate_seconds / with_picture, 2),
            "largest_relative_difference": float(f"{worst:.3g}")}


def sensitivity_case(mixture, z) -> dict:
    parameters = parse_parameters(CONSTANTS, mixture.names)
    envelope = trace_envelope(mixture, z, check_stability=False)
    envelope_sensitivities(envelope, parameters)  # warm up
    traces, extras = [], []
    for _ in range(5):
        began = time.perf_counter()
        envelope = trace_envelope(mixture, z, check_stability=False)
        traces.append(time.perf_counter() - began)
        began = time.perf_counter()
        envelope_sensitivities(envelope, parameters)
        extras.append(time.perf_counter() - began)
    checked = []
    for _ in range(3):
        began = time.perf_counter()
        trace_envelope(mixture, z, check_stability=True)
        checked.append(time.perf_counter() - began)
    trace, extra, full = statistics.median(traces), statistics.median(extras), statistics.median(checked)
    return {"case": f"sensitivities to 10 constants, N={len(NAMES)}", "envelope_points": len(envelope.rows),
            "envelope_trace_seconds": round(trace, 4), "envelope_with_stability_seconds": round(full, 4),
            "sensitivities_seconds": round(extra, 4), "extra_percent_of_trace": round(100 * extra / trace, 1),
            "extra_percent_of_envelope_with_stability": round(100 * extra / full, 1)}


def main() -> None:
    mixture = Mixture(tuple(lookup(name) for name in NAMES), family("pr"))
    z = _feed()
    print(json.dumps(loci_case(mixture, z)), flush=True)
    print(json.dumps(sensitivity_case(mixture, z)), flush=True)


if __name__ == "__main__":
    main()
