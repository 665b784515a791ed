"""The ``contin thermo`` command line: saturation, spinodal, critical and components (pure fluids).

Registered through the entry-point group ``contin.plugins``; the mixture commands (envelope, pxy,
txy, and ``critical --mixture``) come from ``contin_thermo.commands._cli_mixture`` when it is present.
"""

from __future__ import annotations

import argparse
import importlib
import json
import sys
import warnings

from contin import InputError

from ..models._caution import CAUTION
from ._cli_common import (add_output_options, add_translation_option, check_destinations, component_data, emit,
                          read_quantities, translation, with_progress, with_translation_line)
from ._cli_sweep import add_sweep_options, sweep_command
from ..models._components import all_components, custom_component, load_components, lookup
from ..models._eos import FAMILIES, family
from ..curves._pure import CurveResult, CubicFluid, critical_point, saturation_curve, spinodal_curve

__all__ = ["register", "run_pure"]


def _mixture_module():
    try:
        return importlib.import_module("contin_thermo.commands._cli_mixture")
    except ImportError:
        return None


def _add_fluid_options(parser: argparse.ArgumentParser, *, eos_required: bool = True) -> None:
    parser.add_argument("--fluid", metavar="NAME", help="a fluid of the component table (name or alias, e.g. propane, CO2, nC4)")
    parser.add_argument("--tc", metavar="K", help="critical temperature of your own fluid (with --pc and --omega), K if bare, e.g. 431.2 or '158 degC'")
    parser.add_argument("--pc", metavar="PA", help="critical pressure of your own fluid, Pa (or with a unit: 46bar)")
    parser.add_argument("--omega", metavar="W", help="acentric factor of your own fluid, e.g. 0.21")
    parser.add_argument("--name", default="custom fluid", help="name of your own fluid (default: 'custom fluid')")
    parser.add_argument("--components-file", metavar="FILE",
                        help="extra components from a CSV (name,Tc,Pc,omega) or TOML ([[component]]) file")
    parser.add_argument("--eos", required=eos_required, metavar="|".join(FAMILIES),
                        help="cubic equation of state: vdw, rk, srk or pr")
    parser.add_argument("--json", action="store_true", help="print one JSON object (always SI units) instead of a summary")
    parser.add_argument("--csv", metavar="FILE", help="write the rows as CSV (in the --units set, caution in the header)")
    parser.add_argument("--plot", metavar="FILE", help="draw P-T and T-rho diagrams into FILE (PNG, PDF, SVG)")
    add_translation_option(parser)
    add_output_options(parser)


def _add_range_options(parser: argparse.ArgumentParser, *, pressures: bool = True) -> None:
    parser.add_argument("--from-temperature", metavar="K", help="lowest temperature (default 0.4 Tc), K if bare, e.g. 150 or '-40 degC'")
    parser.add_argument("--at-temperatures", metavar="T1,T2,...", help="also give rows exactly at these temperatures, e.g. '0 degC,20 degC' or 250,300")
    if pressures:
        parser.add_argument("--at-pressures", metavar="P1,P2,...",
                            help="also give rows exactly at these pressures, Pa if bare, e.g. '1 atm' (the normal boiling point) or 5bar,10bar")


