"""Structural analysis of a system before any number is computed: which unknown appears where.

The equations and unknowns form a bipartite graph (an edge where an unknown appears in an
equation). A maximum matching that leaves an equation or an unknown unmatched means the Jacobian is
singular whatever the numbers are: the system is refused, naming the equations and unknowns at fault.
A perfect matching orders the system into blocks: the strongly connected components of the matched
dependency graph, in a block lower-triangular order (Dulmage & Mendelsohn, Can. J. Math. 10 (1958)
517; the block order as in Duff & Reid, ACM Trans. Math. Softw. 4 (1978) 137).
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import networkx as nx

from ..base._errors import InputError

__all__ = ["Structure", "analyse_structure", "StructureWarning"]


class StructureWarning(UserWarning):
    """The system splits into independent subsystems (each could be solved on its own)."""


@dataclass(frozen=True)
class Structure:
    """Which unknowns appear in which equations, and the block order that follows from it.

    Attributes:
        equations: equation names, in system order.
        unknowns: unknown names, in system order.
        incidence: equation name -> the unknowns appearing in it (sorted by system order).
        matching: equation name -> the unknown it is matched with (a perfect matching).
        blocks: blocks in solve order; each is (equation names, unknown names) in system order.
        subsystems: number of independent (disconnected) subsystems.
    """

    equations: tuple[str, ...]
    unknowns: tuple[str, ...]
    incidence: Mapping[str, tuple[str, ...]]
    matching: Mapping[str, str]
    blocks: tuple[tuple[tuple[str, ...], tuple[str, ...]], ...]
    subsystems: int

    @property
    def nonzeros(self) -> int:
        """Number of structural nonzeros of dF/du."""
        return sum(len(v) for v in self.incidence.values())

    def summary(self) -> dict:
        """A JSON-ready summary for ``branch.stats["structure"]``."""
        sizes = [len(equations) for equations, _ in self.blocks]
        return {
            "equations": len(self.equations),
            "unknowns": len(self.unknowns),
            "jacobian_nonzeros": self.nonzeros,
            "jacobian_density": self.nonzeros / float(len(self.equations) * len(self.unknowns)),
            "blocks": len(self.blocks),
            "largest_block": max(sizes),
            "block_sizes": sizes,
            "independent_subsystems": self.subsystems,
        }


def _join(words: Sequence[str]) -> str:
    quoted = list(words)
    if len(quoted) == 1:
        return quoted[0]
    if len(quoted) > 6:
        return ", ".join(quoted[:5]) + f" and {len(quoted) - 5} more"
    return ", ".join(quoted[:-1]) + " and " + quoted[-1]


def _plural(word: str, count: int) -> str:
    return word if count == 1 else word + "s"


def analyse_structure(
    equations: Sequence[str],
    unknowns: Sequence[str],
    incidence: Mapping[str, Iterable[str]],
    *,
    warn: bool = True,
) -> Structure:
    """Match equations with unknowns and find the block structure; refuse a structurally singular system.

    Args:
        equations: equation names.
        unknowns: unknown names.
        incidence: equation name -> names of the unknowns that appear in it (other names ignored).
        warn: issue a :class:`StructureWarning` when the system splits into independent subsystems.

    Returns:
        The :class:`Structure`.

    Raises:
        InputError: if no perfect matching exists, e.g. ``"structurally singular system: equations a
            and b involve only unknown x; unknown y appears in no equation"``.
    """
    order = {name: k for k, name in enumerate(unknowns)}
    rows = {
        equation: tuple(sorted({v for v in incidence.get(equation, ()) if v in order}, key=order.__getitem__))
        for equation in equations
    }
    graph = nx.Graph()
    graph.add_nodes_from((("equation", e) for e in equations), bipartite=0)
    graph.add_nodes_from((("unknown", v) for v in unknowns), bipartite=1)
    graph.add_edges_from((("equation", e), ("unknown", v)) for e in equations for v in rows[e])
    top = [("equation", e) for e in equations]
    matched = nx.bipartite.hopcroft_karp_matching(graph, top_nodes=top)
    problems = _explain_deficiency(graph, equations, unknowns, rows, matched)
    if problems:
        raise InputError(
            "structurally singular system: " + "; ".join(problems)
            + ". Every unknown must be determined by the equations: check for a missing or repeated "
            "equation, or a misspelt name"
        )
    matching = {e: matched[("equation", e)][1] for e in equations}
    owner = {v: e for e, v in matching.items()}
    # e depends on e' when e uses the unknown matched with e': an edge e' -> e.
    depends = nx.DiGraph()
    depends.add_nodes_from(equations)
    depends.add_edges_from((owner[v], e) for e in equations for v in rows[e] if owner[v] != e)
    condensed = nx.condensation(depends)
    position = {e: k for k, e in enumerate(equations)}
    blocks = []
    for node in nx.lexicographical_topological_sort(
        condensed, key=lambda c: min(position[e] for e in condensed.nodes[c]["members"])
    ):
        members = sorted(condensed.nodes[node]["members"], key=position.__getitem__)
        blocks.append((tuple(members), tuple(sorted((matching[e] for e in members), key=order.__getitem__))))
    parts = sorted(
        (sorted(position[n[1]] for n in part if n[0] == "equation") for part in nx.connected_components(graph)),
    )
    if warn and len(parts) > 1:
        described = "; ".join(
            f"{{{', '.join(equations[k] for k in part[:4])}{', ...' if len(part) > 4 else ''}}}" for part in parts[:5]
        )
        warnings.warn(
            f"the system splits into {len(parts)} independent subsystems (equation groups {described}"
            f"{'; ...' if len(parts) > 5 else ''}); the free parameter moves each of them separately",
            StructureWarning,
            stacklevel=3,
        )
    return Structure(
        equations=tuple(equations),
        unknowns=tuple(unknowns),
        incidence=rows,
        matching=matching,
        blocks=tuple(blocks),
        subsystems=len(parts),
    )


def _explain_deficiency(graph, equations, unknowns, rows, matched) -> list[str]:
    """Sentences naming the over- and under-determined parts (alternating-path closures)."""
    sentences: list[str] = []
    unmatched_equations = [e for e in equations if ("equation", e) not in matched]
    if unmatched_equations:
        seen_e, seen_v = _alternating(graph, [("equation", e) for e in unmatched_equations], matched)
        group_e = [e for e in equations if ("equation", e) in seen_e]
        group_v = [v for v in unknowns if ("unknown", v) in seen_v]
        if group_v:
            sentences.append(
                f"{_plural('equation', len(group_e))} {_join(group_e)} "
                f"{'involves' if len(group_e) == 1 else 'involve'} only {_plural('unknown', len(group_v))} "
                f"{_join(group_v)}"
            )
        else:
            sentences.append(
                f"{_plural('equation', len(group_e))} {_join(group_e)} "
                f"{'involves' if len(group_e) == 1 else 'involve'} no unknown"
            )
    unmatched_unknowns = [v for v in unknowns if ("unknown", v) not in matched]
    if unmatched_unknowns:
        seen_v, seen_e = _alternating(graph, [("unknown", v) for v in unmatched_unknowns], matched)
        group_v = [v for v in unknowns if ("unknown", v) in seen_v]
        group_e = [e for e in equations if ("equation", e) in seen_e]
        if group_e:
            sentences.append(
                f"{_plural('unknown', len(group_v))} {_join(group_v)} "
                f"{'appears' if len(group_v) == 1 else 'appear'} only in {_plural('equation', len(group_e))} "
                f"{_join(group_e)}"
            )
        else:
            sentences.append(
                f"{_plural('unknown', len(group_v))} {_join(group_v)} "
                f"{'appears' if len(group_v) == 1 else 'appear'} in no equation"
            )
    return sentences


def _alternating(graph, sources, matched):
    """Nodes reachable from unmatched ``sources`` by alternating paths: (same side, other side)."""
    same, other = set(sources), set()
    frontier = list(sources)
    while frontier:
        following = []
        for node in frontier:
            for neighbour in sorted(graph.neighbors(node)):
                if neighbour in other:
                    continue
                other.add(neighbour)
                partner = matched.get(neighbour)
                if partner is not None and partner not in same:
                    same.add(partner)
                    following.append(partner)
        frontier = following
    return same, other
