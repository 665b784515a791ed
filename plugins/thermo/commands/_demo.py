"""`contin demo`: the main job on an embedded default, set in an invented gas plant.

The Harrow Ridge gas plant (invented) receives a rich gas from the Kestrel Flats field (invented; the
laboratory analysis below, ending in a heptanes-plus fraction, is made up for this demo and matches
no published sample). The demo characterises the plus fraction into pseudo-components (the defaults
of ``contin thermo characterise``), takes the default interaction parameters, traces the feed's phase
envelope through cricondentherm, critical point and cricondenbar; the saturation curves of two of its
components; and the envelope again for four values of the methane - heaviest pseudo-component
interaction parameter, with the paths its three corners take in between (one continuation each, as
``contin thermo corners``). It writes CSV, JSON and PNG files into a folder and prints a summary with
the pseudo-components, units and the caution.
"""

from __future__ import annotations

import json
import math
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from contin import InputError

from ..models._caution import CAUTION
from ._cli_common import add_units_option
from ..models._eos import family
from ..models._units import output_units

__all__ = ["FEED", "PLUS_FRACTION", "SCENARIO", "INTERACTION_STUDY", "run_demo", "register"]

SCENARIO = "Harrow Ridge gas plant (invented), rich gas from the Kestrel Flats field (invented)"
# Made-up laboratory analysis, mole fractions summing to 1, ending in a heptanes-plus fraction.
FEED = {
    "nitrogen": 0.011, "carbon dioxide": 0.021, "methane": 0.731, "ethane": 0.096, "propane": 0.058,
    "isobutane": 0.013, "n-butane": 0.022, "isopentane": 0.009, "n-pentane": 0.010, "n-hexane": 0.012,
    "C7+": 0.017,
}
# The plus fraction's measured properties (made up): molar mass g/mol, specific gravity 60/60 degF.
PLUS_FRACTION = {"name": "C7+", "molar_mass": 110.0, "specific_gravity": 0.745}
EOS = "pr"
SATURATION_FLUIDS = ("propane", "n-butane")
# The pair whose interaction parameter the study varies (methane and the heaviest pseudo-component,
# named once the plus fraction is characterised), and its values; the other pairs keep their defaults.
HEAVIEST = "heaviest pseudo-component"
INTERACTION_STUDY = (("methane", HEAVIEST), (0.0, 0.04, 0.08, 0.12))
SPECIAL_KINDS = ("cricondentherm", "critical", "cricondenbar")


def _characterised():
    """The analysis with its plus fraction characterised by the defaults of ``contin thermo characterise``."""
    from ..models._characterise import characterise

    rows = [(name, z, PLUS_FRACTION["molar_mass"], PLUS_FRACTION["specific_gravity"]) if name == PLUS_FRACTION["name"]
            else (name, z) for name, z in FEED.items()]
    return characterise(rows)


def _mixture(characterised, kij_value: float | None = None):
    """(mixture, z, kij pairs with sources): the default kij, the study's pair set to ``kij_value`` if given."""
    from ..models._kij import resolve_kij
    from ..models._mixture import Mixture

    components = characterised.components
    (a, _), _ = INTERACTION_STUDY
    pairs = [] if kij_value is None else [(f"{a}-{components[-1].name}", kij_value)]
    kij = resolve_kij(components, EOS, "defaults", pairs, components)
    return Mixture(components, family(EOS), kij.matrix), np.array(characterised.z, dtype=float), kij.pairs()