def register(subparsers) -> None:
    """Add ``contin thermo`` and its subcommands to the ``contin`` argument parser."""
    thermo = subparsers.add_parser(
        "thermo", help="cubic equations of state: saturation curves, spinodals, critical points",
        description="Thermodynamics of cubic equations of state. " + CAUTION,
        epilog="examples:\n  contin thermo saturation --fluid propane --eos pr\n"
               "  contin thermo envelope --mixture 'methane=0.9,propane=0.1' --eos pr\n"
               "  contin thermo components\n  contin thermo SUBCOMMAND --help",
    )
    commands = thermo.add_subparsers(dest="thermo_command", metavar="SUBCOMMAND")
    saturation = commands.add_parser(
        "saturation", help="vapour-liquid coexistence curve up to the critical point",
        description="Trace Psat(T), saturated volumes and densities and the enthalpy of vaporisation "
                    "from a low temperature to the critical point. " + CAUTION,
        epilog="examples:\n"
               "  contin thermo saturation --fluid propane --eos pr --at-pressures '1 atm' --plot propane.png\n"
               "  contin thermo saturation --tc 431.2 --pc 39.7bar --omega 0.21 --name blend-A --eos srk --json\n"
               "  contin thermo saturation --fluid CO2 --eos pr --from-temperature=-40degC --units degC-bar\n"
               "  contin thermo saturation --fluid propane --eos pr --sweep 'omega:propane=0.14,0.15,0.16'",
    )
    _add_fluid_options(saturation)
    _add_range_options(saturation)
    add_sweep_options(saturation, ("Tc", "Pc", "omega"))
    saturation.add_argument("--sensitivities", metavar="LIST",
                            help="dP/dq at fixed T on every row (columns dP_dTc, ...) and the critical point's, "
                                 "for the fluid's constants, e.g. 'Tc,Pc,omega'")
    saturation.set_defaults(handler=run_pure, curve="saturation")
    spinodal = commands.add_parser(
        "spinodal", help="liquid and vapour spinodals up to the critical point",
        description="Trace the limits of mechanical stability (dP/dv = 0) to the critical point. " + CAUTION,
        epilog="examples:\n  contin thermo spinodal --fluid n-butane --eos pr --plot spinodal.png\n"
               "  contin thermo spinodal --fluid water --eos srk --csv water-spinodal.csv",
    )
    _add_fluid_options(spinodal)
    _add_range_options(spinodal, pressures=False)
    spinodal.set_defaults(handler=run_pure, curve="spinodal")
    critical = commands.add_parser(
        "critical", help="critical point of a fluid (or of a mixture with --mixture)",
        description="Solve dP/dv = d2P/dv2 = 0 for a pure fluid; with --mixture, a mixture critical point. "
                    + CAUTION,
        epilog="examples:\n  contin thermo critical --fluid ethane --eos pr\n"
               "  contin thermo critical --mixture 'methane=0.7,ethane=0.2,propane=0.1' --eos srk --json\n"
               "  contin thermo critical --feed analysis.csv --eos pr --kij defaults,methane-ethane=0.005",
    )
    _add_fluid_options(critical)
    critical.add_argument("--mixture", metavar="NAME=X,...", help="mixture composition (mixture critical point)")
    critical.add_argument("--feed", metavar="FILE", help="a laboratory analysis (.csv or .toml) whose plus fraction "
                                                         "is characterised (mixture critical point)")
    critical.add_argument("--kij", metavar="defaults|none,A-B=K,...",
                          help="interaction parameters (with --mixture or --feed): defaults (the default with "
                               "--feed) or none (the default with --mixture), then pairs overriding single values")
    critical.add_argument("--component", action="append", default=[], metavar="NAME,Tc,Pc,omega",
                          help="an extra component for --mixture (repeatable)")
    critical.add_argument("--normalise", action="store_true",
                          help="scale the mole fractions of --mixture to sum to 1")
    critical.set_defaults(handler=_run_critical, curve="critical")
    components = commands.add_parser("components", help="list the component table",
                                     description="List the shipped components with their constants and sources.",
                                     epilog="examples:\n  contin thermo components\n  contin thermo components --json")
    components.add_argument("--json", action="store_true", help="print the table as JSON")
    components.set_defaults(handler=_run_components)
    characterise = commands.add_parser(
        "characterise", help="split and lump the plus fraction of a laboratory analysis",
        description="Read a feed (TOML or CSV) whose analysis ends in a plus fraction (mole fraction, molar "
                    "mass and specific gravity), split the plus fraction into carbon-number groups, give each "
                    "group its constants by a published correlation, and lump them into pseudo-components. "
                    + CAUTION,
        epilog="examples:\n  contin thermo characterise --feed analysis.csv\n"
               "  contin thermo characterise --feed analysis.toml --pseudo 4 --split exponential --json\n"
               "feed file (CSV), one row per component:\n  methane, 82.10\n  C7+, 4.12, molar_mass=182.0, "
               "specific_gravity=0.815",
    )
    characterise.add_argument("--feed", required=True, metavar="FILE", help="the analysis (.toml or .csv)")
    characterise.add_argument("--pseudo", type=int, default=3, metavar="N", help="number of pseudo-components (default 3)")
    characterise.add_argument("--split", default="gamma", help="gamma (Whitson 1983, default) or exponential "
                                                               "(Pedersen et al. 1984)")
    characterise.add_argument("--correlations", default="kesler-lee",
                              help="kesler-lee (default) or riazi-daubert, for Tc, Pc and omega")
    characterise.add_argument("--lumping", default="equal-mass", help="equal-mass (default) or whitson")
    characterise.add_argument("--normalise", action="store_true", help="scale the amounts to sum to 1")
    characterise.add_argument("--json", action="store_true", help="print the result as one JSON object")
    characterise.set_defaults(handler=_run_characterise)
    module = _mixture_module()
    if module is not None and hasattr(module, "register"):
        module.register(commands)
        from ._cli_corners import register_corners

        register_corners(commands)
    thermo.set_defaults(handler=lambda args: _no_subcommand(commands))


