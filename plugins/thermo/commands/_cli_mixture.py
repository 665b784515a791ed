"""Command line of the mixture tools: ``contin thermo envelope|pxy|txy`` and ``critical --mixture``."""

from __future__ import annotations

import json
import math

import numpy as np

from contin import InputError

__all__ = ["register", "run_critical", "parse_mixture", "parse_kij", "build_mixture"]


def parse_mixture(text: str, extra=(), *, normalise: bool = False, fractions: bool = True):
    """Components and mole fractions from ``"methane=0.80,ethane=0.20"`` (or ``"A,B"`` without fractions).

    Raises:
        InputError: unknown component (with a suggestion), duplicates, a single component, fractions
            negative, zero, all zero or not summing to 1 within 1e-6 (unless ``normalise``).
    """
    from ..models._components import lookup
    from ..models._units import parse_number

    parts = [p.strip() for p in str(text).split(",") if p.strip()]
    if not parts:
        raise InputError("--mixture is empty: give e.g. 'methane=0.8,ethane=0.2'")
    components, values = [], []
    for part in parts:
        if fractions:
            if "=" not in part:
                raise InputError(f"--mixture entry {part!r} needs a mole fraction: NAME=FRACTION")
            name, value = part.rsplit("=", 1)
            values.append(parse_number(value, f"--mixture entry {part[:60]!r}: the mole fraction"))
        else:
            if "=" in part:
                raise InputError(f"--mixture entry {part!r}: this diagram spans every composition, so it takes the two "
                                 "components without mole fractions, e.g. 'propane,n-butane'")
            name = part
        components.append(lookup(name.strip(), extra, argument="--mixture"))
    names = [c.name for c in components]
    for name in names:
        if names.count(name) > 1:
            raise InputError(f"--mixture names {name!r} twice (perhaps under an alias); give each component once")
    if len(components) == 1:
        raise InputError(f"--mixture holds only {names[0]!r}: for one fluid use 'contin thermo saturation --fluid {names[0]}'")
    if not fractions:
        return components, None
    z = np.array(values)
    if np.any(z < 0):
        bad = names[int(np.flatnonzero(z < 0)[0])]
        raise InputError(f"--mixture: the mole fraction of {bad!r} is negative; mole fractions must be positive")
    if not np.any(z > 0):
        raise InputError("--mixture: every mole fraction is zero; give positive mole fractions")
    if np.any(z == 0):
        bad = names[int(np.flatnonzero(z == 0)[0])]
        raise InputError(f"--mixture: the mole fraction of {bad!r} is zero; leave absent components out")
    with np.errstate(over="ignore"):
        total = float(z.sum())
    if abs(total - 1.0) > 1e-6:
        if not normalise:
            raise InputError(f"--mixture: the mole fractions sum to {total:.8g}, not 1; fix them or pass --normalise")
    if not math.isfinite(total):  # fractions near the largest float: scale first, the sum overflows
        z = z / z.max()
    return components, z / z.sum()


def parse_kij(text: str | None, names, extra=()) -> np.ndarray:
    """Symmetric kij matrix from ``"methane-ethane=0.01,..."``; zero for pairs not given.

    The text is split into (pair, value) items here; the pairs are read by the model layer's
    :func:`contin_thermo.models._kij.kij_matrix` (hyphenated names such as ``n-butane`` work).

    Raises:
        InputError: a malformed entry, a pair not in the mixture, a value outside (-1, 1), a pair of
            a component with itself, a pair given twice.
    """
    from ..models._kij import kij_matrix
    from ..models._units import parse_number

    items = []
    for part in [p.strip() for p in str(text or "").split(",") if p.strip()]:
        if "=" not in part:
            raise InputError(f"--kij entry {part!r} must be NAME-NAME=VALUE, e.g. 'methane-ethane=0.01'")
        pair, value = part.rsplit("=", 1)
        items.append((pair.strip(), parse_number(value, f"--kij entry {part[:60]!r}")))
    return kij_matrix(items, list(names), extra, argument="--kij")


