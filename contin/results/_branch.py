"""A traced branch: its points, tangents, special points, status and statistics."""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field

import numpy as np

from ..base._output import csv_text, json_document, write_text_atomically
from ._status import Status

__all__ = ["Branch", "SpecialPoint"]


@dataclass(frozen=True)
class SpecialPoint:
    """A located point of interest on a branch.

    Attributes:
        kind: what it is, spelled out: ``fold``, ``event`` (or a user kind such as ``critical``),
            ``at`` (a requested coordinate value), ``bound``, ``closed_loop``.
        name: a readable name, e.g. ``"fold in p"`` or the event's name.
        index: its row in ``Branch.points`` (for ``at`` points: the row just before it).
        values: coordinate values keyed by column name.
        point: the coordinates as an array (unknowns then the free parameter).
        tangent: unit tangent of the branch there.
        residual_norm: largest residual at the point.
        newton_iterations: Newton iterations of its last correction.
        located_to: distance along the branch to which its position is known (0 when exact).
        info: more facts (e.g. which coordinate turns at a fold).
    """

    kind: str
    name: str
    index: int
    values: dict
    point: np.ndarray
    tangent: np.ndarray
    residual_norm: float
    newton_iterations: int
    located_to: float
    info: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """JSON-ready description (``kind``, ``index``, ``values`` and the rest)."""
        return {
            "kind": self.kind,
            "name": self.name,
            "index": self.index,
            "values": dict(self.values),
            "residual_norm": self.residual_norm,
            "newton_iterations": self.newton_iterations,
            "located_to": self.located_to,
            **({"info": dict(self.info)} if self.info else {}),
        }

    def __repr__(self) -> str:
        values = ", ".join(f"{k}={v:.10g}" for k, v in self.values.items())
        return f"SpecialPoint({self.kind!r}, {self.name!r}, index={self.index}, {values})"


@dataclass(frozen=True, repr=False)
class Branch:
    """One traced solution curve and everything found on it.

    Attributes:
        columns: coordinate names: the unknowns, then the free parameter.
        points: array (N, n + 1) of solution points, special points included in branch order.
        tangents: unit tangents, array (N, n + 1).
        steps: distance from the previous point (0 for the first), array (N,).
        newton_iterations: Newton iterations spent on each point, array (N,).
        residual_norms: largest residual at each point, array (N,).
        special_points: located special points, in branch order.
        at: points at requested coordinate values (``kind == "at"``), in branch order.
        status: why the trace stopped.
        message: human explanation of the status.
        stats: counts and timings.
        free: the free parameter's name.
        parameters: every parameter's value (the free one at the start point).
        cause: the exception behind an ``interrupted`` status, else None.
    """

    columns: tuple[str, ...]
    points: np.ndarray
    tangents: np.ndarray
    steps: np.ndarray
    newton_iterations: np.ndarray
    residual_norms: np.ndarray
    special_points: tuple[SpecialPoint, ...]
    at: tuple[SpecialPoint, ...]
    status: Status
    message: str
    stats: dict
    free: str
    parameters: dict
    cause: BaseException | None = None

    @property
    def success(self) -> bool:
        return self.status.success

    def __len__(self) -> int:
        return len(self.points)

    def column(self, name: str) -> np.ndarray:
        """Values of one coordinate along the branch."""
        if name not in self.columns:
            from ..base._names import suggest
            from ..base._errors import InputError

            raise InputError(f"no column {name!r} in this branch (columns: {', '.join(self.columns)}){suggest(name, self.columns)}")
        return self.points[:, self.columns.index(name)]

    def special(self, kind: str) -> tuple[SpecialPoint, ...]:
        """Special points of one kind, in branch order."""
        return tuple(sp for sp in self.special_points if sp.kind == kind)

    def to_dict(self) -> dict:
        """The JSON object of docs/contracts.md (SI units are the caller's: the engine keeps values as given)."""
        stats = dict(self.stats)
        return json_document(
            self.status.label,
            self.message,
            self.columns,
            self.points,
            [sp.to_dict() for sp in self.special_points],
            [sp.point for sp in self.at],
            stats,
            free=self.free,
            parameters=self.parameters,
        )

    def to_json(self, path: str | os.PathLike | None = None) -> str:
        """JSON text of :meth:`to_dict`; also written (atomically) to ``path`` if given."""
        text = json.dumps(self.to_dict(), indent=1) + "\n"
        if path is not None:
            write_text_atomically(path, text)
        return text

    def to_csv(self, path: str | os.PathLike | None = None) -> str:
        """CSV text of the points (status and special points as ``#`` comments); written to ``path`` if given."""
        comments = [f"status: {self.status.label}: {self.message}", f"free parameter: {self.free}"]
        comments += [f"special point {sp.index}: {sp.kind} ({sp.name})" for sp in self.special_points]
        text = csv_text(self.columns, self.points, comments)
        if path is not None:
            write_text_atomically(path, text)
        return text

    def plot(self, x: str | None = None, y: str | None = None, *, ax=None, **keywords):
        """Draw ``y`` against ``x`` (default: first unknown against the free parameter) with the
        special points marked and labelled; returns the matplotlib axes. See :func:`contin.plot_branch`."""
        from ..base._plot import plot_branch

        return plot_branch(self, x, y, ax=ax, **keywords)

    def to_dataframe(self):
        """The points as a pandas DataFrame (pandas is not a dependency: install it to use this)."""
        try:
            import pandas
        except ImportError as error:
            from ..base._errors import ContinError

            raise ContinError("to_dataframe needs pandas, which contin does not install: pip install pandas") from error
        frame = pandas.DataFrame(self.points, columns=list(self.columns))
        kinds = [""] * len(self.points)
        for sp in self.special_points:
            kinds[sp.index] = sp.kind if not kinds[sp.index] else f"{kinds[sp.index]},{sp.kind}"
        frame["special"] = kinds
        frame["newton_iterations"] = self.newton_iterations
        frame["residual_norm"] = self.residual_norms
        return frame

    def __repr__(self) -> str:
        kinds: dict[str, int] = {}
        for sp in self.special_points:
            kinds[sp.kind] = kinds.get(sp.kind, 0) + 1
        found = ", ".join(f"{count} {kind}" for kind, count in sorted(kinds.items())) or "no special points"
        return (
            f"<Branch {len(self.points)} points in ({', '.join(self.columns)}), free {self.free!r}; "
            f"{found}; status {self.status.label}: {self.message}>"
        )
