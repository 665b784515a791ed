"""Command line of the mixture tools: ``contin thermo envelope|pxy|txy`` and ``critical --mixture``."""

from __future__ import annotations

import json
import math

import numpy as np

from contin import InputError

__all__ = ["register", "run_critical", "parse_mixture", "parse_kij", "kij_request", "build_mixture"]


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


def kij_request(text: str | None, base: str) -> tuple[str, list]:
    """(base, pairs) from ``--kij``: an optional first word ``defaults`` or ``none`` (else ``base``),
    then ``NAME-NAME=VALUE`` pairs that override single pairs of the base.

    Raises:
        InputError: a malformed entry (the pairs are checked against the mixture later).
    """
    from ..models._units import parse_number

    from ..models._kij import KIJ_BASES

    parts = [p.strip() for p in str(text or "").split(",") if p.strip()]
    if parts and parts[0] in KIJ_BASES:
        base, parts = parts[0], parts[1:]
    items = []
    for part in parts:
        if "=" not in part:
            raise InputError(f"--kij entry {part!r} must be NAME-NAME=VALUE, e.g. 'methane-ethane=0.01' (only "
                             "the first entry may be the word defaults or none)")
        pair, value = part.rsplit("=", 1)
        items.append((pair.strip(), parse_number(value, f"--kij entry {part[:60]!r}")))
    return base, items


def parse_kij(text: str | None, names, extra=()) -> np.ndarray:
    """Symmetric kij matrix from ``"methane-ethane=0.01,..."``; zero for pairs not given.

    The pairs are read by the model layer's :func:`contin_thermo.models._kij.kij_matrix` (hyphenated
    names such as ``n-butane`` work).

    Raises:
        InputError: a malformed entry, a pair not in the mixture, a value outside (-1, 1), a pair of
            a component with itself, a pair given twice.
    """
    from ..models._kij import kij_matrix

    return kij_matrix(kij_request(text, "none")[1], list(names), extra, argument="--kij")


def _feed_components(args, extra, *, fractions: bool):
    """(components, z) of ``--feed``: its plus fraction characterised, or its named components as they are."""
    from ..models._characterise import characterise, is_plus_fraction
    from ..models._components import lookup
    from ..models._feed import read_feed

    rows = read_feed(args.feed)
    normalise = bool(getattr(args, "normalise", False))
    plus = [row for row in rows if is_plus_fraction(row["name"])]
    if plus and not fractions:
        raise InputError(f"--feed {args.feed!r}: {args.diagram} needs a binary of two named components, but the feed "
                         f"holds the plus fraction {plus[0]['name']!r} ({plus[0]['line']}); trace its envelope with "
                         "'contin thermo envelope --feed', or write a feed of two components")
    if plus:
        characterised = characterise([{k: v for k, v in row.items() if k != "line"} for row in rows],
                                     normalise=normalise, extra=extra)
        args.molar_masses = characterised.molar_masses
        args.__dict__.setdefault("input_notes", []).append(
            f"feed     : {plus[0]['name']} of {args.feed} characterised into "
            f"{', '.join(p.name for p in characterised.pseudo)} ('contin thermo characterise --feed' shows "
            "their constants and the methods)")
        return list(characterised.components), np.array(characterised.z, dtype=float)
    components = [lookup(row["name"], extra, argument=row["line"]) for row in rows]
    if not fractions and len(components) != 2:
        raise InputError(f"--feed {args.feed!r}: {args.diagram} needs a binary, but the feed holds {len(components)} "
                         "components; write a feed of two components")
    text = ",".join(f"{c.name}={row['z']!r}" for c, row in zip(components, rows))
    return parse_mixture(text, tuple(extra) + tuple(components), normalise=normalise or not fractions,
                         fractions=True)


def build_mixture(args, *, fractions: bool = True):
    """(Mixture, z) from parsed arguments (``mixture`` or ``feed``, ``kij``, ``component``, ``eos``,
    ``normalise``). ``--kij`` starts from the default table for a feed and from zeros for ``--mixture``;
    every pair used, with its source, is kept on ``args.kij_used`` for the run record and JSON."""
    from ..models._components import load_components, parse_component
    from ..models._eos import family
    from ..models._kij import resolve_kij
    from ..models._mixture import Mixture

    extra = tuple(parse_component(text) for text in (getattr(args, "component", None) or []))
    for k, component in enumerate(extra):
        for other in extra[:k]:
            if component.name == other.name:
                raise InputError(f"--component {component.name!r} is given twice; give each component once")
    if getattr(args, "components_file", None):
        extra += tuple(c for c in load_components(args.components_file)
                       if not any(c.name == e.name for e in extra))
    feed = getattr(args, "feed", None) is not None
    if feed:
        components, z = _feed_components(args, extra, fractions=fractions)
        extra = extra + tuple(c for c in components if not any(c.name == e.name for e in extra))
    else:
        components, z = parse_mixture(args.mixture, extra, normalise=bool(getattr(args, "normalise", False)),
                                      fractions=fractions)
    base, pairs = kij_request(getattr(args, "kij", None), "defaults" if feed else "none")
    kij = resolve_kij(components, args.eos, base, pairs, extra, argument="--kij")
    args.kij_used = kij.pairs()
    args.__dict__.setdefault("input_notes", []).append(f"kij      : {_kij_summary(base, args.kij_used)}")
    return Mixture(tuple(components), family(args.eos), kij.matrix), (z if fractions else None)


