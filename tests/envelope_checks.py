"""What a traced phase envelope claims, checked independently of the tracer, and the seeded mixtures.

Shared by ``tests/test_envelope_robustness.py``, ``tests/test_round_off.py`` and
``benchmarks/robustness.py`` (which imports this file by its path). Everything here goes through the
public API (``contin_thermo.mixture``, ``contin_thermo.trace_envelope``, the ``Envelope`` fields)
except the residual, which is re-evaluated with ``contin_thermo.curves._envelope.EnvelopeSystem``.

Two seeded sets of invented feeds (demo data, not published mixtures):

* :func:`robustness_set` -- the 54 feeds of the test suite (natural gas, gas condensate, CO2-rich);
* :func:`benchmark_set` -- 150 feeds by default in five families (lean gas, rich gas, gas condensate
  up to n-decane, nitrogen-rich with heavy ends, CO2-rich), 2 to 13 components, SRK and PR, with kij
  = 0 and with small random kij for some pairs.

Run as a script, this file traces a set in the current process and prints one JSON object per case
(the child of the kernel comparisons; see :func:`run_in_subprocess`)::

    python tests/envelope_checks.py --set benchmark --count 150 --seed 2026 [--ids 0,5] [--perturb 1e-9]
"""

from __future__ import annotations

import argparse
import ctypes
import json
import math
import os
import subprocess
import sys
import time
from dataclasses import dataclass

import numpy as np

ORDER = ["nitrogen", "methane", "carbon dioxide", "ethane", "hydrogen sulfide", "propane", "isobutane", "n-butane",
         "isopentane", "n-pentane", "n-hexane", "n-heptane", "n-octane", "n-nonane", "n-decane"]
HYDROCARBONS = ["ethane", "propane", "isobutane", "n-butane", "isopentane", "n-pentane", "n-hexane", "n-heptane",
                "n-octane", "n-nonane", "n-decane"]
HEAVY = ["n-heptane", "n-octane", "n-nonane", "n-decane"]
INERTS = ["nitrogen", "carbon dioxide", "hydrogen sulfide"]

#: Pressure (Pa) of the low-pressure dew point where every trace starts and ends.
START_PRESSURE = 1e5
#: Largest residual (absolute, the envelope system's own scaling) accepted at a row.
RESIDUAL_TOLERANCE = 1e-9
#: A row whose |ln K| are all at most this sits on the trivial solution K = 1.
TRIVIAL = 1e-7
#: Relative slack of "the cricondenbar is the highest pressure traced" (and T for the cricondentherm).
EXTREMUM_SLACK = 1e-9
#: Relative agreement of a special point's values with its row.
ROW_MATCH = 1e-12
#: Relative agreement of special points between kernel settings and perturbed starts.
SAME = 1e-7
KINDS = ("critical", "cricondenbar", "cricondentherm")


@dataclass(frozen=True)
class Case:
    """One feed: ``ident`` names it in the output; ``kij`` is a tuple of rows, None for zeros, or
    ``"defaults"`` (the default table); ``plus`` is a plus fraction ``(z, molar mass, specific
    gravity)`` that ends the analysis, characterised by the defaults of contin_thermo's characterise."""

    ident: str
    kind: str
    names: tuple
    z: tuple
    eos: str
    kij: tuple | str | None = None
    plus: tuple | None = None

    def build(self):
        """(mixture, z) through the public API (a plus fraction characterised first)."""
        import contin_thermo

        if self.plus is not None:
            from contin_thermo.models._characterise import characterise

            result = characterise([*zip(self.names, self.z), ("C7+", *self.plus)])
            return result.mixture(self.eos, kij=self.kij), np.array(result.z, dtype=float)
        kij = None if self.kij is None else np.array(self.kij, dtype=float)
        return contin_thermo.mixture(list(self.names), self.eos, kij=kij), np.array(self.z, dtype=float)

    def describe(self) -> dict:
        if isinstance(self.kij, str) or self.kij is None:
            pairs = self.kij or 0
        else:
            pairs = int(np.count_nonzero(np.triu(np.array(self.kij))))
        described = {"case": self.ident, "family": self.kind, "components": list(self.names), "eos": self.eos,
                     "kij_pairs": pairs}
        if self.plus is not None:
            described["plus"] = {"z": self.plus[0], "molar_mass": self.plus[1], "specific_gravity": self.plus[2]}
        return described