def _no_subcommand(commands) -> int:
    names = ", ".join(commands.choices)
    raise InputError(f"contin thermo needs a subcommand ({names}); see 'contin thermo --help'")


def _values(args, text, kind: str, argument: str) -> list[float]:
    return [] if text is None else read_quantities(args, text, kind, argument)


def _single(args, text, kind: str, argument: str):
    if text is None:
        return None
    return read_quantities(args, text, kind, argument, single=True)[0]


def _fluid(args) -> CubicFluid:
    own = [name for name in ("tc", "pc", "omega") if getattr(args, name) is not None]
    if args.components_file is not None and own:
        raise InputError(f"--components-file and --{own[0]} cannot be combined: name a fluid of the file with "
                         "--fluid, or give your own with --tc, --pc and --omega")
    extra = load_components(args.components_file) if args.components_file is not None else ()
    if args.fluid is not None and own:
        raise InputError(
            f"--fluid and --{own[0]} cannot be combined: name a fluid from the table with --fluid, or give "
            "your own with --tc, --pc and --omega"
        )
    if args.fluid is not None:
        component = lookup(args.fluid, extra=extra, argument="--fluid")
    elif own:
        missing = [f"--{name}" for name in ("tc", "pc", "omega") if getattr(args, name) is None]
        if missing:
            raise InputError(f"your own fluid needs --tc, --pc and --omega; missing {', '.join(missing)}")
        from ..models._units import parse_number

        omega = parse_number(args.omega, "--omega")
        component = custom_component(
            args.name, _single(args, args.tc, "temperature", "--tc"), _single(args, args.pc, "pressure", "--pc"), omega,
            argument="--tc/--pc/--omega",
        )
    else:
        raise InputError("name the fluid with --fluid NAME (see `contin thermo components`) or give --tc, --pc and --omega")
    return CubicFluid(component, family(args.eos, "--eos"))


