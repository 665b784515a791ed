"""``--sweep`` of the thermo commands: one run per combination of model constants, through ``contin.run_sweep``.

``--sweep "kij:methane-ethane=0,0.05,0.1"`` (also ``Tc:NAME=...`` in K or with a unit, ``Pc:NAME=...``
in Pa or with a unit, ``omega:NAME=...``; several ``--sweep``: their product) runs the command once per
combination and writes the folder of ``contin sweep``: ``run-<k>.json`` (the result object plus
``sweep_values``) the moment each run finishes, ``sweep.json`` (the definition a resumed sweep must
share) and ``summary.csv``. What travels to a worker is the description below (names, numbers and
the values of the run), from which :func:`run_one` rebuilds the model; nothing compiled is pickled.
"""

from __future__ import annotations

import argparse
import io
import json
from collections.abc import Sequence

from contin import InputError
from contin.base import add_sweep_options as _add_executor_options

__all__ = ["KINDS", "add_sweep_options", "parse_sweeps", "run_one", "sweep_command"]

#: What ``--sweep`` can vary: kind -> what it is.
KINDS = {"kij": "binary interaction parameter", "Tc": "critical temperature", "Pc": "critical pressure",
         "omega": "acentric factor"}


def add_sweep_options(parser: argparse.ArgumentParser, kinds: Sequence[str]) -> None:
    """Add ``--sweep`` (repeatable) and the options of every sweep (``--workers``, ``--scheduler``, ``--timeout``,
    ``--out``, ``--cold``)."""
    example = "kij:methane-ethane=0,0.05,0.1" if "kij" in kinds else "omega:propane=0.14,0.15,0.16"
    parser.add_argument("--sweep", action="append", default=[], metavar="KIND:TARGET=V1,V2,...",
                        help=f"run once per value of a model constant ({', '.join(kinds)}), e.g. '{example}'; "
                             "repeat for the product of several; results go to the --out folder")
    _add_executor_options(parser, out="COMMAND-sweep", cold="scratch", when="with --sweep: ")


def _check_options(args: argparse.Namespace) -> None:
    """Sweep options without --sweep, and single-run outputs with it, are refused."""
    if not args.sweep:
        given = [f"--{name}" for name in ("workers", "scheduler", "out") if getattr(args, name, None) is not None]
        if getattr(args, "cold", False):
            given.append("--cold")
        if given:
            raise InputError(f"{given[0]} applies to a sweep only; add --sweep KIND:TARGET=V1,V2,... or drop {given[0]}")
        return
    for option in ("csv", "plot", "record"):
        if getattr(args, option, None) is not None:
            raise InputError(f"--{option} writes one run's result; with --sweep every run is written to the sweep "
                             f"folder (--out): drop --{option}")


def parse_sweeps(texts: Sequence[str], names: Sequence[str], kinds: Sequence[str], extra=()) -> dict[str, list[float]]:
    """``--sweep`` texts as label -> values, labels canonical (``kij:methane-ethane``, ``Tc:propane``).

    Raises:
        InputError: a malformed entry, an unknown kind, a component not in the model, a pair of a
            component with itself, no values, a value given twice, a kij outside (-1, 1), Tc or Pc not
            positive, an acentric factor outside -1..3, the same constant swept twice.
    """
    from contin.base import suggest

    from ..models._components import custom_component, lookup
    from ..models._kij import split_pair
    from ..models._units import parse_list, parse_number

    over: dict[str, list[float]] = {}
    for text in texts:
        shown = f"--sweep {str(text).strip()[:80]!r}"
        head, equals, listed = str(text).partition("=")
        kind, colon, target = head.partition(":")
        kind, target = kind.strip(), target.strip()
        if not equals or not colon or not target:
            raise InputError(f"{shown} must be KIND:TARGET=V1,V2,..., e.g. 'kij:methane-ethane=0,0.05'")
        if kind not in kinds:
            raise InputError(f"{shown}: cannot sweep {kind!r}{suggest(kind, kinds)}; this command sweeps "
                             f"{', '.join(kinds)}")
        if not listed.strip(" ,"):
            raise InputError(f"{shown} gives no values; list at least one, e.g. {kind}:{target}=0.01,0.02")
        if kind == "kij":
            i, j = split_pair(target, list(names), extra, argument=f"{shown}:")
            if i == j:
                raise InputError(f"{shown} pairs a component with itself; kij is zero on the diagonal")
            i, j = sorted((i, j))
            label = f"kij:{names[i]}-{names[j]}"
            values = [parse_number(v, shown) for v in listed.split(",") if v.strip()]
            bad = [v for v in values if not -1.0 < v < 1.0]
            if bad:
                raise InputError(f"{shown}: kij = {bad[0]:g} lies outside (-1, 1)")
        else:
            component = lookup(target, extra, argument=f"{shown}:")
            if component.name not in names:
                raise InputError(f"{shown}: {component.name!r} is not a component of this model "
                                 f"({', '.join(names)})")
            label = f"{kind}:{component.name}"
            values = (parse_list(listed, {"Tc": "temperature", "Pc": "pressure"}[kind], shown) if kind != "omega"
                      else [parse_number(v, shown) for v in listed.split(",") if v.strip()])
            constants = {"Tc": component.Tc, "Pc": component.Pc, "omega": component.omega}
            for value in values:
                custom_component(component.name, **{**constants, kind: value}, argument=shown)
        if len(set(values)) != len(values):
            raise InputError(f"{shown} gives a value twice; give each value once")
        if label in over:
            raise InputError(f"{shown} sweeps {label} a second time; give its values in one --sweep")
        over[label] = [float(v) for v in values]
    return over


