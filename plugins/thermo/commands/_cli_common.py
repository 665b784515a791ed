"""What every tracing ``contin thermo`` command shares: output units, run records, checks of destinations."""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable, Mapping
from pathlib import Path

import contin
from contin import InputError
from contin.base import fill_text

from ..models._units import UNIT_SYSTEMS_HELP, output_units

__all__ = ["add_units_option", "add_output_options", "add_translation_option", "translation", "with_translation_line", "with_input_lines", "read_quantities", "check_destinations", "write_run_record", "component_data", "with_progress", "emit",
           "queue", "finish"]


def add_units_option(parser: argparse.ArgumentParser, default: str, shown: str) -> None:
    """Add ``--units SET`` (checked by :func:`output_units` before any work, so that an unknown set is
    refused with a message naming the sets, not argparse's list of choices)."""
    parser.add_argument("--units", default=default, metavar="SET",
                        help=f"units of {shown}: {UNIT_SYSTEMS_HELP} (default: {default}); JSON is always SI")


def add_output_options(parser: argparse.ArgumentParser) -> None:
    """Add ``--units``, ``--record`` and ``--quiet`` (``--json``, ``--csv``, ``--plot`` are the command's own)."""
    add_units_option(parser, "si", "the printed summary and the CSV file")
    parser.add_argument("--record", metavar="FILE",
                        help="write a run record: the command, component data and kij used, versions, result")
    parser.add_argument("--quiet", action="store_true", help="no progress line on stderr")
    parser.add_argument("--atmosphere", default="101325", metavar="PA",
                        help="the atmospheric pressure that gauge pressures (barg, psig, kPag) are above "
                             "(default 101325 Pa; units allowed, e.g. '0.95 bar')")


def _atmosphere(args: argparse.Namespace) -> float:
    from ..models._units import STANDARD_ATMOSPHERE, gauge_unit, parse_pressure

    text = getattr(args, "atmosphere", None)
    if text is None:
        return STANDARD_ATMOSPHERE
    if gauge_unit(text):
        raise InputError(f"--atmosphere {text!r}: the atmospheric pressure is absolute; give it in Pa, bar, kPa, "
                         "psia or atm")
    return parse_pressure(text, "--atmosphere")


def read_quantities(args: argparse.Namespace, text, kind: str, argument: str, *, single: bool = False) -> list[float]:
    """Comma-separated temperatures (K) or pressures (Pa) of an option (one value if ``single``); each
    gauge pressure (above ``--atmosphere``) is kept on ``args.gauge_inputs`` so that the summary shows
    it as absolute."""
    from ..models._units import gauge_unit, parse_list, parse_quantity

    atmosphere = _atmosphere(args)
    if single:
        parts, values = [str(text).strip()], [parse_quantity(text, kind, argument, atmosphere=atmosphere)]
    else:
        parts = [p.strip() for p in str(text).split(",") if p.strip()]
        values = parse_list(text, kind, argument, atmosphere=atmosphere)
    notes = args.__dict__.setdefault("gauge_inputs", [])
    for part, value in zip(parts, values):
        if kind == "pressure" and gauge_unit(part):
            notes.append({"option": argument, "given": part, "absolute_Pa": value, "atmosphere_Pa": atmosphere})
    return values


def with_input_lines(summary: str, args: argparse.Namespace) -> str:
    """The summary with lines on what the input became (before the closing caution): the feed's
    pseudo-components and kij sources (``args.input_notes``) and each gauge input as absolute."""
    lines = summary.split("\n")
    shown = output_units(getattr(args, "units", "si"))
    gauge = [f"  gauge    : {n['option']} {n['given']} is gauge: {shown.pressure_from_si(n['absolute_Pa']):.8g} "
             f"{shown.pressure} absolute (atmosphere {n['atmosphere_Pa']:g} Pa)" for n in getattr(args, "gauge_inputs", [])]
    added = [*(f"  {note}" for note in getattr(args, "input_notes", [])), *gauge]
    return "\n".join([*lines[:-1], *added, lines[-1]]) if added else summary


def add_translation_option(parser: argparse.ArgumentParser) -> None:
    """Add ``--volume-translation [CORRELATION]`` (Peneloux-type shifts; equilibrium unchanged)."""
    parser.add_argument("--volume-translation", nargs="?", const="default", default=None, metavar="CORRELATION",
                        help="move volumes and densities by Peneloux-type shifts (temperatures, pressures and "
                             "K-values unchanged): srk peneloux; pr jhaveri-youngren (default) or peneloux")