def _check_two_phase(fluid: CubicFluid, start: float | None) -> None:
    """Refuse constants whose model fluid has no vapour-liquid region at the start temperature.

    A cubic equation of state is subcritical at T exactly when a(T)/(b R T) exceeds its value at the
    critical point, i.e. when alpha(T) > T/Tc (b does not depend on T).
    """
    c, f = fluid.component, fluid.family
    temperature = start if start is not None else 0.4 * c.Tc
    if not 0.0 < temperature < c.Tc:
        return  # the curve's own checks say what is wrong with the range
    alpha = float(f.alpha(temperature, c.Tc, c.omega)[0])
    if not alpha > temperature / c.Tc:
        raise InputError(
            f"--omega {c.omega:g}: with this acentric factor the {f.label} attraction term alpha(T) = {alpha:.3g} is "
            f"not above T/Tc = {temperature / c.Tc:.3g} at {temperature:g} K, so the model fluid has no "
            "vapour-liquid region there; real fluids have omega between about -0.4 and 1.5"
        )


def _format_row(columns, row) -> str:
    return ", ".join(f"{c} = {v:.8g}" for c, v in zip(columns, row))


def _summary(result: CurveResult, units: str = "si") -> str:
    from ..models._units import convert_rows, output_units

    c, f = result.component, result.family
    system = output_units(units)
    points, names = convert_rows(result.columns, result.points.tolist(), result.units, system)
    at, _ = convert_rows(result.columns, result.at.tolist(), result.units, system)
    special = [{**p, "values": dict(zip(p["values"], convert_rows(list(p["values"]), [list(p["values"].values())],
                                                                    result.units, system)[0][0]))}
               for p in result.special_points]
    lines = [
        f"{result.kind} of {c.name} with {f.label} (Tc = {c.Tc:g} K, Pc = {c.Pc:g} Pa, omega = {c.omega:g})",
        f"  status   : {result.status} - {result.message}",
        f"  points   : {len(result.points)} (Newton iterations {result.stats.get('newton_iterations')}, "
        f"trace {1e3 * float(result.stats.get('trace_seconds', 0.0)):.1f} ms)",
    ]
    if len(points):
        lines.append(f"  first    : {_format_row(result.columns, points[0])}")
    for point in special:
        values = ", ".join(f"{k} = {v:.10g}" for k, v in point["values"].items())
        lines.append(f"  {point['kind']:<9}: {values}")
    for row in at:
        lines.append(f"  at       : {_format_row(result.columns, row)}")
    lines.append("  units    : " + ", ".join(f"{col} [{names[col] or '-'}]" for col in result.columns))
    lines.append(CAUTION)
    return "\n".join(with_translation_line(lines, result.stats))


def _emit(result: CurveResult, args) -> int:
    import inspect

    if translation(args) is not None:
        from ..models._translation import translate_curve

        result = translate_curve(result, **translation(args))
    from ..reports._plot_pure import plot_pure

    defaults = {name: parameter.default for name, parameter in
                inspect.signature(saturation_curve if args.curve != "spinodal" else spinodal_curve).parameters.items()
                if name in ("tolerance", "max_step")}
    return emit(args, result, _summary(result, args.units), plot_pure,
                {"command": args.curve, "fluid": component_data(result.component), "eos": result.family.name},
                defaults if args.curve != "critical" else {"tolerance": 1e-15})


def run_pure(args) -> int:
    """Handler of ``contin thermo saturation|spinodal|critical`` for one fluid; returns the exit status."""
    check_destinations(args)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fluid = _fluid(args)
    for warning in caught:
        print(f"contin: warning: {warning.message}", file=sys.stderr)
    if args.curve == "critical":
        return _emit(critical_point(fluid), args)
    start = _single(args, args.from_temperature, "temperature", "--from-temperature")
    _check_two_phase(fluid, start)
    temperatures = _values(args, args.at_temperatures, "temperature", "--at-temperatures")
    tc = fluid.component.Tc
    if args.curve == "spinodal":
        trace = lambda progress: spinodal_curve(  # noqa: E731
            fluid, from_temperature=start, at_temperatures=temperatures, on_point=progress)
    else:
        pressures = _values(args, args.at_pressures, "pressure", "--at-pressures")
        swept = sweep_command(args, {"command": "saturation", "eos": fluid.family.name,
                                     "components": [component_data(fluid.component)], "from_temperature": start,
                                     "at_temperatures": temperatures, "at_pressures": pressures})
        if swept is not None:
            return swept
        trace = lambda progress: saturation_curve(  # noqa: E731
            fluid, from_temperature=start, at_temperatures=temperatures, at_pressures=pressures, on_point=progress)
    constants = getattr(args, "sensitivities", None)
    if constants is not None:
        from ..curves._corner_sensitivity import parse_fluid_constants

        constants = parse_fluid_constants(constants)
    result = with_progress(args, f"{args.curve} of {fluid.component.name}", lambda x: f"T = {x[-1] * tc:.6g} K", trace)
    if constants is not None and result.success:
        from ..curves._corner_sensitivity import annotate_saturation

        result = annotate_saturation(result, constants)
    return _emit(result, args)