_KIJ_HELP = ("interaction parameters: 'defaults' (the published table and Chueh-Prausnitz for methane with heavy "
             "ends; the default with --feed) or 'none' (all 0; the default with --mixture), then pairs that "
             "override single values, e.g. 'defaults,methane-ethane=0.01' or 'methane-ethane=0.01'")


def _kij_summary(base: str, pairs: list) -> str:
    """One line on where the kij came from: how many pairs from the table, a correlation, the user, or 0."""
    counts = {}
    for pair in pairs:
        source = pair["source"]
        kind = ("from you" if source == "user" else "by Chueh-Prausnitz" if source.startswith("Chueh") else
                "at 0" if source.startswith(("no default", "none")) else "from the table")
        counts[kind] = counts.get(kind, 0) + 1
    shown = ", ".join(f"{counts[k]} {k}" for k in ("from the table", "by Chueh-Prausnitz", "from you", "at 0")
                      if k in counts)
    return f"{base}: {shown} (every pair with its source in --json and --record)"


def _common(parser, *, fractions: bool = True) -> None:
    source = parser.add_mutually_exclusive_group(required=True)
    source.add_argument("--mixture", help="components and mole fractions, e.g. 'methane=0.8,ethane=0.2'" if fractions
                        else "the two components, e.g. 'propane,n-butane'")
    source.add_argument("--feed", metavar="FILE",
                        help="a laboratory analysis (.csv or .toml) whose plus fraction is characterised "
                             "(see contin thermo characterise), e.g. --feed analysis.csv" if fractions else
                             "a feed file (.csv or .toml) of the two components (amounts are not used)")
    parser.add_argument("--kij", default=None, help=_KIJ_HELP)
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
                "  contin thermo envelope --mixture 'methane=0.8,ethane=0.1,propane=0.1' --eos pr "
                "--sweep 'kij:methane-propane=0,0.02,0.04' --workers 2 --out kij-sweep\n"
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
    from ._cli_common import add_output_options, add_translation_option
    from ._cli_sweep import KINDS, add_sweep_options
    from ._cli_sensitivity import add_sensitivity_options

    envelope = thermo_subparsers.add_parser(
        "envelope", help="phase envelope of a mixture", epilog=_EXAMPLES["envelope"],
        description="Trace the dew and bubble curves of a feed in one run, from the dew point at "
                    "--from-pressure through the cricondentherm, the critical point and the cricondenbar "
                    "to the bubble point; check every point for stability. " + CAUTION)
    _common(envelope)
    add_translation_option(envelope)
    add_output_options(envelope)
    add_sweep_options(envelope, tuple(KINDS))
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
        add_translation_option(parser)
        add_output_options(parser)
        add_sweep_options(parser, tuple(KINDS))
        parser.add_argument(option, required=True, metavar=unit,
                            help=f"fixed {option[2:]} ({unit} if bare; with a unit, e.g. {example})")
        parser.add_argument("--plot", default=None, metavar="FILE", help=f"draw the {name} diagram")
        parser.set_defaults(handler=run_binary, diagram=name)


def kij_used(args) -> list:
    """Every kij pair used by the last :func:`build_mixture` on ``args``, with its source."""
    return list(getattr(args, "kij_used", []))


def _mixture_input(args, mixture, z=None) -> dict:
    """What a run record keeps of a mixture command: components as used, kij, feed, model."""
    from ._cli_common import component_data

    data = {"command": getattr(args, "thermo_command", None), "eos": mixture.family.name,
            "components": [component_data(c) for c in mixture.components],
            "kij": [[float(v) for v in row] for row in mixture.kij], "kij_pairs": kij_used(args)}
    if z is not None:
        data["feed"] = [float(v) for v in z]
    return data


def _translated(args, result, z=None):
    """``result`` with Peneloux-type volume shifts if ``--volume-translation`` was given."""
    from ._cli_common import translation
    from ..models._translation import translate_mixture_result

    options = translation(args)
    if options is None:
        return result
    return translate_mixture_result(result, z, molar_masses=getattr(args, "molar_masses", None), **options)


