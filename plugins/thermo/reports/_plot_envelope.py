"""P-T plot of a phase envelope with its special points marked; Pxy and Txy plots of binary diagrams."""

from __future__ import annotations

import textwrap

import numpy as np

from ..models._caution import CAUTION

__all__ = ["draw_binary", "draw_corner_loci", "draw_envelope", "plot_binary", "plot_corner_loci", "plot_envelope",
           "smooth_curve"]

def smooth_curve(T: np.ndarray, P: np.ndarray, samples: int = 10):
    """A curve through the points (T, P), drawn smooth: a cubic spline in (ln T, ln P) against chord length.

    Every traced point is exact; only the drawing between them is interpolated (straight chords show
    corners where the steps are long). Falls back to the points themselves for fewer than four.
    """
    from scipy.interpolate import CubicSpline

    keep = np.isfinite(T) & np.isfinite(P) & (T > 0) & (P > 0)
    x, y = np.log(T[keep]), np.log(P[keep])
    if x.size < 4:
        return T[keep], P[keep]
    chord = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))])
    distinct = np.concatenate([[True], np.diff(chord) > 1e-12 * max(chord[-1], 1e-300)])
    chord, x, y = chord[distinct], x[distinct], y[distinct]
    if chord.size < 4:
        return np.exp(x), np.exp(y)
    s = np.linspace(0.0, chord[-1], samples * chord.size)
    return np.exp(CubicSpline(chord, x)(s)), np.exp(CubicSpline(chord, y)(s))


def plot_envelope(envelope, path):
    """Draw ``envelope`` in the P-T plane into ``path`` (PNG, SVG or PDF by the suffix)."""
    from contin.base import pyplot as _pyplot, save_figure

    _pyplot(headless=True)
    return save_figure(draw_envelope(envelope).figure, path)


def draw_envelope(envelope, axes=None):
    """Draw ``envelope`` in the P-T plane (bar against K) on ``axes`` (a new figure if None); returns the axes."""
    from contin.base import pyplot as _pyplot, axis_label, describe_kind, mark_special

    plt = _pyplot()
    T = envelope.column("T")
    P = envelope.column("P") / 1e5
    side = envelope.column("side")
    if axes is None:
        figure, axes = plt.subplots(figsize=(7.5, 5.5))
    figure = axes.figure
    critical = envelope.special("critical")
    if critical is not None:
        # The critical point is a row: the dew curve runs to it, the bubble curve from it (rows past it
        # that turn liquid-liquid stay on the second curve).
        index = critical["index"]
        pieces = (("dew", "-", slice(0, index + 1)), ("bubble", "--", slice(index, len(T))))
    else:
        pieces = tuple((name, style, np.array([value == name for value in side], dtype=bool))
                       for name, style in (("dew", "-"), ("bubble", "--")))
    for name, style, rows in pieces:
        t_side, p_side = T[rows], P[rows]
        if t_side.size == 0:
            continue
        xs, ys = smooth_curve(t_side, p_side)
        axes.plot(xs, ys, style, color="tab:blue", label=f"{name} curve")
    if envelope.band:
        _draw_band(axes, envelope.band)
    for line in envelope.quality_lines:
        axes.plot(line.T, line.P / 1e5, ":", color="tab:gray", label=f"vapour fraction {line.beta:g}")
    for sp in envelope.special_points:
        label = describe_kind(sp["kind"])
        t, p = sp["values"]["T"], sp["values"]["P"] / 1e5
        mark_special(axes, sp["kind"], t, p)
        right = t > 0.5 * (np.nanmin(T) + np.nanmax(T))
        top = sp["kind"] == "cricondenbar"  # the top of the envelope: above and to the right, in the headroom
        axes.annotate(f"{label}\n{t:.2f} K, {p:.2f} bar", (t, p), textcoords="offset points",
                      xytext=(8, 8) if top else (-10, 6) if right else (8, 6),
                      ha="left" if top else "right" if right else "left", fontsize=8)
    low, high = axes.get_ylim()
    axes.set_ylim(low, high + 0.1 * (high - low))  # room for the labels of points at the top, inside the axes
    axes.set_xlabel(axis_label("temperature T", "K"))
    axes.set_ylabel(axis_label("pressure P", "bar"))
    feed = ", ".join(f"{n} {v:.3g}" for n, v in zip(envelope.mixture.names, envelope.z))
    axes.set_title(f"Phase envelope ({envelope.mixture.family.label})", fontsize=11)
    # With a band the upper left is crowded (the critical point's label): the legend goes inside the envelope.
    axes.legend(fontsize=8, **({"loc": "center", "bbox_to_anchor": (0.56, 0.55)} if envelope.band else {"loc": "upper left"}))
    axes.grid(alpha=0.3)
    caption = f"Feed: {feed}. " + CAUTION
    figure.text(0.01, 0.01, "\n".join(textwrap.wrap(caption, 140)), fontsize=6.5, va="bottom")
    figure.subplots_adjust(bottom=0.2)
    return axes