def _run_critical(args) -> int:
    if args.mixture is not None or args.feed is not None:
        module = _mixture_module()
        if module is None or not hasattr(module, "run_critical"):
            raise InputError("--mixture needs the mixture commands, which are not installed in this version")
        return int(module.run_critical(args) or 0)
    if args.kij is not None or args.component or args.normalise:
        raise InputError("--kij, --component and --normalise apply to mixtures only; add --mixture or --feed, "
                         "or drop them")
    if args.eos is None:
        raise InputError("--eos is required: choose vdw, rk, srk or pr")
    return run_pure(args)


def _run_characterise(args) -> int:
    """``contin thermo characterise``: the pseudo-components of a feed's plus fraction, with methods and checks."""
    from ..models._characterise import characterise
    from ..models._feed import read_feed

    rows = [{key: value for key, value in row.items() if key != "line"} for row in read_feed(args.feed)]
    result = characterise(rows, split=args.split, correlations=args.correlations, n_pseudo=args.pseudo,
                          lumping=args.lumping, normalise=args.normalise)
    table = [p.as_dict() for p in result.pseudo]
    if args.json:
        print(json.dumps({"components": table, "feed": [{"name": c.name, "z": float(z)} for c, z in
                                                       zip(result.components, result.z)],
                          "watson_k": result.watson_k, "methods": result.methods, "checks": result.checks,
                          "notes": list(result.notes), "caution": CAUTION}))
        return 0
    print(f"characterised feed: {args.feed}")
    print(f"  {'name':10s} {'z':>9s} {'M g/mol':>9s} {'SG':>7s} {'Tb / K':>8s} {'Tc / K':>8s} {'Pc / bar':>9s} {'omega':>7s}")
    for row in table:
        print(f"  {row['name']:10s} {row['z']:9.5f} {row['molar_mass']:9.2f} {row['specific_gravity']:7.4f} "
              f"{row['boiling_point']:8.2f} {row['Tc']:8.2f} {row['Pc'] / 1e5:9.3f} {row['omega']:7.4f}")
    print(f"  Watson characterisation factor: {result.watson_k:.4f}")
    print("methods:")
    for step, text in result.methods.items():
        print(f"  {step}: {text}")
    print("checks: " + json.dumps(result.checks))
    for note in result.notes:
        print(f"note: {note}")
    print(CAUTION)
    return 0


def _run_components(args) -> int:
    table = all_components()
    if args.json:
        print(json.dumps({"components": [
            {"name": c.name, "Tc": c.Tc, "Pc": c.Pc, "omega": c.omega, "aliases": list(c.aliases), "source": c.source}
            for c in table]}))
        return 0
    width = max(len(c.name) for c in table)
    print(f"{'name'.ljust(width)}  {'Tc / K':>8}  {'Pc / Pa':>10}  {'omega':>7}  aliases")
    for c in table:
        print(f"{c.name.ljust(width)}  {c.Tc:8.2f}  {c.Pc:10.4g}  {c.omega:7.3f}  {', '.join(c.aliases)}")
    sources = sorted({c.source for c in table})
    print("sources: " + "; ".join(sources))
    return 0