def translation(args: argparse.Namespace) -> dict | None:
    """The keyword arguments of a translation if ``--volume-translation`` was given, else None.

    Raises:
        InputError: an equation of state without shifts, or a correlation that is not one of its own.
    """
    from ..models._translation import CORRELATIONS

    value = getattr(args, "volume_translation", None)
    if value is None:
        return None
    eos = str(getattr(args, "eos", ""))
    if eos not in CORRELATIONS:
        raise InputError(f"--volume-translation with --eos {eos}: shifts are defined for srk and pr only; choose "
                         "one of them or drop --volume-translation")
    if value != "default" and value not in CORRELATIONS[eos]:
        raise InputError(f"--volume-translation {value}: not a correlation for {eos}; choose "
                         f"{' or '.join(CORRELATIONS[eos])}")
    return {"correlation": None if value == "default" else value}


def with_translation_line(lines: list[str], stats: Mapping) -> list[str]:
    """Summary lines with a line saying volumes are translated (before the closing caution), if they are."""
    if "volume_translation" not in stats:
        return lines
    note = ("  volumes  : translated (Peneloux-type shifts, see the JSON stats for each shift and its source); "
            "temperatures and pressures are those of the untranslated equation")
    return [*lines[:-1], note, lines[-1]]


def check_destinations(args: argparse.Namespace):
    """Check every output file (--csv, --plot, --record) before any work: a regular file or a new
    name in a writable folder, a plot of a known format. Keeps the checked targets on ``args``."""
    from contin.base import Outputs

    outputs = Outputs()
    for option in ("csv", "plot", "record"):
        value = getattr(args, option, None)
        if value is not None:
            outputs.target(f"--{option}", value)
    plot = getattr(args, "plot", None)
    if plot is not None and Path(plot).suffix.lower() not in (".png", ".svg", ".pdf"):
        raise InputError(f"--plot {plot!r} must end in .png, .svg or .pdf")
    output_units(getattr(args, "units", "si"))
    translation(args)  # checked before any work
    _atmosphere(args)
    args.outputs = outputs
    return outputs


def _outputs(args: argparse.Namespace):
    outputs = getattr(args, "outputs", None)
    return outputs if outputs is not None else check_destinations(args)


def component_data(component) -> dict:
    """The constants of a component as used, with their source, for run records."""
    return {"name": component.name, "Tc": component.Tc, "Pc": component.Pc, "omega": component.omega,
            "source": getattr(component, "source", "")}


def write_run_record(args: argparse.Namespace, document: Mapping, input: Mapping,
                     options: Mapping | None = None) -> None:
    """Queue ``--record`` if asked: the command line, the input actually used, the tolerances and step
    options, versions and the result (status and timings included). Written by :func:`finish`."""
    path = getattr(args, "record", None)
    if path is None:
        return
    record = contin.document_record(document, input={"kind": "thermo", **input},
                                    command=getattr(args, "argv", None), options=dict(options or {}))
    outputs = _outputs(args)
    text = json.dumps(record, indent=1) + "\n"
    outputs.add("--record", outputs.target("--record", path), lambda target: fill_text(target, text))


def queue(args: argparse.Namespace, option: str, write: Callable) -> None:
    """Queue ``write(path)`` for the output option ``option`` (e.g. ``"csv"``) if it was given."""
    value = getattr(args, option, None)
    if value is None:
        return
    outputs = _outputs(args)
    outputs.add(f"--{option}", outputs.target(f"--{option}", value), write)


def finish(args: argparse.Namespace) -> None:
    """Write every queued output together (all or none)."""
    _outputs(args).commit()


def with_progress(args: argparse.Namespace, label: str, describe: Callable, run: Callable):
    """Call ``run(progress)`` with a progress line (silent with --quiet or --json, or off a terminal)."""
    progress = contin.Progress((), quiet=bool(getattr(args, "quiet", False) or getattr(args, "json", False)),
                               label=label, describe=describe)
    try:
        return run(progress)
    finally:
        progress.close()


def emit(args: argparse.Namespace, result, summary: str, plot: Callable | None, record_input: Mapping,
         options: Mapping, document_extra: Mapping | None = None) -> int:
    """Every tracing command's outputs, in one order: CSV (in ``--units``), plot, run record, then
    the JSON document (with ``document_extra`` added) or the summary on stdout. Returns the exit
    status (0 success, 1 not)."""
    document = {**result.to_dict(), **(document_extra or {})}
    if getattr(args, "gauge_inputs", None):
        record_input = {**record_input, "gauge_inputs": list(args.gauge_inputs)}
    summary = with_input_lines(summary, args)
    queue(args, "csv", lambda path: result.to_csv(path, units=args.units))
    if plot is not None:
        queue(args, "plot", lambda path: plot(result, path))
    write_run_record(args, document, record_input, options)
    finish(args)
    print(json.dumps(document) if args.json else summary)
    return 0 if result.success else 1