def _draw_band(axes, band) -> None:
    """Shade the envelope's band of +-1 standard uncertainty (its two edges, ``Envelope.band``)."""
    T_upper, P_upper, T_lower, P_lower = (np.asarray(edge, dtype=float) for edge in band)
    T_upper, P_upper = smooth_curve(T_upper, P_upper)
    T_lower, P_lower = smooth_curve(T_lower, P_lower)
    axes.fill(np.concatenate([T_upper, T_lower[::-1]]), np.concatenate([P_upper, P_lower[::-1]]) / 1e5,
              color="tab:blue", alpha=0.2, linewidth=0, label="+-1 standard uncertainty (linear)")


def plot_corner_loci(loci, path):
    """Draw the corners' loci over the envelopes at the ends and the middle into ``path``."""
    from contin.base import pyplot as _pyplot, save_figure

    _pyplot(headless=True)
    return save_figure(draw_corner_loci(loci).figure, path)


def draw_corner_loci(loci, axes=None):
    """The paths of the critical point, cricondenbar and cricondentherm in the P-T plane (bar against K),
    drawn over the envelopes at the first, middle and last value of the varied constant."""
    from contin.base import pyplot as _pyplot, axis_label, mark_special

    plt = _pyplot()
    if axes is None:
        figure, axes = plt.subplots(figsize=(7.5, 5.5))
    figure = axes.figure
    first, last = loci.span
    values = (first, 0.5 * (first + last), last) if len(loci.envelopes) == 3 else (first,)
    for envelope, value, shade in zip(loci.envelopes, values, ("0.75", "0.55", "0.35")):
        xs, ys = smooth_curve(envelope.column("T"), envelope.column("P") / 1e5)
        axes.plot(xs, ys, "-", color=shade, linewidth=1.0, label=f"envelope at {loci.name} = {value:.4g}")
    for corner, colour in (("critical", "tab:red"), ("cricondenbar", "tab:blue"), ("cricondentherm", "tab:green")):
        curve = loci.curve(corner)
        if curve.shape[0] == 0:
            continue
        axes.plot(*smooth_curve(curve[:, 1], curve[:, 2] / 1e5), "-", color=colour, linewidth=2.2, label=f"{corner} path")
        mark_special(axes, corner, curve[0, 1], curve[0, 2] / 1e5)
        mark_special(axes, corner, curve[-1, 1], curve[-1, 2] / 1e5)
    axes.set_xlabel(axis_label("temperature T", "K"))
    axes.set_ylabel(axis_label("pressure P", "bar"))
    highest = max((loci.curve(c)[:, 2].max() for c in loci.loci if loci.curve(c).shape[0]), default=None)
    if highest is not None:
        axes.set_ylim(0.0, 1.25 * highest / 1e5)  # an open envelope would run on to its pressure bound
    axes.set_title(f"Corners of the envelope as {loci.parameter.label} goes from {first:g} to {last:g} "
                   f"({loci.envelopes[0].mixture.family.label})", fontsize=10)
    axes.legend(fontsize=8, loc="upper left")
    axes.grid(alpha=0.3)
    figure.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 140)), fontsize=6.5, va="bottom")
    figure.subplots_adjust(bottom=0.16)
    return axes


def plot_binary(diagram, path):
    """Draw a Pxy or Txy diagram into ``path`` (PNG, SVG or PDF by the suffix)."""
    from contin.base import pyplot as _pyplot, save_figure

    _pyplot(headless=True)
    return save_figure(draw_binary(diagram).figure, path)


def draw_binary(diagram, axes=None):
    """Draw a Pxy (bar) or Txy (K) diagram: bubble curve against x1, dew curve against y1; returns the axes."""
    from contin.base import pyplot as _pyplot, axis_label, describe_kind, mark_special

    plt = _pyplot()
    rows = np.array(diagram.rows, dtype=float)
    x1, y1 = rows[:, 0], rows[:, 1]
    pxy = diagram.kind == "pxy"
    other = rows[:, 2] / 1e5 if pxy else rows[:, 2]
    first, second = diagram.mixture.names
    if axes is None:
        figure, axes = plt.subplots(figsize=(7.0, 5.2))
    figure = axes.figure
    axes.plot(x1, other, "-", color="tab:blue", label="bubble curve (liquid x1)")
    axes.plot(y1, other, "--", color="tab:orange", label="dew curve (vapour y1)")
    for sp in diagram.special_points:
        value = sp["values"]["P"] / 1e5 if pxy else sp["values"]["T"]
        axes.set_xlim(0.0, 1.0)
        mark_special(axes, sp["kind"], sp["values"]["x1"], value, words=describe_kind(sp["kind"]))
    axes.set_xlim(0.0, 1.0)
    axes.set_xlabel(axis_label(f"mole fraction of {first}"))
    axes.set_ylabel(axis_label("pressure P", "bar") if pxy else axis_label("temperature T", "K"))
    fixed = f"T = {diagram.fixed:.2f} K" if pxy else f"P = {diagram.fixed / 1e5:.4g} bar"
    axes.set_title(f"{first} / {second} at {fixed} ({diagram.mixture.family.label})", fontsize=11)
    axes.legend(fontsize=8)
    axes.grid(alpha=0.3)
    figure.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 130)), fontsize=6.5, va="bottom")
    figure.subplots_adjust(bottom=0.18)
    return axes
