"""Pictures of branches: any two coordinates, special points marked and labelled in words."""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from ._errors import InputError
from ._names import suggest

__all__ = ["plot_branch", "save_figure", "smooth_path", "FIGURE_FORMATS", "KIND_STYLES", "describe_kind"]

FIGURE_FORMATS = (".png", ".svg", ".pdf")

# Marker and words for each special-point kind; anything else gets a plain marker and its kind's name.
KIND_STYLES = {
    "fold": ("o", "fold"),
    "branch_point": ("s", "branch point"),
    "hopf": ("D", "Hopf point"),
    "critical": ("*", "critical point"),
    "cricondenbar": ("^", "cricondenbar"),
    "cricondentherm": (">", "cricondentherm"),
    "azeotrope": ("P", "azeotrope"),
    "event": ("v", "event"),
    "bound": ("x", "end (bound)"),
    "closed_loop": ("X", "back at start"),
}


def describe_kind(kind: str) -> str:
    """The words for a special-point kind, e.g. ``"critical point"``."""
    return KIND_STYLES.get(kind, ("o", kind.replace("_", " ")))[1]


def _pyplot(headless: bool = False):
    """matplotlib.pyplot; with ``headless`` (writing files from the command line) on the Agg back end.

    Library calls (``Branch.plot()`` in a notebook) leave the back end alone: matplotlib picks Agg by
    itself where there is no display.
    """
    import matplotlib

    if headless and "MPLBACKEND" not in os.environ:
        try:
            matplotlib.use("Agg")
        except Exception:  # noqa: BLE001 - a back end already in use stays
            pass
    import matplotlib.pyplot as plt

    return plt


def plot_branch(branch, x: str | None = None, y: str | None = None, *, ax=None, label: str | None = None,
                caption: str | None = None, units: dict | None = None, annotate: bool = True):
    """Draw ``y`` against ``x`` along a branch, special points marked and labelled in words.

    Args:
        branch: a :class:`contin.Branch`.
        x, y: column names (default: the free parameter against the first unknown).
        ax: matplotlib axes to draw on (a new figure otherwise).
        label: legend label of the curve.
        caption: text under the axes (e.g. the model and a caution).
        units: column name -> unit text for the axis labels.
        annotate: write each special point's kind beside its marker.

    Returns:
        The matplotlib axes.

    Raises:
        InputError: a column that the branch does not have.
    """
    columns = branch.columns
    x = x or branch.free
    y = y or columns[0]
    for name, argument in ((x, "x"), (y, "y")):
        if name not in columns:
            raise InputError(f"{argument}-axis column {name!r} is not in the branch "
                             f"(columns: {', '.join(columns)}){suggest(name, columns)}")
    plt = _pyplot()
    if ax is None:
        figure, ax = plt.subplots(figsize=(7.0, 5.0), layout="constrained")
    units = units or {}
    ix, iy = columns.index(x), columns.index(y)
    xs, ys = smooth_path(branch.points, branch.tangents, ix, iy)
    ax.plot(xs, ys, "-", lw=1.6, label=label)
    seen: set[str] = set()
    for point in branch.special_points:
        marker, words = KIND_STYLES.get(point.kind, ("o", point.kind.replace("_", " ")))
        if point.kind == "event":
            words = point.name.replace("_", " ")  # a user event is known by its own name
        px, py = point.point[ix], point.point[iy]
        ax.plot([px], [py], marker, ms=9 if marker == "*" else 7, mfc="white" if marker == "o" else None,
                color="black", label=words if words not in seen else None, zorder=5)
        seen.add(words)
        if annotate:
            ax.annotate(words, (px, py), textcoords="offset points", xytext=(6, 6), fontsize=8)
    ax.set_xlabel(f"{x} [{units[x]}]" if x in units else x)
    ax.set_ylabel(f"{y} [{units[y]}]" if y in units else y)
    ax.grid(True, alpha=0.3)
    if seen or label:
        ax.legend(fontsize=8, loc="best")
    if caption:
        figure = ax.figure
        engine = figure.get_layout_engine()
        lines = caption.count("\n") + 1
        if engine is not None and hasattr(engine, "set"):
            engine.set(rect=(0.0, 0.025 * lines + 0.01, 1.0, 1.0 - 0.025 * lines - 0.01))
        figure.text(0.01, 0.005, caption, fontsize=7, ha="left", va="bottom")
    return ax


def smooth_path(points: np.ndarray, tangents: np.ndarray, ix: int, iy: int, samples: int = 8):
    """Coordinates ``ix`` and ``iy`` along the branch, drawn as cubic Hermite segments between points.

    Every point is a converged solution and every tangent the branch's own, so the segment from one
    point to the next, x(s) = h00 x_i + h10 h t_i + h01 x_i+1 + h11 h t_i+1 with h the chord length,
    follows the curve to third order; straight chords would show corners where steps are long.
    Falls back to straight lines where a tangent is missing (zero or not finite).
    """
    if len(points) < 2 or tangents.shape != points.shape:
        return points[:, ix], points[:, iy]
    s = np.linspace(0.0, 1.0, samples, endpoint=False)
    h00, h10, h01, h11 = 2 * s**3 - 3 * s**2 + 1, s**3 - 2 * s**2 + s, -2 * s**3 + 3 * s**2, s**3 - s**2
    xs, ys = [], []
    for i in range(len(points) - 1):
        a, b = points[i], points[i + 1]
        ta, tb = tangents[i], tangents[i + 1]
        h = float(np.linalg.norm(b - a))
        if h == 0.0:
            continue
        good = np.all(np.isfinite(ta)) and np.all(np.isfinite(tb)) and np.any(ta) and np.any(tb)
        if not good:
            xs.append(np.array([a[ix]]))
            ys.append(np.array([a[iy]]))
            continue
        for k, out in ((ix, xs), (iy, ys)):
            out.append(h00 * a[k] + h10 * h * ta[k] + h01 * b[k] + h11 * h * tb[k])
    xs.append(points[-1:, ix])
    ys.append(points[-1:, iy])
    return np.concatenate(xs), np.concatenate(ys)


def save_figure(figure, path: str | os.PathLike, argument: str = "--plot") -> Path:
    """Save ``figure`` as PNG, SVG or PDF, chosen by the file extension.

    Raises:
        InputError: an extension other than .png, .svg or .pdf, or a folder that does not exist.
    """
    target = Path(path)
    if target.suffix.lower() not in FIGURE_FORMATS:
        raise InputError(f"{argument}: {str(path)!r} must end in .png, .svg or .pdf")
    if not target.parent.exists():
        raise InputError(f"{argument}: the folder {str(target.parent)!r} does not exist")
    figure.savefig(target, dpi=150)
    import matplotlib.pyplot as plt

    plt.close(figure)  # a command line writes many figures; keep memory flat
    return target
