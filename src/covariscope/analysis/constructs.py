"""Measure groups: proxy-linked covariates merged into one construct node.

The graph criteria treat a group of covariates joined by proxy links (two
measures of the same thing) as one node that carries the union of the
members' arrows, arrows between members dropped, measured if any member is.
A proxy link from a covariate to the exposure or the outcome is not merged:
it records that the covariate measures the exposure (or outcome).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import networkx as nx

from covariscope.errors import CycleError, DiagramError
from covariscope.vocabulary import group_key

__all__ = [
    "MergedDiagram",
    "cycle_text",
    "merge_diagram",
    "merge_every_link",
]

_ENDPOINT_KINDS = frozenset({"exposure", "outcome"})


@dataclass(frozen=True)
class MergedDiagram:
    """A diagram with its measure groups merged.

    Attributes
    ----------
    graph : networkx.DiGraph
        Construct graph; nodes carry ``measured`` (bool).  Singletons keep
        their id; a group is named by its sorted member ids joined by ``|``.
    construct_of : dict
        Original node id → construct id.
    members : dict
        Construct id → sorted tuple of original member ids.
    groups : tuple of tuple of str
        Measure groups with two or more members, each sorted, list sorted.
    measures_exposure, measures_outcome : frozenset of str
        Covariates proxy-linked to the exposure (outcome).
    member_measured : dict
        Original node id → whether it was measured.
    """

    graph: nx.DiGraph = field(compare=False)
    construct_of: Mapping[str, str]
    members: Mapping[str, tuple[str, ...]]
    groups: tuple[tuple[str, ...], ...]
    measures_exposure: frozenset[str]
    measures_outcome: frozenset[str]
    member_measured: Mapping[str, bool]


def cycle_text(cycle: list[str]) -> str:
    """Render a cycle (first id repeated at the end) as ``a → b → a``."""
    return " → ".join(cycle)


def _proxy_pairs(G: nx.DiGraph) -> list[tuple[str, str]]:
    pairs = G.graph.get("proxies") or []
    out: list[tuple[str, str]] = []
    for pair in pairs:
        a, b = pair
        for node in (a, b):
            if node not in G:
                raise DiagramError(
                    f'A proxy link names "{node}", which is not a node of the diagram; '
                    "remove the link or add the node."
                )
        out.append((str(a), str(b)))
    return out


def _build(
    G: nx.DiGraph, pairs: list[tuple[str, str]], endpoints: frozenset[str]
) -> tuple[nx.DiGraph, dict[str, str], dict[str, tuple[str, ...]], set[str], set[str]]:
    links = nx.Graph()
    links.add_nodes_from(G.nodes)
    meas_x: set[str] = set()
    meas_y: set[str] = set()
    for a, b in pairs:
        a_end, b_end = a in endpoints, b in endpoints
        if a_end and b_end:
            # Exposure ~ outcome says nothing about covariates; nothing to merge.
            continue
        if a_end or b_end:
            end, cov = (a, b) if a_end else (b, a)
            kind = G.nodes[end].get("kind")
            (meas_x if kind == "exposure" else meas_y).add(cov)
            continue
        links.add_edge(a, b)
    construct_of: dict[str, str] = {}
    members: dict[str, tuple[str, ...]] = {}
    for comp in nx.connected_components(links):
        group = tuple(sorted(comp))
        name = group_key(group)
        members[name] = group
        for node in group:
            construct_of[node] = name
    M = nx.DiGraph()
    for name, group in members.items():
        measured = any(bool(G.nodes[n].get("measured", True)) for n in group)
        kind = G.nodes[group[0]].get("kind", "covariate") if len(group) == 1 else "covariate"
        M.add_node(name, measured=measured, kind=kind)
    for u, v in G.edges:
        cu, cv = construct_of[u], construct_of[v]
        if cu != cv:
            M.add_edge(cu, cv)
    return M, construct_of, members, meas_x, meas_y


def _endpoints(G: nx.DiGraph, *ids: str) -> frozenset[str]:
    kinds = {n for n, k in G.nodes(data="kind") if k in _ENDPOINT_KINDS}
    return frozenset(kinds | set(ids))


def _find_cycle(M: nx.DiGraph) -> list[str] | None:
    if nx.is_directed_acyclic_graph(M):  # the usual case, several times faster
        return None
    try:
        edges = nx.find_cycle(M)
    except nx.NetworkXNoCycle:
        return None
    cycle = [str(u) for u, _ in edges]
    return [*cycle, cycle[0]]


def merge_diagram(G: nx.DiGraph, exposure: str, outcome: str) -> MergedDiagram:
    """Merge measure groups and check the exposure, outcome and acyclicity.

    Parameters
    ----------
    G : networkx.DiGraph
        Diagram as produced by the diagram model (``kind``, ``measured`` node
        attributes; ``G.graph["proxies"]`` a list of id pairs).
    exposure, outcome : str
        Node ids of the exposure X and the outcome Y.

    Returns
    -------
    MergedDiagram

    Raises
    ------
    DiagramError
        Unknown exposure or outcome, or exposure equal to outcome.
    CycleError
        The diagram, or the diagram with its measure groups merged, has a cycle.

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("bmi", "x"), ("waist", "y"), ("x", "y")])
    >>> G.graph["proxies"] = [("bmi", "waist")]
    >>> merge_diagram(G, "x", "y").groups
    (('bmi', 'waist'),)
    """
    for role, node in (("exposure", exposure), ("outcome", outcome)):
        if node not in G:
            raise DiagramError(
                f'The {role} "{node}" is not a node of the diagram; choose the {role} '
                "among the diagram's nodes."
            )
    if exposure == outcome:
        raise DiagramError(
            f'"{exposure}" is both the exposure and the outcome; mark a different node '
            "as the outcome."
        )
    cycle = _find_cycle(G)
    if cycle is not None:
        raise CycleError(
            f"The diagram has a cycle: {cycle_text(cycle)}; remove one of these arrows.",
            cycle,
        )
    M, construct_of, members, meas_x, meas_y = _build(
        G, _proxy_pairs(G), _endpoints(G, exposure, outcome)
    )
    cycle = _find_cycle(M)
    if cycle is not None:
        raise CycleError(
            "Merging the measure groups closes a cycle: "
            f"{cycle_text(cycle)}; remove a proxy link or one of these arrows.",
            cycle,
        )
    groups = tuple(sorted(g for g in members.values() if len(g) > 1))
    return MergedDiagram(
        graph=M,
        construct_of=construct_of,
        members=members,
        groups=groups,
        measures_exposure=frozenset(meas_x),
        measures_outcome=frozenset(meas_y),
        member_measured={str(n): bool(m) for n, m in G.nodes(data="measured", default=True)},
    )


def merge_every_link(G: nx.DiGraph) -> tuple[nx.DiGraph, dict[str, str]] | None:
    """Merge every proxy link, those to the exposure and outcome included.

    The independence claims of a diagram treat any two proxy-linked nodes
    as two measures of one thing, whatever their kind: a covariate that
    measures the exposure stands where the exposure stands.  Returns the
    construct graph and the map node → construct, or None when the merge
    closes a cycle (the caller then falls back to :func:`merge_diagram`).

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("x", "y"), ("c", "x")])
    >>> G.add_node("m")
    >>> G.graph["proxies"] = [("m", "x")]
    >>> M, of = merge_every_link(G)
    >>> sorted(M.edges), of["m"]
    ([('c', 'm|x'), ('m|x', 'y')], 'm|x')
    """
    M, construct_of, *_ = _build(G, _proxy_pairs(G), frozenset())
    if _find_cycle(M) is not None:
        return None
    return M, construct_of