def _apply(description: dict, values: dict):
    """The components (with swept constants) and kij matrix of one run."""
    import numpy as np

    from ..models._components import Component

    components = [dict(c) for c in description["components"]]
    names = [c["name"] for c in components]
    kij = np.array(description.get("kij", [[0.0]]), dtype=float)
    for label, value in values.items():
        kind, _, target = label.partition(":")
        if kind == "kij":
            i, j = next((a, b) for a in range(len(names)) for b in range(a + 1, len(names))
                        if f"{names[a]}-{names[b]}" == target)
            kij[i, j] = kij[j, i] = float(value)
        else:
            components[names.index(target)][kind] = float(value)
    return tuple(Component(c["name"], c["Tc"], c["Pc"], c["omega"], c.get("source", "user-defined"))
                 for c in components), kij


def run_one(description: dict, values: dict, start=None) -> dict:
    """One run of a thermo sweep, in whatever process it lands: rebuild the model, trace, return the document."""
    from ..models._eos import family
    from ..models._mixture import Mixture

    components, kij = _apply(description, values)
    eos = family(description["eos"])
    command = description["command"]
    if command == "envelope":
        from ..curves._envelope import trace_envelope

        result = trace_envelope(Mixture(components, eos, kij), description["feed"],
                                from_pressure=description["from_pressure"], quality=description["quality"],
                                start=start)
    elif command in ("pxy", "txy"):
        from ..curves._binary import pxy, txy

        result = (pxy if command == "pxy" else txy)(Mixture(components, eos, kij), description["fixed"])
    else:
        from ..curves._pure import CubicFluid, saturation_curve

        result = saturation_curve(CubicFluid(components[0], eos), from_temperature=description["from_temperature"],
                                  at_temperatures=description["at_temperatures"],
                                  at_pressures=description["at_pressures"])
    document = result.to_dict()
    document["success"] = bool(result.success)
    return document


def _start_of(document: dict):
    from ..curves._envelope import start_coordinates

    return start_coordinates(document)


def sweep_command(args: argparse.Namespace, description: dict) -> int | None:
    """Run the sweep of ``args.sweep`` over the model in ``description``, or return None without --sweep.

    ``description``: ``command``, ``eos``, ``components`` (name, Tc, Pc, omega, source), ``kij`` and the
    command's own inputs (``feed``, ``from_pressure``, ``quality``; ``fixed``; ``from_temperature``,
    ``at_temperatures``, ``at_pressures``), all JSON-ready.
    """
    import contin

    _check_options(args)
    if not args.sweep:
        return None
    for option in ("volume_translation", "sensitivities", "uncertainty"):
        if getattr(args, option, None) is not None:
            flag = "--" + option.replace("_", "-")
            raise InputError(f"--sweep does not yet carry {flag} to its runs; run the sweep without it, or give "
                             f"{flag} to one run at a time")
    kinds = ("Tc", "Pc", "omega") if description["command"] == "saturation" else tuple(KINDS)
    extra = _apply(description, {})[0]  # the model's own components first (user components included)
    over = parse_sweeps(args.sweep, [c.name for c in extra], kinds, extra)
    identity = {("--" + key.replace("_", "-") if key in ("eos", "from_pressure", "quality", "from_temperature",
                                                          "at_temperatures", "at_pressures") else key): value
                for key, value in description.items()}
    task = contin.SweepTask(run_one, description, identity, _start_of if description["command"] == "envelope" else None)
    folder = args.out if args.out is not None else f"{description['command']}-sweep"
    quiet = bool(getattr(args, "quiet", False) or getattr(args, "json", False))
    runs = contin.run_sweep(task, over, folder, workers=args.workers, scheduler=args.scheduler,
                            timeout=args.timeout, warm=not args.cold, stream=io.StringIO() if quiet else None)
    if getattr(args, "json", False):
        print(json.dumps({"folder": str(folder), "runs": [
            {"run": run.index, "sweep_values": run.values, "status": run.status, "success": run.success,
             "reused": run.reused} for run in runs]}))
    else:
        print(contin.sweep_report(runs, f"thermo {description['command']}", folder))
    return 0 if all(run.success for run in runs) else 1