def build_mixture(args, *, fractions: bool = True):
    """(Mixture, z) from parsed arguments (``mixture``, ``kij``, ``component``, ``eos``, ``normalise``)."""
    from ..models._components import parse_component
    from ..models._eos import family
    from ..models._mixture import Mixture

    from ..models._components import load_components

    extra = tuple(parse_component(text) for text in (getattr(args, "component", None) or []))
    for k, component in enumerate(extra):
        for other in extra[:k]:
            if component.name == other.name:
                raise InputError(f"--component {component.name!r} is given twice; give each component once")
    if getattr(args, "components_file", None):
        extra += tuple(c for c in load_components(args.components_file)
                       if not any(c.name == e.name for e in extra))
    if getattr(args, "feed", None) is not None:
        # A laboratory analysis: its plus fraction split and lumped into pseudo-components.
        from ..models._characterise import characterise
        from ..models._feed import read_feed

        rows = [{key: value for key, value in row.items() if key != "line"} for row in read_feed(args.feed)]
        characterised = characterise(rows, normalise=bool(getattr(args, "normalise", False)), extra=extra)
        components, z = list(characterised.components), np.array(characterised.z, dtype=float)
        extra = extra + tuple(c for c in components if not any(c.name == e.name for e in extra))
    else:
        components, z = parse_mixture(args.mixture, extra, normalise=bool(getattr(args, "normalise", False)),
                                      fractions=fractions)
    kij = parse_kij(getattr(args, "kij", None), [c.name for c in components], extra)
    return Mixture(tuple(components), family(args.eos), kij), z


def _common(parser, *, fractions: bool = True) -> None:
    if fractions:
        source = parser.add_mutually_exclusive_group(required=True)
        source.add_argument("--mixture", help="components and mole fractions, e.g. 'methane=0.8,ethane=0.2'")
        source.add_argument("--feed", metavar="FILE",
                            help="a laboratory analysis (.csv or .toml) whose plus fraction is characterised "
                                 "(see contin thermo characterise), e.g. --feed analysis.csv")
    else:
        parser.add_argument("--mixture", required=True, help="the two components, e.g. 'propane,n-butane'")
    parser.add_argument("--kij", default=None, help="interaction parameters, e.g. 'methane-ethane=0.01'")
    parser.add_argument("--component", action="append", default=[], metavar="NAME,Tc,Pc,omega",
                        help="a user component (K, Pa); repeatable")
    parser.add_argument("--eos", choices=("srk", "pr"), required=True, help="cubic equation of state: srk or pr")
    parser.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    parser.add_argument("--csv", default=None, metavar="FILE", help="write the points as CSV")
    if fractions:
        parser.add_argument("--normalise", action="store_true", help="scale the mole fractions to sum to 1")


_EXAMPLES = {
    "envelope": "examples:\n"
                "  contin thermo envelope --mixture 'methane=0.82,ethane=0.09,propane=0.05,n-butane=0.03,n-pentane=0.01' "
                "--eos pr --plot envelope.png\n"
                "  contin thermo envelope --mixture 'methane=0.7,carbon dioxide=0.2,n-hexane=0.1' --kij "
                "'methane-carbon dioxide=0.1' --eos srk --quality 0.1,0.5 --units degC-bar --csv env.csv\n"
                "  contin thermo envelope --mixture 'C1=0.9,blend-X=0.1' --component blend-X,520,2.9e6,0.31 --eos pr --json\n"
                "  contin thermo envelope --mixture 'methane=0.7,ethane=0.1,propane=0.08,n-butane=0.05,n-heptane=0.07' "
                "--eos pr --sensitivities 'kij:methane-n-heptane,Tc:methane' --uncertainty 'Tc=0.5%,omega=3%' --plot band.png",
    "pxy": "examples:\n  contin thermo pxy --mixture 'propane,n-butane' --temperature '30 degC' --eos pr --plot pxy.png\n"
           "  contin thermo pxy --mixture 'ethane,propane' --temperature 280 --eos srk --json",
    "txy": "examples:\n  contin thermo txy --mixture 'propane,n-butane' --pressure '5 bar' --eos pr --plot txy.png\n"
           "  contin thermo txy --mixture 'methane,ethane' --pressure 2MPa --eos pr --csv txy.csv",
}


