"""The import graph: no cycles, and the engine never imports a plug-in.

Every import statement of every module (at the top or inside a function) is read from the source, so
a lazy import counts as much as an eager one.
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx

ROOT = Path(__file__).resolve().parent.parent
PACKAGES = {"contin": ROOT / "contin", "contin_thermo": ROOT / "plugins" / "thermo"}


def modules() -> dict[str, Path]:
    found = {}
    for package, folder in PACKAGES.items():
        for path in sorted(folder.rglob("*.py")):
            parts = [part for part in path.relative_to(folder).with_suffix("").parts if part != "__init__"]
            found[".".join([package, *parts])] = path
    return found


def import_graph() -> nx.DiGraph:
    known = modules()
    graph = nx.DiGraph()
    graph.add_nodes_from(known)
    for name, path in known.items():
        package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            targets = []
            if isinstance(node, ast.ImportFrom):
                base = package
                for _ in range(max(node.level - 1, 0)):
                    base = base.rsplit(".", 1)[0]
                origin = (f"{base}.{node.module}" if node.module else base) if node.level else (node.module or "")
                targets = [f"{origin}.{alias.name}" for alias in node.names] + [origin]
            elif isinstance(node, ast.Import):
                targets = [alias.name for alias in node.names]
            for target in targets:
                if target in known and target != name:
                    graph.add_edge(name, target)
                    break
    return graph


def test_the_graph_sees_the_modules_and_their_imports():
    graph = import_graph()
    assert "contin._trace" in graph and "contin_thermo._envelope" in graph
    assert graph.has_edge("contin._trace", "contin._corrector")
    assert graph.has_edge("contin_thermo._envelope", "contin._crossing") or graph.has_edge("contin_thermo._envelope", "contin")


def test_no_import_cycle():
    graph = import_graph()
    packages = set(PACKAGES)  # the re-exporting package faces are the top, imported by nobody below
    inner = graph.subgraph([name for name in graph if name not in packages])
    assert list(nx.simple_cycles(inner)) == []


def test_the_engine_never_imports_a_plug_in():
    graph = import_graph()
    reaching = [(a, b) for a, b in graph.edges if a.startswith("contin.") or a == "contin"
                if b.startswith("contin_thermo")]
    assert reaching == []