def _prepare_folder(folder: Path) -> Path:
    """Create ``folder`` and prove it writable before any work is done."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        probe = tempfile.NamedTemporaryFile(dir=folder, prefix=".write-test-", delete=True)
        probe.close()
    except OSError as error:
        raise InputError(f"--out: cannot write into {str(folder)!r} ({error.strerror or error}); "
                         "choose another folder") from None
    return folder


def _write_json(path: Path, document: dict) -> None:
    from contin.base import write_text_atomically

    write_text_atomically(path, json.dumps(document, indent=1) + "\n")


def _save(figure, path: Path) -> None:
    from contin.base import save_figure

    save_figure(figure, path, argument="demo")


def _draw_envelopes(ax, envelopes, labels, *, split_sides: bool, annotate: bool) -> None:
    from contin.base import axis_label, describe_kind, mark_special

    from ..reports._plot_envelope import smooth_curve

    for envelope, label in zip(envelopes, labels):
        T, P = envelope.column("T"), envelope.column("P") / 1e5
        if split_sides:
            critical = envelope.special("critical")
            if critical is not None:  # the critical point is a row: both curves run to it
                t_dew, p_dew = T[:critical["index"] + 1], P[:critical["index"] + 1]
                t_bub, p_bub = T[critical["index"]:], P[critical["index"]:]
            else:
                dew = np.array([side == "dew" for side in envelope.column("side")], dtype=bool)
                t_dew, p_dew, t_bub, p_bub = T[dew], P[dew], T[~dew], P[~dew]
            line, = ax.plot(*smooth_curve(t_dew, p_dew), "-", lw=2.0, label="dew curve")
            ax.plot(*smooth_curve(t_bub, p_bub), "--", color=line.get_color(), lw=1.8, label="bubble curve")
        else:
            ax.plot(*smooth_curve(T, P), "-", lw=1.5, label=label)
    for k, envelope in enumerate(envelopes):
        for kind in SPECIAL_KINDS:
            sp = envelope.special(kind)
            if sp is None:
                continue
            x, y = sp["values"]["T"], sp["values"]["P"] / 1e5
            mark_special(ax, kind, x, y, label=describe_kind(kind) if k == 0 else None,
                         words=describe_kind(kind) if annotate and k == 0 else None, offset=(7, 4))
    ax.set_xlabel(axis_label("temperature T", "K"))
    ax.set_ylabel(axis_label("pressure P", "bar"))
    ax.grid(True, alpha=0.3)


def _envelope_figure(envelope, title: str):
    from contin.base import pyplot as _pyplot

    figure, ax = _pyplot().subplots(figsize=(7.5, 5.5), layout="constrained")
    _draw_envelopes(ax, [envelope], ["feed"], split_sides=True, annotate=True)
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=8, loc="upper left")
    _caption(figure, f"model: {family(EOS).label}, one-fluid mixing, default kij (published table; Chueh-Prausnitz "
                     f"for methane with the heavy ends); C7+ characterised into pseudo-components. {CAUTION}")
    return figure


def _study_figure(envelopes, labels, title: str, loci=None):
    """The whole envelopes on the left; the region round the critical point and cricondenbar enlarged;
    the corners' paths between the envelopes (``loci``, from ``corner_loci``) on both."""
    from contin.base import pyplot as _pyplot

    from ..reports._plot_envelope import smooth_curve

    figure, (whole, near) = _pyplot().subplots(1, 2, figsize=(11, 5), layout="constrained")
    _draw_envelopes(whole, envelopes, labels, split_sides=False, annotate=False)
    _draw_envelopes(near, envelopes, labels, split_sides=False, annotate=True)
    for corner in ((loci.loci if loci is not None else ())):
        curve = loci.curve(corner)
        for ax in (whole, near):
            ax.plot(*smooth_curve(curve[:, 1], curve[:, 2] / 1e5), "-", color="0.25", lw=3.0, alpha=0.6,
                    label="paths of the corners" if ax is whole and corner == "critical" else None)
    points = [sp["values"] for e in envelopes for sp in e.special_points if sp["kind"] in ("critical", "cricondenbar")]
    if points:
        T = [p["T"] for p in points]
        P = [p["P"] / 1e5 for p in points]
        near.set_xlim(min(T) - 25.0, max(T) + 25.0)
        near.set_ylim(min(P) - 12.0, max(P) + 4.0)
    whole.set_title(title, fontsize=10)
    near.set_title("enlarged: critical point and cricondenbar", fontsize=10)
    whole.legend(fontsize=8, loc="upper left")
    _caption(figure, f"model: {family(EOS).label}, one-fluid mixing; only the named kij varies, the others keep "
                     f"their defaults. {CAUTION}")
    return figure


def _caption(figure, text: str) -> None:
    import textwrap

    wrapped = textwrap.fill(text, 150)
    lines = wrapped.count("\n") + 1
    engine = figure.get_layout_engine()
    if engine is not None and hasattr(engine, "set"):
        engine.set(rect=(0.0, 0.03 * lines, 1.0, 1.0 - 0.03 * lines))
    figure.text(0.01, 0.005, wrapped, fontsize=6.5, ha="left", va="bottom")


