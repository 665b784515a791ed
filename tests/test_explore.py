"""Exploration of every branch through detected branch points, and the branch diagram."""

from __future__ import annotations

import json

import networkx as nx
import numpy as np
import pytest

import contin

LINES = {"u = 0": lambda p: 0.0 * p, "u = p": lambda p: p, "u = 2 - p": lambda p: 2.0 - p}


def three_lines():
    # u (u - p)(u + p - 2) = 0: three lines meeting pairwise at (p, u) = (0, 0), (2, 0) and (1, 1) (exact).
    return contin.SymbolicSystem({"f": "u*(u - p)*(u + p - 2)"}, {"u": 0.0}, {"p": -1.0})


KEYWORDS = dict(bounds={"p": (-1.0, 3.0), "u": (-2.0, 2.0)}, step=0.05)


def line_of(branch) -> str:
    p, u = branch.column("p"), branch.column("u")
    on = [name for name, line in LINES.items() if np.abs(u - line(p)).max() <= 1e-9]
    assert len(on) == 1, on
    return on[0]


def test_every_branch_of_three_crossing_lines_is_traced_once():
    diagram = contin.explore(three_lines(), {"u": 0.0}, free="p", max_branches=10, **KEYWORDS)
    branches = diagram.branches
    # u = 0 whole, and each other line in two halves from its first branch point: 5 branches
    assert [line_of(b) for b in branches] == ["u = 0", "u = p", "u = p", "u = 2 - p", "u = 2 - p"]
    assert all(b.stats["switch"]["guess"] == "bifurcation_equation" for b in branches[1:])
    halves = [(line_of(b), float(np.sign(b.points[-1, 1] - b.points[0, 1]))) for b in branches[1:]]
    assert len(set(halves)) == 4  # no half traced twice
    assert "retraced a known branch" in diagram.graph.graph["notes"]
    nodes = diagram.to_dict()["nodes"]
    meeting = sorted((round(n["values"]["p"], 9), round(n["values"]["u"], 9)) for n in nodes if n["kind"] == "branch_point")
    assert meeting == [(0.0, 0.0), (1.0, 1.0), (2.0, 0.0)]  # each crossing one node
    edges = diagram.to_dict()["edges"]
    assert sorted({e["branch"] for e in edges}) == [0, 1, 2, 3, 4]
    # the edges of the first branch cover its points: the counts add up with one shared point per inner node
    first = [e["points"] for e in edges if e["branch"] == 0]
    assert sum(first) - (len(first) - 1) == len(branches[0])


def test_the_budget_stops_the_exploration_and_says_so():
    diagram = contin.explore(three_lines(), {"u": 0.0}, free="p", max_branches=2, **KEYWORDS)
    assert len(diagram.branches) == 2
    assert "budget of 2 branches reached" in diagram.graph.graph["notes"]


def test_json_and_graphml_outputs(tmp_path):
    diagram = contin.explore(three_lines(), {"u": 0.0}, free="p", max_branches=3, **KEYWORDS)
    document = json.loads(diagram.to_json(tmp_path / "diagram.json"))
    assert set(document) == {"branches", "diagram"}
    assert [b["status"] for b in document["branches"]] == [b.status.label for b in diagram.branches]
    assert json.loads((tmp_path / "diagram.json").read_text()) == document
    diagram.to_graphml(tmp_path / "diagram.graphml")
    graph = nx.read_graphml(tmp_path / "diagram.graphml")
    assert graph.number_of_nodes() == diagram.graph.number_of_nodes()
    assert graph.number_of_edges() == diagram.graph.number_of_edges()
    kinds = sorted(data["kind"] for _, data in graph.nodes(data=True))
    assert kinds == sorted(n["kind"] for n in document["diagram"]["nodes"])


def test_the_diagram_draws_in_two_coordinates(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    diagram = contin.explore(three_lines(), {"u": 0.0}, free="p", max_branches=3, **KEYWORDS)
    ax = diagram.plot("p", "u")
    assert [t.get_text() for t in ax.get_legend().get_texts()] == ["branch 0", "branch 1", "branch 2"]
    with pytest.raises(contin.InputError, match="x='q' is not a coordinate of the branches.*did you mean 'p'"):
        diagram.plot("q", "u")


def test_bad_budget_and_keywords_are_refused():
    with pytest.raises(contin.InputError, match="max_branches=0 must be a whole number of at least 1"):
        contin.explore(three_lines(), {"u": 0.0}, free="p", max_branches=0)
    with pytest.raises(contin.InputError, match="explore sets 'direction' itself"):
        contin.explore(three_lines(), {"u": 0.0}, free="p", direction=-1)
