"""Pictures of branches: any two coordinates, special points marked and labelled in words."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from ._errors import InputError
from ._names import suggest

__all__ = ["plot_branch", "save_figure", "smooth_path", "smooth_xy", "mark_special", "axis_label", "FIGURE_FORMATS",
           "KIND_STYLES", "describe_kind"]

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


def axis_label(quantity: str, unit: str | None = None) -> str:
    """The one axis-label style of every picture: ``"temperature T / K"`` (quantity, then / unit)."""
    return f"{quantity} / {unit}" if unit else quantity


def mark_special(ax, kind: str, x: float, y: float, *, label: str | None = None, words: str | None = None,
                 offset: tuple[float, float] = (6, 6)) -> None:
    """Draw one special point in the one style of every picture: its kind's marker, in black.

    Args:
        ax: the axes.
        kind: the special point's kind (its marker from :data:`KIND_STYLES`).
        x, y: where.
        label: legend label (None: not in the legend).
        words: text written beside the marker (None: none); it is kept inside the axes, to the left of
            the marker in the right half of the axes.
        offset: offset of the text in points.
    """
    marker = KIND_STYLES.get(kind, ("o", kind))[0]
    ax.plot([x], [y], marker, ms=9 if marker == "*" else 7, mfc="white" if marker == "o" else None,
            color="black", label=label, zorder=5)
    if words:
        low, high = ax.get_xlim()
        right = high > low and (x - low) > 0.6 * (high - low)
        dx = -abs(offset[0]) if right else abs(offset[0])
        ax.annotate(words, (x, y), textcoords="offset points", xytext=(dx, offset[1]), fontsize=8,
                    ha="right" if right else "left", annotation_clip=True)


def smooth_xy(x: np.ndarray, y: np.ndarray, *, log_x: bool = False, log_y: bool = False, samples: int = 10):
    """A curve through the points (x, y), drawn smooth: cubic splines against the chord length.

    Every point is exact; only the drawing between them is interpolated (straight chords show corners
    where the points are far apart, e.g. coexisting densities near a critical point). ``log_x`` and
    ``log_y`` interpolate in the logarithm (for axes drawn on a log scale).
    """
    from scipy.interpolate import CubicSpline

    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    keep = np.isfinite(x) & np.isfinite(y) & ((x > 0) if log_x else True) & ((y > 0) if log_y else True)
    u, v = (np.log(x[keep]) if log_x else x[keep]), (np.log(y[keep]) if log_y else y[keep])
    if u.size < 4:
        return x[keep], y[keep]
    scale_u = max(float(np.ptp(u)), 1e-300)
    scale_v = max(float(np.ptp(v)), 1e-300)
    chord = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(u) / scale_u, np.diff(v) / scale_v))])
    distinct = np.concatenate([[True], np.diff(chord) > 1e-12 * max(chord[-1], 1e-300)])
    chord, u, v = chord[distinct], u[distinct], v[distinct]
    if chord.size < 4:
        return (np.exp(u) if log_x else u), (np.exp(v) if log_y else v)
    s = np.linspace(0.0, chord[-1], samples * chord.size)
    su, sv = CubicSpline(chord, u)(s), CubicSpline(chord, v)(s)
    return (np.exp(su) if log_x else su), (np.exp(sv) if log_y else sv)


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
        mark_special(ax, point.kind, px, py, label=words if words not in seen else None,
                     words=words if annotate else None)
        seen.add(words)
    ax.set_xlabel(axis_label(x, units.get(x)))
    ax.set_ylabel(axis_label(y, units.get(y)))
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