def _saturation_figure(curves):
    from contin.base import pyplot as _pyplot, axis_label, describe_kind, mark_special, smooth_xy

    plt = _pyplot()
    figure, (left, right) = plt.subplots(1, 2, figsize=(10, 4.6), layout="constrained")
    for curve in curves:
        name = curve.component.name
        T = curve.column("T")
        line, = left.plot(*smooth_xy(T, curve.column("P") / 1e5, log_y=True), "-", lw=1.6, label=name)
        c = curve.special("critical")["values"]
        # The coexisting densities as one smooth dome through the critical point (liquid up, vapour down).
        dome_rho = np.concatenate([curve.column("rho_liquid"), curve.column("rho_vapour")[::-1]])
        dome_T = np.concatenate([T, T[::-1]])
        right.plot(*smooth_xy(dome_rho, dome_T, log_x=True), "-", color=line.get_color(), lw=1.6,
                   label=f"{name} liquid and vapour")
        left.set_yscale("log")
        right.set_xscale("log")
        label = describe_kind("critical") if curve is curves[0] else None
        mark_special(left, "critical", c["T"], c["P"] / 1e5, label=label)
        mark_special(right, "critical", 1.0 / c["v"], c["T"], label=label)
    for curve in curves:  # label the critical points once the axes have their final limits
        c = curve.special("critical")["values"]
        left.annotate(curve.component.name, (c["T"], c["P"] / 1e5), textcoords="offset points", xytext=(-8, 4),
                      fontsize=8, ha="right", annotation_clip=True)
    left.set_xlabel(axis_label("temperature T", "K"))
    left.set_ylabel(axis_label("saturation pressure P", "bar"))
    right.set_xlabel(axis_label("molar density ρ", "mol/m³"))
    right.set_ylabel(axis_label("temperature T", "K"))
    for ax in (left, right):
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8, loc="best")
    left.set_title("vapour pressure", fontsize=10)
    right.set_title("coexisting densities", fontsize=10)
    _caption(figure, f"model: {family(EOS).label}. {CAUTION}")
    return figure


def _format_t(units, kelvin: float) -> str:
    return f"{units.temperature_from_si(kelvin):.2f} {units.temperature}"


def _format_p(units, pascal: float) -> str:
    value = units.pressure_from_si(pascal)
    return f"{value:.4g} {units.pressure}" if units.pressure != "Pa" else f"{value:.6g} Pa"


