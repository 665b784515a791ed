"""The branch diagram: a networkx graph of traced branches, their special points and their ends.

Nodes are the special points of every branch and the branch ends (kind ``start`` or ``end``); a
point met by several branches (a branch point, where a switched branch begins) is one node. Each
branch is a chain of edges between its consecutive nodes, each edge carrying the branch's number
and its point count. The graph is written as JSON (``{"nodes": [...], "edges": [...]}``) or GraphML,
and drawn in any two coordinates.
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping, Sequence

import networkx as nx
import numpy as np

from ._branch import Branch
from ..base._errors import InputError
from ..base._names import suggest
from ..base._output import write_text_atomically

__all__ = ["Diagram", "build_diagram"]


class Diagram:
    """The graph of an exploration (see the module text).

    Attributes:
        graph: the ``networkx.MultiGraph``; node attributes ``kind``, ``name``, ``branch`` (the first
            branch it was found on), ``index`` (its row there) and one attribute per coordinate;
            edge attributes ``branch`` and ``points``.
        branches: the branches, in the order of their numbers.
    """

    def __init__(self, graph: nx.MultiGraph, branches: Sequence[Branch]) -> None:
        self.graph = graph
        self.branches = tuple(branches)

    def to_dict(self) -> dict:
        """``{"nodes": [{"id", "kind", "name", "branch", "index", "values"}...], "edges": [{"source",
        "target", "branch", "points"}...]}``, nodes and edges in the order they were made."""
        columns = self.branches[0].columns if self.branches else ()
        nodes = [{"id": node, "kind": data["kind"], "name": data["name"], "branch": data["branch"],
                  "index": data["index"], "values": {c: data[c] for c in columns if c in data}}
                 for node, data in self.graph.nodes(data=True)]
        edges = [{"source": a, "target": b, "branch": data["branch"], "points": data["points"]}
                 for a, b, data in self.graph.edges(data=True)]
        return {"nodes": nodes, "edges": edges}

    def to_json(self, path: str | os.PathLike | None = None) -> str:
        """JSON text of ``{"branches": [...], "diagram": ...}``; written (atomically) to ``path`` if given."""
        text = json.dumps({"branches": [b.to_dict() for b in self.branches], "diagram": self.to_dict()}, indent=1) + "\n"
        if path is not None:
            write_text_atomically(path, text)
        return text

    def to_graphml(self, path: str | os.PathLike) -> None:
        """Write the graph as GraphML (every attribute a number or a string)."""
        text = "\n".join(nx.generate_graphml(self.graph)) + "\n"
        write_text_atomically(path, text)

    def plot(self, x: str | None = None, y: str | None = None, *, ax=None):
        """Every branch in the coordinates ``x``, ``y`` (default: the free parameter and the first
        unknown), special points marked; returns the matplotlib axes."""
        from ..base._plot import plot_branch

        if not self.branches:
            raise InputError("the diagram has no branches to draw")
        columns = self.branches[0].columns
        for name, argument in ((x, "x"), (y, "y")):
            if name is not None and name not in columns:
                raise InputError(f"{argument}={name!r} is not a coordinate of the branches (columns: "
                                 f"{', '.join(columns)}){suggest(name, columns)}")
        for number, branch in enumerate(self.branches):
            ax = plot_branch(branch, x, y, ax=ax, label=f"branch {number}", annotate=number == 0)
        handles, labels = ax.get_legend_handles_labels()
        chosen = [(h, label) for h, label in zip(handles, labels) if label.startswith("branch ") and label[7:].isdigit()]
        ax.legend([h for h, _ in chosen], [label for _, label in chosen])
        return ax


# How specific a kind of node is, for a point met twice: ends least, codimension-two points most.
_RANK = {"start": 0, "end": 0, "fold": 2, "hopf": 3, "branch_point": 3,
         "cusp": 4, "bogdanov_takens": 4, "generalised_hopf": 4}


def _same_point(a: Mapping[str, float], b: Mapping[str, float], tolerance: float) -> bool:
    """Two points agree in every coordinate they share (a followed curve has one parameter more than
    the branch it was followed from, so its start is the branch's special point in their common
    coordinates)."""
    shared = [name for name in a if name in b]
    x = np.array([a[name] for name in shared])
    y = np.array([b[name] for name in shared])
    return bool(shared) and bool(np.linalg.norm(x - y) <= tolerance * (1.0 + max(float(np.abs(x).max()),
                                                                                 float(np.abs(y).max()))))


def build_diagram(branches: Sequence[Branch], origins: Sequence[np.ndarray | Mapping[str, float] | None] = (),
                  tolerance: float = 1e-6) -> Diagram:
    """The diagram of ``branches``.

    Args:
        branches: the branches, numbered in this order. They may differ in their columns (a curve
            followed in two parameters beside the branch it came from): points are then matched on
            the coordinates they share, a branch's fixed parameters counting as coordinates.
        origins: for each branch, the point it grew from (a branch point it was switched from, or a
            fold or Hopf point it was followed from), as values in the branch's own columns or as
            ``{coordinate: value}``; or None. Its first edge then starts at that point's node.
        tolerance: special points closer than this (relative to their size) are one node.
    """
    graph = nx.MultiGraph()
    known: list[tuple[str, dict[str, float]]] = []

    def node(values: Mapping[str, float], kind: str, name: str, branch: int, index: int,
             coordinates: Mapping[str, float]) -> str:
        for key, where in known:
            if _same_point(where, values, tolerance):
                # one point met twice (a cusp is also the fold curve's turn): the rarer kind names it
                if _RANK.get(kind, 1) > _RANK.get(graph.nodes[key]["kind"], 1):
                    graph.nodes[key].update(kind=kind, name=name)
                return key
        key = f"n{len(known)}"
        known.append((key, dict(values)))
        graph.add_node(key, kind=kind, name=name, branch=branch, index=index, **coordinates)
        return key

    def named(columns, point) -> dict[str, float]:
        return {c: float(v) for c, v in zip(columns, point)}

    def where(branch: Branch, point) -> dict[str, float]:
        # where a point is: its columns and the parameters held fixed along its branch
        fixed = {name: float(value) for name, value in branch.parameters.items() if name not in branch.columns}
        return {**fixed, **named(branch.columns, point)}

    origins = list(origins) + [None] * (len(branches) - len(origins))
    for number, branch in enumerate(branches):
        if not len(branch.points):
            continue
        columns = branch.columns
        origin = origins[number]
        if origin is None:
            chain = [(node(where(branch, branch.points[0]), "start", "start", number, 0,
                           named(columns, branch.points[0])), 0)]
        else:
            values = ({c: float(v) for c, v in origin.items()} if isinstance(origin, Mapping)
                      else named(columns, np.asarray(origin, dtype=float)))
            chain = [(node(values, "branch_point", "branch point", number, 0, values), 0)]
        for sp in branch.special_points:
            chain.append((node(where(branch, sp.point), sp.kind, sp.name, number, sp.index,
                               named(columns, sp.point)), sp.index))
        last = len(branch.points) - 1
        if not branch.special_points or branch.special_points[-1].index != last:
            chain.append((node(where(branch, branch.points[last]), "end", f"end ({branch.status.label})",
                               number, last, named(columns, branch.points[last])), last))
        for (a, i), (b, j) in zip(chain, chain[1:]):
            graph.add_edge(a, b, branch=number, points=int(j - i + 1))
    return Diagram(graph, branches)
