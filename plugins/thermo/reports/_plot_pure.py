"""Diagrams of pure-fluid results: P-T and T-rho (saturation), P-v (spinodal), critical point marked."""

from __future__ import annotations

import textwrap
from pathlib import Path

from ..models._caution import CAUTION

__all__ = ["draw_pure", "plot_pure"]


def plot_pure(result, path: str | Path) -> Path:
    """Draw ``result`` (a saturation, spinodal or critical :class:`CurveResult`) into ``path``.

    PNG, SVG or PDF by the extension. See :func:`draw_pure` for what is drawn.
    """
    from contin.base import pyplot as _pyplot, save_figure

    _pyplot(headless=True)
    left, _ = draw_pure(result)
    return save_figure(left.figure, path)


def draw_pure(result, figure=None):
    """Draw ``result`` on a new figure (or ``figure``) and return its two axes (left, right).

    Saturation: vapour pressure against temperature, and temperature against the two saturated
    densities. Spinodal: both spinodal pressures against temperature, and temperature against the two
    spinodal volumes. The critical point is marked on each panel; the caption gives fluid, model and
    the caution.
    """
    import numpy as np

    from contin.base import pyplot as _pyplot, axis_label, describe_kind, mark_special, smooth_xy

    plt = _pyplot()
    if figure is None:
        figure = plt.figure(figsize=(11, 5.2))
    left, right = figure.subplots(1, 2)
    critical = next((p["values"] for p in result.special_points if p["kind"] == "critical"), None)
    col = result.column
    if result.kind == "saturation":
        left.plot(*smooth_xy(col("T"), col("P") / 1e5), "-", color="tab:blue", label="vapour pressure")
        # One smooth dome through the critical point: saturated liquid up, saturated vapour down.
        dome_rho = np.concatenate([col("rho_liquid"), col("rho_vapour")[::-1]])
        dome_T = np.concatenate([col("T"), col("T")[::-1]])
        right.plot(*smooth_xy(dome_rho, dome_T, log_x=True), "-", color="tab:blue",
                   label="saturated liquid (right) and vapour (left)")
        left.set_ylabel(axis_label("pressure P", "bar"))
        right.set_xlabel(axis_label("molar density ρ", "mol/m³"))
        right.set_xscale("log")
        if len(result.at):
            left.plot(result.at[:, 0], result.at[:, 1] / 1e5, "o", color="tab:green", ms=5, label="requested rows")
        if critical:
            mark_special(right, "critical", 1.0 / critical["v"], critical["T"], label=describe_kind("critical"))
    elif result.kind == "spinodal":
        left.plot(col("T"), col("P_liquid_spinodal") / 1e5, "-", color="tab:blue", label="liquid spinodal")
        left.plot(col("T"), col("P_vapour_spinodal") / 1e5, "-", color="tab:red", label="vapour spinodal")
        right.plot(col("v_liquid_spinodal"), col("T"), "-", color="tab:blue", label="liquid spinodal")
        right.plot(col("v_vapour_spinodal"), col("T"), "-", color="tab:red", label="vapour spinodal")
        left.set_ylabel(axis_label("pressure P", "bar"))
        right.set_xlabel(axis_label("molar volume v", "m³/mol"))
        right.set_xscale("log")
        if critical:
            mark_special(right, "critical", critical["v"], critical["T"], label=describe_kind("critical"))
    else:
        mark_special(left, "critical", float(col("T")[0]), float(col("P")[0]) / 1e5, label=describe_kind("critical"))
        mark_special(right, "critical", float(col("rho")[0]), float(col("T")[0]), label=describe_kind("critical"))
        left.set_ylabel(axis_label("pressure P", "bar"))
        right.set_xlabel(axis_label("molar density ρ", "mol/m³"))
    if critical:
        mark_special(left, "critical", critical["T"], critical["P"] / 1e5, label=describe_kind("critical"))
    left.set_xlabel(axis_label("temperature T", "K"))
    right.set_ylabel(axis_label("temperature T", "K"))
    for axes in (left, right):
        axes.grid(True, alpha=0.3)
        if axes.get_legend_handles_labels()[0]:
            axes.legend(loc="best", fontsize=9)
    c = result.component
    figure.suptitle(f"{result.kind} of {c.name}, {result.family.label} equation of state")
    caption = (f"Tc = {c.Tc:g} K, Pc = {c.Pc:g} Pa, omega = {c.omega:g} ({c.source}). " + CAUTION)
    figure.text(0.5, 0.01, "\n".join(textwrap.wrap(caption, 150)), ha="center", va="bottom", fontsize=7.5)
    figure.tight_layout(rect=(0, 0.08, 1, 0.95))
    return left, right
