"""``--sensitivities``, ``--uncertainty``, ``--correlations`` and ``--monte-carlo`` of ``contin thermo envelope``.

Read and checked before the trace (bad input costs nothing); applied to the traced envelope: corners'
``info.sensitivities`` and ``info.standard_uncertainty``, a ``P_std`` column, and lines for the summary.
"""

from __future__ import annotations

from dataclasses import dataclass

from contin import InputError

__all__ = ["add_sensitivity_options", "SensitivityPlan", "sensitivity_plan"]

_CORNERS = ("cricondentherm", "critical", "cricondenbar")


def add_sensitivity_options(parser) -> None:
    """Add the options to an envelope parser."""
    parser.add_argument("--sensitivities", default=None, metavar="LIST",
                        help="dT/dq and dP/dq of the corners for these constants, e.g. "
                             "'kij:methane-n-heptane,Tc:methane,omega:n-heptane,z:ethane'")
    parser.add_argument("--uncertainty", default=None, metavar="LIST",
                        help="standard uncertainties of constants, relative with %% or absolute, e.g. "
                             "'Tc=0.5%%,Pc=1%%,omega=3%%,kij:methane-n-heptane=0.01' (bare Tc: every component); "
                             "adds a P_std column and the corners' standard uncertainties")
    parser.add_argument("--correlations", default=None, metavar="FILE",
                        help="correlations of the uncertain constants: a CSV with a header 'constant,LABEL,...' and "
                             "one row 'LABEL,r,...' per label (labels as in --uncertainty); others are independent")
    parser.add_argument("--monte-carlo", type=int, default=None, metavar="N",
                        help="also sample N envelopes with random constants, for comparison (needs --uncertainty)")
    parser.add_argument("--seed", type=int, default=12, help="seed of --monte-carlo (default 12)")


@dataclass(frozen=True)
class SensitivityPlan:
    """What was asked: the constants to report, the uncertainties, the Monte Carlo sample."""

    shown: tuple
    uncertainties: tuple
    samples: int | None
    seed: int
    correlation: object = None

    def apply(self, envelope):
        """(the annotated envelope, lines for the summary)."""
        from ..curves._corner_sensitivity import annotate, envelope_sensitivities, monte_carlo

        parameters = list(self.shown)
        for parameter, _ in self.uncertainties:
            if not any((p.kind, p.indices) == (parameter.kind, parameter.indices) for p in parameters):
                parameters.append(parameter)
        sensitivities = envelope_sensitivities(envelope, parameters)
        labels = [p.label for p in self.shown]
        standard = rows = sampled = None
        band = ()
        if self.uncertainties:
            standard, rows = sensitivities.propagate(self.uncertainties, self.correlation)
            band = sensitivities.band(self.uncertainties, envelope.column("T"), envelope.column("P"), self.correlation)
        if self.samples:
            sampled = monte_carlo(envelope, self.uncertainties, self.samples, self.seed, self.correlation)
        annotated = annotate(envelope, sensitivities, labels, standard, rows, sampled, band)
        return annotated, _lines(sensitivities, labels, standard, sampled)


def _lines(sensitivities, labels, standard, sampled) -> list[str]:
    """The summary's tables: each corner's sensitivities, then its standard uncertainties."""
    corners = [kind for kind in _CORNERS if kind in sensitivities.corners]
    lines = []
    if labels:
        width = max(len(label) for label in (*labels, "constant"))
        lines.append("  sensitivities (SI: K and Pa per unit of the constant):")
        lines.append(f"    {'corner':<15} {'constant':<{width}} {'dT/dq':>14} {'dP/dq':>14}")
        for kind in corners:
            for label, values in sensitivities.corner(kind, labels).items():
                lines.append(f"    {kind:<15} {label:<{width}} {values['T']:>14.6e} {values['P']:>14.6e}")
    if standard is not None:
        heading = "  standard uncertainties (linear propagation"
        columns = f"    {'corner':<15} {'u(T) K':>11} {'u(P) Pa':>11}"
        if sampled:
            first = next(iter(sampled.values()))
            heading += f"; Monte Carlo over {first['samples']} envelopes, {first['failed']} failed"
            columns += f" {'MC u(T) K':>11} {'MC u(P) Pa':>11}"
        lines += [heading + "):", columns]
        for kind in corners:
            line = f"    {kind:<15} {standard[kind]['T']:>11.4g} {standard[kind]['P']:>11.4g}"
            if sampled and kind in sampled:
                line += f" {sampled[kind]['T']:>11.4g} {sampled[kind]['P']:>11.4g}"
            lines.append(line)
    return lines


def sensitivity_plan(args, mixture, z) -> SensitivityPlan | None:
    """The plan from the parsed arguments, or None when none of the options was given.

    Raises:
        InputError: bad constants, uncertainties or correlations (see ``models._parameters``),
            --monte-carlo or --correlations without --uncertainty, a sample count out of range.
    """
    from ..models._parameters import parse_parameters, parse_uncertainties, read_correlations

    text, uncertainty, samples = args.sensitivities, args.uncertainty, args.monte_carlo
    if text is None and uncertainty is None:
        if samples is not None or args.correlations is not None:
            option = "--monte-carlo samples" if samples is not None else "--correlations correlates"
            raise InputError(f"{option} the constants' uncertainties: give them with --uncertainty")
        return None
    extra = mixture.components
    shown = () if text is None else parse_parameters(text, mixture.names, extra)
    uncertainties = () if uncertainty is None else parse_uncertainties(uncertainty, mixture, z, extra)
    if samples is not None and not uncertainty:
        raise InputError("--monte-carlo samples the constants' uncertainties: give them with --uncertainty")
    if samples is not None and not 2 <= samples <= 100000:
        raise InputError(f"--monte-carlo {samples}: give a number of samples from 2 to 100000")
    if args.correlations is not None and not uncertainty:
        raise InputError("--correlations correlates the constants' uncertainties: give them with --uncertainty")
    correlation = None if args.correlations is None else read_correlations(args.correlations, uncertainties,
                                                                            mixture.names, extra)
    return SensitivityPlan(tuple(shown), tuple(uncertainties), samples, int(args.seed), correlation)