def run_demo(out: str | os.PathLike = "contin-demo", *, units: str = "degC-bar", stream=None) -> dict:
    """Run the demo, write its files into ``out``, print the summary to ``stream``; return the results.

    Raises:
        InputError: the output folder cannot be written (checked before any work, so nothing is
            half-written), or an unknown unit system.
    """
    from contin.base import pyplot as _pyplot

    from ..curves._envelope import trace_envelope
    from ..curves._pure import saturation_curve

    stream = stream if stream is not None else sys.stdout
    shown = output_units(units)
    _pyplot(headless=True)  # the demo only writes files
    folder = _prepare_folder(Path(out))
    began = time.perf_counter()
    characterised = _characterised()
    mixture, z, kij_pairs = _mixture(characterised)
    envelope = trace_envelope(mixture, z)
    curves = [saturation_curve(name, EOS, at_pressures=[101325.0]) for name in SATURATION_FLUIDS]
    (first, _), values = INTERACTION_STUDY
    pair = (first, characterised.components[-1].name)
    study = [trace_envelope(*_mixture(characterised, value)[:2], check_stability=False) for value in values]
    from ..curves._corner_loci import corner_loci
    from ..models._parameters import parse_parameter

    start_mixture, start_z, _ = _mixture(characterised, values[0])
    varied = parse_parameter(f"kij:{pair[0]}-{pair[1]}", start_mixture.names, start_mixture.components)
    loci = corner_loci(start_mixture, start_z, varied, (values[0], values[-1]), at=values[1:-1], pictured=False)
    seconds = time.perf_counter() - began

    written = []

    def keep(path: Path) -> None:
        written.append(path.name)

    envelope.to_csv(folder / "envelope.csv"); keep(folder / "envelope.csv")
    _write_json(folder / "envelope.json", {**envelope.to_dict(), "kij": kij_pairs,
                                           "characterisation": {**characterised.to_dict(), "analysis": FEED}})
    keep(folder / "envelope.json")
    _save(_envelope_figure(envelope, "Phase envelope of the Kestrel Flats rich gas (invented feed)"),
          folder / "envelope.png"); keep(folder / "envelope.png")
    for curve in curves:
        stem = f"saturation-{curve.component.name.replace(' ', '-')}"
        curve.to_csv(folder / f"{stem}.csv"); keep(folder / f"{stem}.csv")
        _write_json(folder / f"{stem}.json", curve.to_dict()); keep(folder / f"{stem}.json")
    _save(_saturation_figure(curves), folder / "saturation.png"); keep(folder / "saturation.png")
    labels = [f"k({pair[0]}, {pair[1]}) = {value:g}" for value in values]
    _save(_study_figure(study, labels, f"How the envelope moves with k({pair[0]}, {pair[1]})", loci),
          folder / "interaction-study.png"); keep(folder / "interaction-study.png")
    study_rows = []
    for value, result in zip(values, study):
        row = {"kij": value, "status": result.status}
        for kind in SPECIAL_KINDS:
            sp = result.special(kind)
            row[kind] = None if sp is None else {"T": sp["values"]["T"], "P": sp["values"]["P"]}
        study_rows.append(row)
    paths = {corner: {"kij": [row[0] for row in rows], "T": [row[1] for row in rows], "P": [row[2] for row in rows],
                      "status": status, "message": message}
             for corner, (_, rows, status, message, _, _) in loci.loci.items()}
    _write_json(folder / "interaction-study.json", {"pair": list(pair), "eos": EOS, "feed": FEED,
                                                    "components": list(mixture.names), "z": [float(v) for v in z],
                                                    "runs": study_rows, "corner_paths": paths, "caution": CAUTION})
    keep(folder / "interaction-study.json")

    say = lambda text="": print(text, file=stream)  # noqa: E731
    say(f"contin demo: {SCENARIO}")
    say(f"model: {family(EOS).label}; made-up laboratory analysis of {len(FEED) - 1} components and "
        f"{PLUS_FRACTION['name']} ({FEED[PLUS_FRACTION['name']]:.2%}, M = {PLUS_FRACTION['molar_mass']:g} g/mol, "
        f"SG = {PLUS_FRACTION['specific_gravity']:g}); default kij")
    say()
    say(f"{PLUS_FRACTION['name']} characterised into {len(characterised.pseudo)} pseudo-components:")
    say(f"  {'name':<10}{'z':>9}{'M g/mol':>9}{'SG':>8}{'Tc':>14}{'Pc':>14}{'omega':>8}")
    for p in characterised.pseudo:
        say(f"  {p.name:<10}{p.z:>9.5f}{p.molar_mass:>9.2f}{p.specific_gravity:>8.4f}{_format_t(shown, p.Tc):>14}"
            f"{_format_p(shown, p.Pc):>14}{p.omega:>8.4f}")
    say("  methods (with their sources):")
    for step, text in characterised.methods.items():
        say(f"    {step}: {text}")
    check = characterised.checks["split"]
    say(f"  the split reproduces M+ and SG+ to {max(check['molar_mass']['relative_error'], check['specific_gravity']['relative_error']):.1e} "
        "(relative)")
    say()
    say(f"Feed phase envelope: {len(envelope.rows)} points, {'complete' if envelope.success else envelope.message}")
    say(f"  {'special point':<16}{'T':>14}{'P':>16}")
    for kind in SPECIAL_KINDS:
        sp = envelope.special(kind)
        if sp is not None:
            say(f"  {kind:<16}{_format_t(shown, sp['values']['T']):>14}{_format_p(shown, sp['values']['P']):>16}")
    for line in envelope.summary(units):
        if "metastable" in line or "stability" in line:
            say(f"  {line.strip()}")
    say()
    say("Saturation curves of two feed components:")
    for curve in curves:
        c = curve.special("critical")["values"]
        boiling = curve.at[0][0] if len(curve.at) else math.nan
        say(f"  {curve.component.name:<10} normal boiling point {_format_t(shown, boiling)}; "
            f"critical point {_format_t(shown, c['T'])}, {_format_p(shown, c['P'])}")
    say()
    say(f"Interaction parameter study, k({pair[0]}, {pair[1]}):")
    say(f"  {'kij':>6}{'cricondentherm T':>20}{'cricondenbar P':>18}")
    for row in study_rows:
        ct, cb = row["cricondentherm"], row["cricondenbar"]
        say(f"  {row['kij']:>6g}{(_format_t(shown, ct['T']) if ct else 'n/a'):>20}"
            f"{(_format_p(shown, cb['P']) if cb else 'n/a'):>18}")
    say(f"  the corners' paths in between: one continuation each ({', '.join(f'{c} {len(locus.rows)} points' for c, locus in loci.loci.items())})")
    say()
    say(f"files in {folder}/: {', '.join(written)}  ({seconds:.1f} s)")
    say(CAUTION)
    return {"envelope": envelope, "saturation": curves, "study": study, "folder": folder, "files": written}


def register(subparsers) -> None:
    """Add ``contin demo`` (entry point of group ``contin.plugins``)."""
    parser = subparsers.add_parser(
        "demo",
        help="run the main job on a built-in invented gas-plant feed",
        description="Characterise the heptanes-plus fraction of an invented rich-gas analysis, trace the "
                    "phase envelope (cricondentherm, critical point, cricondenbar), the saturation curves of two "
                    "of its components, and the envelope for four values of one interaction parameter; write "
                    "CSV, JSON and PNG files.",
        epilog="examples:\n  contin demo\n  contin demo --out contin-demo --units degF-psia",
    )
    parser.add_argument("--out", default="contin-demo", metavar="DIR",
                        help="folder for the CSV, JSON and PNG files (default: ./contin-demo)")
    add_units_option(parser, "degC-bar", "the printed summary (files are always SI)")
    parser.set_defaults(handler=_handle)


def _handle(args) -> int:
    run_demo(args.out, units=args.units)
    return 0
