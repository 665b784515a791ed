"""``contin thermo corners``: how an envelope's critical point, cricondenbar and cricondentherm move with
one constant (``--vary "kij:methane-n-octane=0:0.12"``) or along a blend of two feeds (``--vary "blend:...=0:1"``)."""

from __future__ import annotations

import numpy as np

from contin import InputError

__all__ = ["register_corners", "parse_vary", "run_corners"]

_EXAMPLES = ("examples:\n"
             "  contin thermo corners --mixture 'methane=0.7,ethane=0.1,propane=0.1,n-butane=0.07,n-octane=0.03' "
             "--eos pr --vary 'kij:methane-n-octane=0:0.12' --plot corners.png\n"
             "  contin thermo corners --mixture 'methane=0.70,ethane=0.10,propane=0.08,n-butane=0.05,n-heptane=0.07' "
             "--eos srk --vary 'blend:methane=0.80,ethane=0.08,propane=0.06,n-butane=0.04,n-heptane=0.02=0:1' --json")


def register_corners(thermo_subparsers) -> None:
    """Add ``corners`` (with the mixture options of ``envelope``)."""
    from ..models._caution import CAUTION
    from ._cli_common import add_output_options
    from ._cli_mixture import _common

    parser = thermo_subparsers.add_parser(
        "corners", help="loci of an envelope's corners in one constant or a blend", epilog=_EXAMPLES,
        description="Trace the critical point, the cricondenbar and the cricondentherm of a feed's envelope as "
                    "curves in one constant (kij, Tc, Pc, omega of a component, a feed fraction) or in the blend "
                    "z = (1 - lambda) z_A + lambda z_B of two feeds. " + CAUTION)
    _common(parser)
    add_output_options(parser)
    parser.add_argument("--vary", required=True, metavar="CONSTANT=FIRST:LAST",
                        help="the constant and its range, e.g. 'kij:methane-n-octane=0:0.12', 'Tc:n-octane=560:580' "
                             "or 'blend:methane=0.8,ethane=0.2=0:1' (the second feed in the --mixture syntax)")
    parser.add_argument("--from-pressure", default="1e5", metavar="PA",
                        help="low pressure of the envelopes drawn at the ends and the middle (default 1e5 Pa)")
    parser.add_argument("--plot", default=None, metavar="FILE",
                        help="draw the corners' paths over the envelopes at the ends and the middle")
    parser.set_defaults(handler=run_corners)


def parse_vary(text: str, mixture, z, extra=()):
    """(ModelParameter, (first, last)) from ``--vary``.

    Raises:
        InputError: no ``=FIRST:LAST``, a range that is not two different numbers, a constant as in
            ``--sensitivities``, a blend whose feed has other components, a value the model cannot take.
    """
    from ..models._parameters import blend_parameter, parse_parameter, perturbed
    from ..models._units import parse_number
    from ._cli_mixture import parse_mixture

    key, equals, span = str(text).strip().rpartition("=")
    ends = span.split(":")
    if not equals or len(ends) != 2:
        raise InputError(f"--vary {text!r} must be CONSTANT=FIRST:LAST, e.g. 'kij:methane-n-octane=0:0.12'")
    first, last = (parse_number(end, f"--vary {text!r}: the range") for end in ends)
    if first == last:
        raise InputError(f"--vary {text!r}: the range {first:g}:{last:g} is empty; give two different values")
    if key.strip().startswith("blend:"):
        components, second = parse_mixture(key.strip().removeprefix("blend:"), extra)
        names = [c.name for c in components]
        if sorted(names) != sorted(mixture.names):
            raise InputError(f"--vary blend: the second feed has {', '.join(names)}; give it the components of "
                             f"--mixture ({', '.join(mixture.names)})")
        z_second = np.array([second[names.index(name)] for name in mixture.names])
        parameter = blend_parameter(z, z_second)
    else:
        parameter = parse_parameter(key, mixture.names, extra, argument="--vary")
    for value in (first, last):
        perturbed(mixture, z, parameter, value)  # refuses a value the model cannot take
    return parameter, (first, last)


def run_corners(args) -> int:
    """``contin thermo corners``."""
    from ..curves._corner_loci import corner_loci
    from ..models._units import parse_pressure
    from ..reports._plot_envelope import plot_corner_loci
    from ._cli_common import check_destinations, emit
    from ._cli_mixture import _mixture_input, build_mixture

    check_destinations(args)
    mixture, z = build_mixture(args)
    parameter, span = parse_vary(args.vary, mixture, z, mixture.components)
    from_pressure = parse_pressure(args.from_pressure, "--from-pressure")
    loci = corner_loci(mixture, z, parameter, span, from_pressure=from_pressure)
    return emit(args, loci, "\n".join(loci.summary(args.units)), plot_corner_loci,
                {**_mixture_input(args, mixture, z), "vary": args.vary, "from_pressure": from_pressure}, {})