def robustness_set(count: int = 54, seed: int = 5) -> list[Case]:
    """The test suite's feeds, in a fixed order: natural-gas-like (methane 75-92 %, a light tail to
    n-heptane), gas-condensate-like (methane 55-75 %, a tail to n-decane) and CO2-rich (CO2 55-90 %),
    3 to 15 components, each hydrocarbon's fraction falling off along the series as in a gas analysis,
    nitrogen capped at 4 %; PR for even, SRK for odd positions; kij = 0."""
    rng = np.random.default_rng(seed)
    out = []
    for k in range(count):
        kind = ("natural gas", "gas condensate", "CO2-rich")[k % 3]
        size = int(rng.integers(3, 16))
        inerts = ["methane", "nitrogen", "hydrogen sulfide"] if kind == "CO2-rich" else INERTS
        lead = "carbon dioxide" if kind == "CO2-rich" else "methane"
        decay = {"natural gas": 0.55, "gas condensate": 0.80, "CO2-rich": 0.6}[kind]
        pool = HYDROCARBONS if kind == "gas condensate" else HYDROCARBONS[:7]
        size = min(size, len(pool) + len(inerts) + 1)
        others = sorted(rng.choice(pool + inerts, size=size - 1, replace=False), key=ORDER.index)
        weights = np.array([decay ** HYDROCARBONS.index(name) * rng.uniform(0.3, 1.0) if name in HYDROCARBONS
                            else rng.uniform(0.02, 0.2) for name in others])
        lead_fraction = {"natural gas": rng.uniform(0.75, 0.92), "gas condensate": rng.uniform(0.55, 0.75),
                         "CO2-rich": rng.uniform(0.55, 0.90)}[kind]
        fractions = dict(zip((str(x) for x in others), weights / weights.sum() * (1 - lead_fraction)))
        fractions[lead] = lead_fraction
        if "nitrogen" in fractions:
            fractions["nitrogen"] = min(fractions["nitrogen"], 0.04)
        out.append(_case(f"r{k:02d}", kind, fractions, "pr" if k % 2 == 0 else "srk"))
    return out


# Families of the benchmark set: (lead component, range of its fraction, decay of the hydrocarbon
# tail along the series, the hydrocarbon pool, the inerts that may join).
FAMILIES = {
    "lean gas": ("methane", (0.85, 0.97), 0.40, HYDROCARBONS[:6], INERTS),
    "rich gas": ("methane", (0.65, 0.82), 0.65, HYDROCARBONS[:8], INERTS),
    "gas condensate": ("methane", (0.55, 0.75), 0.80, HYDROCARBONS, INERTS),
    "nitrogen-rich": ("nitrogen", (0.10, 0.45), 0.75, HYDROCARBONS, ["methane", "carbon dioxide"]),
    "CO2-rich": ("carbon dioxide", (0.55, 0.92), 0.60, HYDROCARBONS, ["methane", "nitrogen", "hydrogen sulfide"]),
}