def run_envelope(args) -> int:
    """``contin thermo envelope``: trace, then print JSON or a summary; write CSV and plot if asked."""
    from ._cli_common import check_destinations, emit, read_quantities, with_progress, with_translation_line
    from ._cli_sensitivity import sensitivity_plan
    from ..curves._envelope import trace_envelope

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
    from_pressure = read_quantities(args, args.from_pressure, "pressure", "--from-pressure", single=True)[0]
    plan = sensitivity_plan(args, mixture, z)
    from ._cli_sweep import sweep_command

    swept = sweep_command(args, {**_mixture_input(args, mixture, z), "from_pressure": from_pressure, "quality": quality})
    if swept is not None:
        return swept
    n = mixture.size
    envelope = with_progress(
        args, "envelope", lambda x: f"T = {math.exp(x[n]):.6g} K, P = {math.exp(x[-1]):.6g} Pa",
        lambda progress: trace_envelope(mixture, z, from_pressure=from_pressure, quality=quality, on_point=progress))
    from ..curves._envelope import _MAX_STEP, _STEP, _TOLERANCE
    from ..reports._plot_envelope import plot_envelope

    lines = []
    if plan is not None:  # on the equation's own volumes, before any translation
        envelope, lines = plan.apply(envelope)
    envelope = _translated(args, envelope, z)
    summary = with_translation_line(envelope.summary(args.units), envelope.stats)
    summary = summary[:-1] + lines + summary[-1:]
    return emit(args, envelope, "\n".join(summary), plot_envelope,
                {**_mixture_input(args, mixture, z), "from_pressure": from_pressure, "quality": quality},
                {"tolerance": _TOLERANCE, "step": _STEP, "max_step": _MAX_STEP}, {"kij": kij_used(args)})


def run_binary(args) -> int:
    """``contin thermo pxy|txy``."""
    from ..curves._binary import _MAX_STEP, _STEP, _TOLERANCE, pxy, txy
    from ._cli_common import check_destinations, emit, read_quantities, with_progress, with_translation_line

    check_destinations(args)
    mixture, _ = build_mixture(args, fractions=False)
    kind, text = ("temperature", args.temperature) if args.diagram == "pxy" else ("pressure", args.pressure)
    fixed = read_quantities(args, text, kind, f"--{kind}", single=True)[0]
    from ._cli_sweep import sweep_command

    swept = sweep_command(args, {**_mixture_input(args, mixture), "command": args.diagram, "fixed": fixed})
    if swept is not None:
        return swept
    diagram_of = pxy if args.diagram == "pxy" else txy
    diagram = with_progress(args, args.diagram, lambda x: f"x1 = {x[-1]:.6g}",
                            lambda progress: diagram_of(mixture, fixed, on_point=progress))
    from ..reports._plot_envelope import plot_binary

    diagram = _translated(args, diagram)
    return emit(args, diagram, "\n".join(with_translation_line(diagram.summary(args.units), diagram.stats)),
                plot_binary,
                {**_mixture_input(args, mixture), args.diagram[0].upper(): fixed},
                {"tolerance": _TOLERANCE, "step": _STEP, "max_step": _MAX_STEP}, {"kij": kij_used(args)})


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
    if getattr(args, "mixture", None) is not None and getattr(args, "feed", None) is not None:
        raise InputError("--mixture and --feed cannot be combined: give the mixture one way")
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
    stats = {"setup_seconds": 0.0, "trace_seconds": 0.0, "newton_iterations": 0, "jacobian_evaluations": 0}
    from ._cli_common import translation

    if translation(args) is not None:
        from ..models._translation import volume_shifts

        shifts = volume_shifts(mixture.components, mixture.family.name, molar_masses=getattr(args, "molar_masses", None),
                               **translation(args))
        row[2] -= shifts.of(z)
        stats["volume_translation"] = shifts.as_dict()
    special = [{"kind": "critical", "index": 0, "values": dict(zip(columns, row)),
                "info": {"eigenvalue": point.eigenvalue, "cubic_form": point.cubic}}]
    shown = output_units(getattr(args, "units", "si"))
    rows, names = convert_rows(columns, [row], {"T": "K", "P": "Pa", "v": "m3/mol"}, shown)
    text = csv_text(columns, rows, names, title="mixture critical point",
                    notes=[f"model: {mixture.family.label}; Heidemann & Khalil (1980) criterion"])
    queue(args, "csv", lambda path: fill_text(path, text))
    document = contin.json_document("completed", "critical point found (Heidemann-Khalil criterion)", columns,
                                    [row], special, [], stats,
                                    caution=CAUTION, model=mixture.family.label,
                                    components=list(mixture.names), feed=[float(v) for v in z], kij=kij_used(args))
    write_run_record(args, document, _mixture_input(args, mixture, z))
    finish(args)
    if getattr(args, "json", False):
        print(json.dumps(document))
    else:
        from ._cli_common import with_input_lines

        print(with_input_lines("\n".join(summary_lines("mixture critical point", [
            ("model", mixture.family.label),
            ("T", f"{shown.temperature_from_si(point.T):.6f} {shown.temperature}"),
            ("P", f"{shown.pressure_from_si(point.P):.6g} {shown.pressure}"),
            ("v", f"{row[2]:.6e} m3/mol" + (" (translated)" if "volume_translation" in stats else ""))])), args))
    return 0
