"""The progress line and branch pictures."""

from __future__ import annotations

import io

import numpy as np
import pytest

import contin
from catalogue import cubic_s_curve


class Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_line_reports_points_coordinates_and_special_points():
    problem = cubic_s_curve()
    stream = Terminal()
    progress = contin.Progress(("u", "p"), stream=stream, delay=0.0, interval=0.0)
    branch = contin.trace(problem.system, problem.start, on_point=progress, **problem.trace)
    progress.close()
    text = stream.getvalue()
    assert "tracing:" in text and "points; u = " in text and "special points: 2 fold" in text
    assert text.endswith("\r")  # the line is cleared at the end
    assert branch.success


def test_progress_is_silent_when_not_a_terminal_or_quiet():
    problem = cubic_s_curve()
    for stream, quiet in ((io.StringIO(), False), (Terminal(), True)):
        progress = contin.Progress(("u", "p"), stream=stream, quiet=quiet, delay=0.0, interval=0.0)
        contin.trace(problem.system, problem.start, on_point=progress, **problem.trace)
        progress.close()
        assert stream.getvalue() == ""


def test_progress_waits_before_the_first_line():
    stream = Terminal()
    progress = contin.Progress(("u", "p"), stream=stream, delay=60.0)
    progress(0, np.zeros(2), ())
    assert stream.getvalue() == ""


def test_branch_plot_marks_special_points_in_words(tmp_path):
    from contin.base._plot import save_figure

    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    ax = branch.plot("p", "u", caption="model: u^3 - u + p = 0")
    labels = [text.get_text() for text in ax.texts]
    assert labels.count("fold") == 2
    assert "end (bound)" in labels
    assert ax.get_xlabel() == "p" and ax.get_ylabel() == "u"
    line = ax.lines[0]
    drawn = np.column_stack([line.get_xdata(), line.get_ydata()])
    # Smooth Hermite segments between the points, and the drawn path goes through every exact point.
    assert len(drawn) > len(branch)
    for p, u in zip(branch.column("p"), branch.column("u"), strict=True):
        assert np.min(np.hypot(drawn[:, 0] - p, drawn[:, 1] - u)) < 1e-12
    for suffix in (".png", ".svg", ".pdf"):
        path = save_figure(ax.figure, tmp_path / f"s{suffix}")
        assert path.stat().st_size > 1000
    with pytest.raises(contin.InputError, match=r"--plot: '.*s.gif' must end in .png, .svg or .pdf"):
        save_figure(ax.figure, tmp_path / "s.gif")
    with pytest.raises(contin.InputError, match="y-axis column 'w' is not in the branch"):
        branch.plot("p", "w")


def test_repr_is_readable():
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    text = repr(branch)
    assert text.startswith("<Branch ") and "2 fold" in text and "bound_reached" in text
    assert "fold in p" in repr(branch.special("fold")[0])


def test_to_dataframe_when_pandas_is_installed():
    pandas = pytest.importorskip("pandas")
    problem = cubic_s_curve()
    branch = contin.trace(problem.system, problem.start, **problem.trace)
    frame = branch.to_dataframe()
    assert list(frame.columns[:2]) == ["u", "p"]
    assert (frame["special"] == "fold").sum() == 2
    assert isinstance(frame, pandas.DataFrame)


def test_every_picture_marks_a_kind_of_point_alike_and_labels_axes_alike():
    # One look: a special point's kind has one marker (black) on engine and thermodynamic plots, and
    # every axis label reads "quantity / unit".
    import matplotlib

    matplotlib.use("Agg")
    import contin_thermo
    from contin.base._plot import KIND_STYLES, axis_label
    from contin_thermo.reports._plot_envelope import draw_envelope

    mixture = contin_thermo.mixture(["methane", "ethane", "propane"], "pr")
    envelope = contin_thermo.trace_envelope(mixture, [0.8, 0.12, 0.08], check_stability=False)
    axes = draw_envelope(envelope)
    drawn = {line.get_marker(): line.get_color() for line in axes.get_lines() if line.get_linestyle() == "None"}
    for kind in ("critical", "cricondenbar", "cricondentherm"):
        assert drawn[KIND_STYLES[kind][0]] == "black"
    assert axes.get_xlabel() == axis_label("temperature T", "K") == "temperature T / K"
    assert axes.get_ylabel() == "pressure P / bar"
    assert "[" not in axes.get_xlabel()