def register(thermo_subparsers) -> None:
    """Add ``envelope``, ``pxy`` and ``txy`` to the ``contin thermo`` subcommands."""
    from ..models._caution import CAUTION
    from ._cli_common import add_output_options
    from ._cli_sensitivity import add_sensitivity_options

    envelope = thermo_subparsers.add_parser(
        "envelope", help="phase envelope of a mixture", epilog=_EXAMPLES["envelope"],
        description="Trace the dew and bubble curves of a feed in one run, from the dew point at "
                    "--from-pressure through the cricondentherm, the critical point and the cricondenbar "
                    "to the bubble point; check every point for stability. " + CAUTION)
    _common(envelope)
    add_output_options(envelope)
    envelope.add_argument("--from-pressure", default="1e5", metavar="PA",
                          help="pressure of the low-pressure dew and bubble points (default 1e5 Pa; units "
                               "such as '1 bar' or '100 kPa' allowed)")
    envelope.add_argument("--quality", default=None, help="vapour fractions of quality lines, e.g. 0.1,0.5,0.9")
    envelope.add_argument("--plot", default=None, metavar="FILE", help="draw the envelope in the P-T plane")
    add_sensitivity_options(envelope)
    envelope.set_defaults(handler=run_envelope)
    for name, option, unit, example in (("pxy", "--temperature", "K", "'30 degC' or '86 degF'"),
                                        ("txy", "--pressure", "PA", "'5 bar' or '2 MPa'")):
        parser = thermo_subparsers.add_parser(
            name, help=f"binary {name} diagram", epilog=_EXAMPLES[name],
            description=f"Trace the {name} diagram of a binary by continuation in composition, from one pure "
                        "component to the other or to where the two-phase region closes; azeotropes are "
                        "reported. " + CAUTION)
        _common(parser, fractions=False)
        add_output_options(parser)
        parser.add_argument(option, required=True, metavar=unit,
                            help=f"fixed {option[2:]} ({unit} if bare; with a unit, e.g. {example})")
        parser.add_argument("--plot", default=None, metavar="FILE", help=f"draw the {name} diagram")
        parser.set_defaults(handler=run_binary, diagram=name)


def _mixture_input(args, mixture, z=None) -> dict:
    """What a run record keeps of a mixture command: components as used, kij, feed, model."""
    from ._cli_common import component_data

    data = {"command": getattr(args, "thermo_command", None), "eos": mixture.family.name,
            "components": [component_data(c) for c in mixture.components],
            "kij": [[float(v) for v in row] for row in mixture.kij]}
    if z is not None:
        data["feed"] = [float(v) for v in z]
    return data


def run_envelope(args) -> int:
    """``contin thermo envelope``: trace, then print JSON or a summary; write CSV and plot if asked."""
    from ._cli_common import check_destinations, emit, with_progress
    from ._cli_sensitivity import sensitivity_plan
    from ..curves._envelope import trace_envelope
    from ..models._units import parse_pressure

    check_destinations(args)
    mixture, z = build_mixture(args)
    from ..models._units import parse_number

    quality = []
    if args.quality is not None:
        parts = str(args.quality).split(",")
        if not any(q.strip() for q in parts):
            raise InputError("--quality is empty; give vapour fractions such as 0.1,0.5")
        for q in parts:
            quality.append(parse_number(q, "--quality"))
    from_pressure = parse_pressure(args.from_pressure, "--from-pressure")
    plan = sensitivity_plan(args, mixture, z)
    n = mixture.size
    envelope = with_progress(
        args, "envelope", lambda x: f"T = {math.exp(x[n]):.6g} K, P = {math.exp(x[-1]):.6g} Pa",
        lambda progress: trace_envelope(mixture, z, from_pressure=from_pressure, quality=quality, on_point=progress))
    from ..curves._envelope import _MAX_STEP, _STEP, _TOLERANCE
    from ..reports._plot_envelope import plot_envelope

    summary = envelope.summary(args.units)
    if plan is not None:
        envelope, lines = plan.apply(envelope)
        summary = summary[:-1] + lines + summary[-1:]
    return emit(args, envelope, "\n".join(summary), plot_envelope,
                {**_mixture_input(args, mixture, z), "from_pressure": from_pressure, "quality": quality},
                {"tolerance": _TOLERANCE, "step": _STEP, "max_step": _MAX_STEP})