def benchmark_set(count: int = 150, seed: int = 2026) -> list[Case]:
    """``count`` seeded feeds cycling through the five :data:`FAMILIES`, PR and SRK alternating, kij
    = 0 in blocks of ten and small random kij in the blocks between; 2 to 13 components.

    The nitrogen-rich feeds always hold methane (as second component) and one to three heavy ends
    (n-heptane to n-decane, 0.3-3 % together); the gas condensates always reach n-octane or heavier.
    kij, where used: 0-0.12 for pairs of an inert with a hydrocarbon, 0-0.05 for methane with a
    heptane or heavier, -0.01-0.03 for a third of the remaining pairs, zero for the rest."""
    rng = np.random.default_rng(seed)
    out = []
    kinds = list(FAMILIES)
    for k in range(count):
        kind = kinds[(k // 2) % len(kinds)]
        lead, (low, high), decay, pool, inerts = FAMILIES[kind]
        size = int(rng.integers(2, 14))
        fixed = {lead: rng.uniform(low, high)}
        must = []
        if kind == "nitrogen-rich":
            size = max(size, 3)
            heavy = sorted(rng.choice(HEAVY, size=int(rng.integers(1, 4)), replace=False), key=ORDER.index)
            heavy = heavy[:size - 2]
            share = rng.uniform(0.003, 0.03) * rng.dirichlet(np.ones(len(heavy)))
            fixed.update({str(name): float(s) for name, s in zip(heavy, share)})
            fixed["methane"] = (1 - sum(fixed.values())) * rng.uniform(0.55, 0.9)
        elif kind == "gas condensate":
            must = [str(rng.choice(HEAVY[1:]))]
        choices = [name for name in pool + inerts if name not in fixed and name not in must]
        free = min(size - len(fixed) - len(must), len(choices))
        others = [str(x) for x in rng.choice(choices, size=max(free, 0), replace=False)] + must
        others = sorted(others, key=ORDER.index)
        weights = np.array([decay ** HYDROCARBONS.index(name) * rng.uniform(0.3, 1.0) if name in HYDROCARBONS
                            else rng.uniform(0.02, 0.2) for name in others])
        rest = 1 - sum(fixed.values())
        fractions = dict(fixed)
        if others:
            fractions.update(zip(others, weights / weights.sum() * rest))
        else:
            fractions[lead] += rest
        if kind != "nitrogen-rich" and "nitrogen" in fractions:
            fractions["nitrogen"] = min(fractions["nitrogen"], 0.04)
        with_kij = (k // 10) % 2 == 1
        case = _case(f"m{k:03d}", kind, fractions, "pr" if k % 2 == 0 else "srk")
        if with_kij:
            case = Case(case.ident, case.kind, case.names, case.z, case.eos, _random_kij(case.names, rng))
        out.append(case)
    return out


# Invented laboratory analyses ending in a heptanes-plus fraction (demo data, not published samples):
# a lean and a rich gas, two gas condensates, an oil-like feed, a CO2-rich stream. Each is traced with
# kij = 0 and with the default kij, in PR and SRK.
ANALYSES = {
    "lean gas + C7+": ({"nitrogen": 0.012, "carbon dioxide": 0.015, "methane": 0.880, "ethane": 0.050,
                        "propane": 0.022, "n-butane": 0.010, "n-pentane": 0.004, "n-hexane": 0.002},
                       (0.005, 105.0, 0.735)),
    "rich gas + C7+": ({"nitrogen": 0.011, "carbon dioxide": 0.021, "methane": 0.731, "ethane": 0.096,
                        "propane": 0.058, "isobutane": 0.013, "n-butane": 0.022, "isopentane": 0.009,
                        "n-pentane": 0.010, "n-hexane": 0.012}, (0.017, 110.0, 0.745)),
    "gas condensate + C7+": ({"nitrogen": 0.005, "carbon dioxide": 0.030, "methane": 0.700, "ethane": 0.080,
                              "propane": 0.045, "n-butane": 0.030, "n-pentane": 0.020, "n-hexane": 0.015},
                             (0.075, 150.0, 0.790)),
    "heavy condensate + C7+": ({"carbon dioxide": 0.020, "methane": 0.650, "ethane": 0.090, "propane": 0.060,
                                "n-butane": 0.040, "n-pentane": 0.025, "n-hexane": 0.020}, (0.095, 190.0, 0.820)),
    "CO2-rich + C7+": ({"nitrogen": 0.010, "carbon dioxide": 0.800, "methane": 0.150, "ethane": 0.020,
                        "propane": 0.010}, (0.010, 120.0, 0.760)),
}


def characterised_set() -> list[Case]:
    """The :data:`ANALYSES`, each with kij none and defaults, PR and SRK: 20 characterised feeds."""
    out = []
    for k, (kind, (explicit, plus)) in enumerate(ANALYSES.items()):
        for eos in ("pr", "srk"):
            for kij in (None, "defaults"):
                ident = f"c{k}{eos[0]}{'d' if kij else '0'}"
                out.append(Case(ident, kind, tuple(explicit), tuple(explicit.values()), eos, kij, plus))
    return out


def _case(ident, kind, fractions, eos) -> Case:
    names = sorted(fractions, key=ORDER.index)
    total = sum(fractions.values())
    return Case(ident, kind, tuple(names), tuple(float(fractions[name] / total) for name in names), eos)


def _random_kij(names, rng) -> tuple:
    n = len(names)
    kij = np.zeros((n, n))
    for i in range(n):
        for j in range(i + 1, n):
            a, b = names[i], names[j]
            if (a in INERTS) != (b in INERTS):
                value = rng.uniform(0.0, 0.12)
            elif {a, b} & {"methane"} and {a, b} & set(HEAVY):
                value = rng.uniform(0.0, 0.05)
            elif rng.random() < 1 / 3:
                value = rng.uniform(-0.01, 0.03)
            else:
                continue
            kij[i, j] = kij[j, i] = round(float(value), 4)
    return tuple(tuple(float(v) for v in row) for row in kij)


# -- the checks -----------------------------------------------------------------------------------
def row_residual(system, row, z) -> float:
    """Largest |residual| of the envelope system at one row (T, P, side, v_feed, v_incipient, stable, K...)."""
    T, P, v_feed, v_incipient = row[0], row[1], row[3], row[4]
    lnK = np.log(np.array(row[6:], dtype=float))
    w_total = float(np.exp(lnK) @ z)
    u = np.concatenate([lnK, [math.log(T), math.log(v_feed), math.log(v_incipient * w_total)]])
    return float(np.max(np.abs(system.evaluate(u, math.log(P), with_jacobian=False)[0])))


def check_envelope(envelope, z, *, start_pressure: float = START_PRESSURE,
                   extremum_slack: float = EXTREMUM_SLACK, residuals: bool = True) -> dict:
    """The claims of ``envelope`` that do not hold: check name -> what was found (empty when all hold).

    Checks: the status is a success; the first row is a dew point and the last a bubble point at the
    start pressure; critical point, cricondenbar and cricondentherm are present; the cricondenbar's P
    is at least the largest P of any row (1 - ``extremum_slack``), the cricondentherm's T likewise;
    every special point's ``index`` row holds exactly its T and P (relative 1e-12); the special points
    are listed in branch order (non-decreasing index); the dew/bubble label changes once, at the
    critical point's row (rows after it may be liquid-liquid); no row but the critical point's has all |ln K| <= 1e-7; with ``residuals``, every
    row's residual, re-evaluated here, is at most 1e-9.
    """
    from contin_thermo.curves._envelope import EnvelopeSystem

    failed = {}
    rows = envelope.rows
    if not envelope.success:
        failed["status_success"] = f"{envelope.status}: {envelope.message}"
    if not rows:
        failed["rows_present"] = "no rows"
        return failed
    T, P = envelope.column("T"), envelope.column("P")
    sides = [str(s) for s in envelope.column("side")]
    if not (sides[0] == "dew" and math.isclose(P[0], start_pressure, rel_tol=1e-9)):
        failed["starts_at_dew_point"] = f"first row {sides[0]} at P = {P[0]!r}"
    if not (sides[-1] == "bubble" and math.isclose(P[-1], start_pressure, rel_tol=1e-9)):
        failed["ends_at_bubble_point"] = f"last row {sides[-1]} at P = {P[-1]!r}"
    special = {kind: envelope.special(kind) for kind in KINDS}
    for kind in KINDS:
        if special[kind] is None:
            failed[f"{kind}_present"] = "missing"
    for kind, column, values in (("cricondenbar", "P", P), ("cricondentherm", "T", T)):
        if envelope.status == "open_envelope":
            break  # the branch runs on to a bound: no highest pressure or temperature to compare with
        sp = special[kind]
        if sp is not None and sp["values"][column] < values.max() * (1 - extremum_slack):
            failed[f"{kind}_is_highest_{column}"] = (f"{column} = {sp['values'][column]!r} below row "
                                                    f"{int(values.argmax())} at {values.max()!r}")
    wrong_rows = []
    for sp in envelope.special_points:
        i = sp["index"]
        if not (0 <= i < len(rows) and math.isclose(rows[i][0], sp["values"]["T"], rel_tol=ROW_MATCH)
                and math.isclose(rows[i][1], sp["values"]["P"], rel_tol=ROW_MATCH)):
            held = (rows[i][0], rows[i][1]) if 0 <= i < len(rows) else "no such row"
            wrong_rows.append(f"{sp['kind']} index {i}: T, P = {sp['values']['T']!r}, {sp['values']['P']!r}; "
                              f"row holds {held}")
    if wrong_rows:
        failed["special_point_is_its_row"] = "; ".join(wrong_rows)
    indices = [sp["index"] for sp in envelope.special_points]
    if indices != sorted(indices):
        failed["special_points_in_branch_order"] = ", ".join(
            f"{sp['kind']}@{sp['index']}" for sp in envelope.special_points)
    # Vapour-liquid sides change at the critical point only; rows may turn liquid-liquid after it.
    vapour_liquid = [(i, s) for i, s in enumerate(sides) if s != "liquid-liquid"]
    changes = [i for (j, a), (i, b) in zip(vapour_liquid, vapour_liquid[1:]) if a != b]
    critical = special["critical"]
    if changes and (critical is None or len(changes) > 1 or changes[0] not in (critical["index"], critical["index"] + 1)):
        failed["sides_change_only_at_critical"] = (f"labels change before rows {changes}; critical at "
                                                  f"{None if critical is None else critical['index']}")
    lnK = np.abs(np.log(np.array([row[6:] for row in rows], dtype=float)))
    trivial = [i for i in np.flatnonzero(lnK.max(axis=1) <= TRIVIAL) if critical is None or i != critical["index"]]
    if trivial:
        failed["no_row_on_trivial_set"] = f"rows {[int(i) for i in trivial][:10]}"
    if residuals:
        system = EnvelopeSystem(envelope.mixture, np.asarray(z, dtype=float))
        worst = [(row_residual(system, row, np.asarray(z, dtype=float)), i) for i, row in enumerate(rows)]
        bad = [(r, i) for r, i in worst if not r <= RESIDUAL_TOLERANCE]
        if bad:
            r, i = max(bad, key=lambda t: (not math.isfinite(t[0]), t[0]))
            failed["rows_within_residual_tolerance"] = f"{len(bad)} rows above {RESIDUAL_TOLERANCE}, worst {r!r} at row {i}"
    return failed


def complete(envelope, failed: dict) -> bool:
    """The run claims a whole envelope: a success from the dew point to the bubble point at the start pressure."""
    return envelope is not None and envelope.success and not {"starts_at_dew_point", "ends_at_bubble_point"} & set(failed)


def outcome(envelope) -> dict:
    """What must not depend on round-off: status and the T, P of each special point kind (the first of each)."""
    return {"status": envelope.status,
            "special": {kind: [envelope.special(kind)["values"]["T"], envelope.special(kind)["values"]["P"]]
                        for kind in KINDS if envelope.special(kind) is not None}}


def differences(a: dict, b: dict, rel: float = SAME) -> list[str]:
    """How two outcomes (of :func:`outcome`) differ: status, presence of special points, T or P beyond ``rel``."""
    found = []
    if a["status"] != b["status"]:
        found.append(f"status {a['status']} != {b['status']}")
    for kind in KINDS:
        pa, pb = a["special"].get(kind), b["special"].get(kind)
        if (pa is None) != (pb is None):
            found.append(f"{kind} {'present' if pa else 'missing'} / {'present' if pb else 'missing'}")
        elif pa is not None:
            for name, x, y in (("T", pa[0], pb[0]), ("P", pa[1], pb[1])):
                if not math.isclose(x, y, rel_tol=rel):
                    found.append(f"{kind} {name} {x!r} != {y!r} (relative {abs(x - y) / max(abs(x), abs(y)):.1e})")
    return found


def run_case(case: Case, *, perturb: float = 0.0, residuals: bool = True) -> dict:
    """Trace one case and check it: one JSON-ready record (the case, status, failed checks, outcome, seconds)."""
    import contin_thermo

    record = case.describe()
    began = time.perf_counter()
    try:
        mixture, z = case.build()
        envelope = contin_thermo.trace_envelope(mixture, z, from_pressure=START_PRESSURE * (1 + perturb),
                                                check_stability=False)
    except Exception as error:  # a raw exception is itself a finding (issue 9, item 8): record it
        record.update({"status": f"raised {type(error).__name__}", "success": False, "complete": False,
                       "consistent": False, "failed": ["raised"], "details": {"raised": str(error)[:300]},
                       "outcome": {"status": f"raised {type(error).__name__}", "special": {}},
                       "seconds": round(time.perf_counter() - began, 4)})
        return record
    seconds = time.perf_counter() - began
    failed = check_envelope(envelope, z, start_pressure=START_PRESSURE * (1 + perturb), residuals=residuals)
    record.update({"status": envelope.status, "success": bool(envelope.success),
                   "complete": complete(envelope, failed), "consistent": not failed,
                   "failed": sorted(failed), "details": failed, "outcome": outcome(envelope),
                   "rows": len(envelope.rows), "notes": list(envelope.notes), "seconds": round(seconds, 4)})
    return record


# -- kernels ---------------------------------------------------------------------------------------
def blas_info() -> dict:
    """The BLAS core type(s) and numpy's active dispatch targets in this process."""
    import numpy  # noqa: F401  (loads the BLAS library)
    import scipy.linalg  # noqa: F401

    cores = []
    try:
        import threadpoolctl

        cores = sorted({f"{i.get('internal_api')} {i.get('architecture')}" for i in threadpoolctl.threadpool_info()})
    except ImportError:
        cores = _openblas_cores()
    umath = _umath()
    active = [name for name in umath.__cpu_dispatch__ if umath.__cpu_features__.get(name)]
    return {"blas_cores": cores, "numpy_dispatch_active": active,
            "OPENBLAS_CORETYPE": os.environ.get("OPENBLAS_CORETYPE", ""),
            "NPY_DISABLE_CPU_FEATURES": os.environ.get("NPY_DISABLE_CPU_FEATURES", "")}


def _openblas_cores() -> list[str]:
    """Core names from the loaded OpenBLAS libraries (Linux), when threadpoolctl is not installed."""
    cores = set()
    try:
        with open("/proc/self/maps") as maps:
            paths = sorted({line.split()[-1] for line in maps if "openblas" in line.lower() and "/" in line})
    except OSError:
        return ["unknown"]
    for path in paths:
        try:
            library = ctypes.CDLL(path)
        except OSError:
            continue
        for symbol in ("openblas_get_corename", "scipy_openblas_get_corename", "scipy_openblas_get_corename64_",
                       "openblas_get_corename64_"):
            function = getattr(library, symbol, None)
            if function is not None:
                function.restype = ctypes.c_char_p
                cores.add(f"openblas {function().decode()}")
                break
    return sorted(cores) or ["unknown"]


def _umath():
    try:
        from numpy._core import _multiarray_umath as umath
    except ImportError:  # numpy < 2
        from numpy.core import _multiarray_umath as umath
    return umath


def dispatch_targets() -> list[str]:
    """numpy's dispatched SIMD targets in this build (the names ``NPY_DISABLE_CPU_FEATURES`` accepts)."""
    return list(_umath().__cpu_dispatch__)


def kernel_settings() -> list[tuple[str, dict]]:
    """(name, environment) of the kernel settings this machine and numpy build accept, default first.

    OpenBLAS core types are forced only where the CPU has their instructions (Haswell needs AVX2 and
    FMA3). numpy's ``NPY_DISABLE_CPU_FEATURES`` accepts only names of its dispatched targets (numpy 2.x:
    ``X86_V3``, ``X86_V4``, ``AVX512_ICL``, ...; numpy 1.x: ``AVX2``, ``FMA3``, ``AVX512F``, ...) and
    ignores others with a warning, so the settings are built from this build's own dispatch list: the
    AVX-512 targets off, every dispatched target off (baseline instructions only), and that with the
    oldest OpenBLAS core.
    """
    features, dispatch = _umath().__cpu_features__, dispatch_targets()
    settings = [("default", {})]
    if features.get("AVX2") and features.get("FMA3"):
        settings.append(("OPENBLAS_CORETYPE=Haswell", {"OPENBLAS_CORETYPE": "Haswell"}))
    settings.append(("OPENBLAS_CORETYPE=Prescott", {"OPENBLAS_CORETYPE": "Prescott"}))
    if {"AVX2", "FMA3"} <= set(dispatch):
        settings.append(("NPY_DISABLE_CPU_FEATURES=AVX2,FMA3", {"NPY_DISABLE_CPU_FEATURES": "AVX2,FMA3"}))
    wide = [name for name in dispatch if "512" in name or name == "X86_V4"]
    if wide:
        settings.append((f"NPY_DISABLE_CPU_FEATURES={','.join(wide)}", {"NPY_DISABLE_CPU_FEATURES": ",".join(wide)}))
    if dispatch and set(dispatch) != set(wide):
        settings.append((f"NPY_DISABLE_CPU_FEATURES={','.join(dispatch)}",
                         {"NPY_DISABLE_CPU_FEATURES": ",".join(dispatch)}))
    if dispatch:
        settings.append(("OPENBLAS_CORETYPE=Prescott with every numpy target off",
                         {"OPENBLAS_CORETYPE": "Prescott", "NPY_DISABLE_CPU_FEATURES": ",".join(dispatch)}))
    return settings


def run_in_subprocess(which: str, environment: dict, *, count: int | None = None, seed: int | None = None,
                      ids=None, idents=None, perturb: float = 0.0, residuals: bool = True) -> tuple[dict, list[dict]]:
    """Run :func:`main` of this file in a fresh Python under ``environment`` (added to a copy of this
    process's, with the kernel variables cleared first): (the child's :func:`blas_info`, its records).
    ``ids`` picks positions in set ``which``; ``idents`` picks cases by name from both default sets."""
    env = {k: v for k, v in os.environ.items() if k not in ("OPENBLAS_CORETYPE", "NPY_DISABLE_CPU_FEATURES")}
    env.update(environment)
    command = [sys.executable, os.path.abspath(__file__), "--set", which, "--perturb", repr(perturb)]
    if count is not None:
        command += ["--count", str(count)]
    if seed is not None:
        command += ["--seed", str(seed)]
    if ids is not None:
        command += ["--ids", ",".join(str(i) for i in ids)]
    if idents is not None:
        command += ["--cases", ",".join(idents)]
    if not residuals:
        command.append("--no-residuals")
    done = subprocess.run(command, capture_output=True, text=True, env=env)
    if done.returncode != 0:
        raise RuntimeError(f"child under {environment} failed: {done.stderr.strip().splitlines()[-1:]}")
    lines = [json.loads(line) for line in done.stdout.splitlines() if line.startswith("{")]
    info = next(line["blas"] for line in lines if "blas" in line)
    return info, [line for line in lines if "case" in line]


def cases_of(which: str, count: int | None = None, seed: int | None = None, ids=None, idents=None) -> list[Case]:
    """The cases of set ``which`` ("robustness" or "benchmark"), optionally only the positions ``ids``;
    with ``idents``, the cases of those names (``r..`` and ``m...``) from both sets as generated by default."""
    if idents is not None:
        known = {case.ident: case for case in robustness_set() + benchmark_set()}
        missing = [name for name in idents if name not in known]
        if missing:
            raise ValueError(f"cases {missing} are not in the default robustness or benchmark sets")
        return [known[name] for name in idents]
    if which == "characterised":
        cases = characterised_set()
        return cases if ids is None else [cases[i] for i in ids]
    make = {"robustness": robustness_set, "benchmark": benchmark_set}[which]
    options = {key: value for key, value in (("count", count), ("seed", seed)) if value is not None}
    cases = make(**options)
    return cases if ids is None else [cases[i] for i in ids]


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description="trace and check one seeded set of envelopes (JSON lines)")
    parser.add_argument("--set", choices=("robustness", "benchmark", "characterised"), default="benchmark")
    parser.add_argument("--count", type=int, default=None)
    parser.add_argument("--seed", type=int, default=None)
    parser.add_argument("--ids", default=None, help="comma-separated positions in the set")
    parser.add_argument("--cases", default=None, help="comma-separated case names from both default sets")
    parser.add_argument("--perturb", type=float, default=0.0, help="start pressure times (1 + PERTURB)")
    parser.add_argument("--no-residuals", action="store_true", help="skip re-evaluating the row residuals")
    args = parser.parse_args(argv)
    ids = None if args.ids is None else [int(i) for i in args.ids.split(",") if i]
    print(json.dumps({"blas": blas_info()}), flush=True)
    idents = None if args.cases is None else [name for name in args.cases.split(",") if name]
    for case in cases_of(args.set, args.count, args.seed, ids, idents):
        print(json.dumps(run_case(case, perturb=args.perturb, residuals=not args.no_residuals)), flush=True)


if __name__ == "__main__":
    main()
