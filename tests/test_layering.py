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
    assert "contin.tracing._trace" in graph and "contin_thermo.curves._envelope" in graph
    assert graph.has_edge("contin.tracing._trace", "contin.tracing._corrector")
    assert graph.has_edge("contin_thermo.curves._envelope", "contin.tracing._crossing") or graph.has_edge("contin_thermo.curves._envelope", "contin")


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


# Each package's layers, lowest first. A module may import from its own layer and from layers below
# it, never from a layer above: the order is the architecture of docs/architecture.md. The package
# faces (contin/__init__.py, contin_thermo/__init__.py) re-export from every layer and sit on top.
LAYERS = {
    "contin": ("base", "systems", "results", "tracing", "studies", "commands"),
    "contin_thermo": ("models", "reports", "curves", "commands"),
}


def rank(module: str) -> tuple[int, int] | None:
    """(package rank, layer rank) of a module; the engine is below every plug-in."""
    package, _, rest = module.partition(".")
    layer = rest.split(".", 1)[0]
    if package not in LAYERS or layer not in LAYERS[package]:
        return None
    return (list(LAYERS).index(package), LAYERS[package].index(layer))


def test_every_module_lives_in_a_layer():
    unplaced = [name for name, path in modules().items()
                if name not in PACKAGES and not name.endswith("__main__") and rank(name) is None
                and not name.endswith(".examples") and ".data" not in name]
    assert unplaced == []


def test_no_layer_imports_a_higher_one():
    graph = import_graph()
    upward = sorted(f"{a} -> {b}" for a, b in graph.edges
                    if rank(a) is not None and (b in PACKAGES and a.startswith(b + ".")  # its own package face
                                                or rank(b) is not None and rank(b) > rank(a)))
    assert upward == []


def test_the_layer_test_catches_an_upward_import():
    # the check above, on a made-up edge: a tracing module importing the command line
    assert rank("contin.commands._cli") > rank("contin.tracing._trace")
    assert rank("contin_thermo.commands._cli") > rank("contin_thermo.models._kij")
    assert rank("contin_thermo.models._kij") > rank("contin.commands._cli")  # a plug-in sits above the engine


def test_the_plug_in_uses_only_the_public_api_and_the_plug_in_kit():
    # contin's names and contin.base's (the kit: files, name suggestions, the house look of pictures)
    graph = import_graph()
    private = sorted(f"{a} -> {b}" for a, b in graph.edges
                     if a.startswith("contin_thermo") and b.startswith("contin.") and b != "contin.base")
    assert private == []