def run_binary(args) -> int:
    """``contin thermo pxy|txy``."""
    from ..curves._binary import _MAX_STEP, _STEP, _TOLERANCE, pxy, txy
    from ._cli_common import check_destinations, emit, with_progress
    from ..models._units import parse_pressure, parse_temperature

    check_destinations(args)
    mixture, _ = build_mixture(args, fractions=False)
    if args.diagram == "pxy":
        fixed = parse_temperature(args.temperature, "--temperature")
    else:
        fixed = parse_pressure(args.pressure, "--pressure")
    diagram_of = pxy if args.diagram == "pxy" else txy
    diagram = with_progress(args, args.diagram, lambda x: f"x1 = {x[-1]:.6g}",
                            lambda progress: diagram_of(mixture, fixed, on_point=progress))
    from ..reports._plot_envelope import plot_binary

    return emit(args, diagram, "\n".join(diagram.summary(args.units)), plot_binary,
                {**_mixture_input(args, mixture), args.diagram[0].upper(): fixed},
                {"tolerance": _TOLERANCE, "step": _STEP, "max_step": _MAX_STEP})


def run_critical(args) -> int:
    """``contin thermo critical --mixture ...``: the Heidemann-Khalil critical point of the mixture."""
    import contin

    from ..models._caution import CAUTION
    from ._cli_common import check_destinations, finish, queue, write_run_record
    from ..curves._mixture_critical import critical_point
    from contin.base import fill_text

    from ..reports._report import csv_text, summary_lines
    from ..models._units import convert_rows, output_units

    if getattr(args, "plot", None) is not None:
        raise InputError("--plot draws curves; a mixture critical point is one point: drop --plot, or use "
                         "'contin thermo envelope' for a picture")
    if getattr(args, "fluid", None) is not None:
        raise InputError("--fluid and --mixture cannot be combined: --fluid names one fluid, --mixture a mixture")
    own = [f"--{name.replace('_', '-')}" for name in ("tc", "pc", "omega", "from_temperature",
                                                      "at_temperatures", "at_pressures")
           if getattr(args, name, None) is not None]
    if own:
        raise InputError(f"{own[0]} and --mixture cannot be combined: {own[0]} belongs to one fluid; give extra "
                         "components of a mixture with --component NAME,Tc,Pc,omega")
    check_destinations(args)
    mixture, z = build_mixture(args)
    point = critical_point(mixture, z)
    columns = ("T", "P", "v")
    row = [point.T, float(point.P), point.v]
    special = [{"kind": "critical", "index": 0, "values": dict(zip(columns, row)),
                "info": {"eigenvalue": point.eigenvalue, "cubic_form": point.cubic}}]
    shown = output_units(getattr(args, "units", "si"))
    rows, names = convert_rows(columns, [row], {"T": "K", "P": "Pa", "v": "m3/mol"}, shown)
    text = csv_text(columns, rows, names, title="mixture critical point",
                    notes=[f"model: {mixture.family.label}; Heidemann & Khalil (1980) criterion"])
    queue(args, "csv", lambda path: fill_text(path, text))
    document = contin.json_document("completed", "critical point found (Heidemann-Khalil criterion)", columns,
                                    [row], special, [], {"setup_seconds": 0.0, "trace_seconds": 0.0,
                                                         "newton_iterations": 0, "jacobian_evaluations": 0},
                                    caution=CAUTION, model=mixture.family.label)
    write_run_record(args, document, _mixture_input(args, mixture, z))
    finish(args)
    if getattr(args, "json", False):
        print(json.dumps(document))
    else:
        print("\n".join(summary_lines("mixture critical point", [
            ("model", mixture.family.label),
            ("T", f"{shown.temperature_from_si(point.T):.6f} {shown.temperature}"),
            ("P", f"{shown.pressure_from_si(point.P):.6g} {shown.pressure}"),
            ("v", f"{point.v:.6e} m3/mol")])))
    return 0
