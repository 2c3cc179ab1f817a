"""Automatic layered layout of a diagram (no Qt).

Nodes go into columns so that every arrow points rightwards (causes before
effects), the exposure sits as far left and the outcome as far right as the
arrows allow, and the order inside each column follows the barycenter
heuristic to keep crossings few.  A column taller than ``max_rows`` is
wrapped into several narrow sub-columns side by side (its nodes dealt out in
their vertical order, each sub-column shifted by a fraction of a row), so a
diagram with many causes of the exposure stays about as wide as it is tall.

Reference: K. Sugiyama, S. Tagawa and M. Toda (1981), "Methods for visual
understanding of hierarchical system structures", IEEE Transactions on
Systems, Man, and Cybernetics 11(2): 109–125 (layering, then barycentric
ordering within layers).
"""

from __future__ import annotations

import math

import networkx as nx

from covariscope.model.diagram import Diagram

__all__ = ["layer_of", "layered_layout"]


def layer_of(diagram: Diagram) -> dict[str, int]:
    """The column of each node: longest path from a root, with the outcome
    moved to the right of the exposure (and of every other non-descendant of
    the outcome) and the outcome's descendants after it.

    >>> from covariscope.model.diagram import Node
    >>> d = Diagram()
    >>> for n in (Node("x", kind="exposure"), Node("y", kind="outcome"), Node("c")):
    ...     d.add_node(n)
    >>> d.add_arrow("c", "x"); d.add_arrow("c", "y"); d.add_arrow("x", "y")
    >>> layer_of(d)
    {'x': 1, 'y': 2, 'c': 0}
    """
    graph = nx.DiGraph()
    graph.add_nodes_from(diagram.node_ids)
    graph.add_edges_from(diagram.arrows)
    layers: dict[str, int] = {}
    for node in nx.topological_sort(graph):
        preds = list(graph.predecessors(node))
        layers[node] = max((layers[p] + 1 for p in preds), default=0)
    outcome = diagram.outcome
    if outcome is not None and len(layers) > 1:
        below = nx.descendants(graph, outcome.id) | {outcome.id}
        others = [layers[n] for n in layers if n not in below]
        floor = max(others, default=-1) + 1
        if layers[outcome.id] < floor:
            layers[outcome.id] = floor
            # effects of the outcome keep their place after it
            for node in nx.topological_sort(graph.subgraph(below)):
                for succ in graph.successors(node):
                    layers[succ] = max(layers[succ], layers[node] + 1)
    # nodes with no causes sit just before their first effect, not far left
    for node in sorted(layers, key=lambda n: -layers[n]):
        if graph.in_degree(node) == 0 and graph.out_degree(node) > 0:
            if diagram.node(node).kind == "exposure":
                continue
            nearest = min(layers[s] for s in graph.successors(node))
            layers[node] = max(layers[node], nearest - 1)
    # a measure linked only by proxy links stands beside its partner
    for a, b in diagram.proxies:
        for lone, partner in ((a, b), (b, a)):
            if graph.degree(lone) == 0 and graph.degree(partner) > 0:
                layers[lone] = layers[partner]
    return {n: layers[n] for n in diagram.node_ids}


def layered_layout(
    diagram: Diagram,
    spacing: tuple[float, float] = (200.0, 100.0),
    origin: tuple[float, float] | None = None,
    max_rows: int = 8,
) -> dict[str, tuple[float, float]]:
    """New (x, y) positions for every node.

    ``spacing`` is the distance between columns and between rows; ``origin``
    the top-left position of the result (default: the top-left of the nodes'
    current positions, so the drawing does not jump away on screen).  A
    layer of more than ``max_rows`` nodes is wrapped into
    ``ceil(size / max_rows)`` sub-columns.

    >>> from covariscope.model.diagram import Node
    >>> d = Diagram()
    >>> d.add_node(Node("x", kind="exposure")); d.add_node(Node("y", kind="outcome"))
    >>> d.add_arrow("x", "y")
    >>> layered_layout(d, origin=(0.0, 0.0))
    {'x': (0.0, 0.0), 'y': (200.0, 0.0)}
    """
    if len(diagram) == 0:
        return {}
    layers = layer_of(diagram)
    columns: dict[int, list[str]] = {}
    for node_id in diagram.node_ids:
        columns.setdefault(layers[node_id], []).append(node_id)
    order = sorted(columns)
    neighbours: dict[str, list[str]] = {n: [] for n in diagram.node_ids}
    for a, b in [*diagram.arrows, *diagram.proxies]:
        neighbours[a].append(b)
        neighbours[b].append(a)
    pinned = {n.id for n in diagram.nodes if n.kind in ("exposure", "outcome")}
    # a measure linked only by a proxy link rides along with its partner
    arrowed = {x for pair in diagram.arrows for x in pair}
    attached: dict[str, list[str]] = {}
    riders: set[str] = set()
    for a, b in diagram.proxies:
        for lone, partner in ((a, b), (b, a)):
            if lone not in arrowed and partner in arrowed and lone not in riders:
                attached.setdefault(partner, []).append(lone)
                riders.add(lone)

    rows: dict[str, float] = {}

    def place(column: list[str]) -> None:
        # the exposure and the outcome hold the main row (0); the others go
        # above or below it, nearest first, by barycenter, so that no other
        # node sits on the line between exposure and outcome
        main = [n for n in column if n in pinned]
        rest = [n for n in column if n not in pinned and n not in riders]
        key = {n: _barycenter(n, neighbours, rows) for n in rest}
        rest.sort(key=lambda n: (key[n], diagram.node_ids.index(n)))
        above = [n for n in rest if key[n] < 0]
        level = [n for n in rest if key[n] == 0]
        below = [n for n in rest if key[n] > 0]
        for i, n in enumerate(level):  # ties alternate to balance the column
            (below if len(above) + (i % 2) > len(below) else above).append(n)
        above.sort(key=lambda n: -key[n])  # nearest the main row first
        for n in main:
            rows[n] = 0.0
        main_riders = [r for n in main for r in attached.get(n, [])]
        stacks = (
            [r for n in above for r in (n, *attached.get(n, []))],
            main_riders + [r for n in below for r in (n, *attached.get(n, []))],
        )
        for sign, stack in zip((-1.0, 1.0), stacks, strict=True):
            for i, n in enumerate(stack):
                rows[n] = sign * (i + 1)

    for layer in order:
        place(columns[layer])
    for layer in reversed(order):  # one backward sweep refines the order
        place(columns[layer])
    for layer in order:
        place(columns[layer])

    sub, start = _wrap(order, columns, rows, max(1, max_rows))
    if origin is None:
        origin = (min(n.x for n in diagram.nodes), min(n.y for n in diagram.nodes))
    top = min(rows.values())
    dx, dy = spacing
    return {
        n: (
            float(round(origin[0] + (start[layers[n]] + sub[n]) * dx)),
            float(round(origin[1] + (rows[n] - top) * dy)),
        )
        for n in diagram.node_ids
    }


def _wrap(
    order: list[int], columns: dict[int, list[str]], rows: dict[str, float], max_rows: int
) -> tuple[dict[str, int], dict[int, int]]:
    """Deal the nodes of each too-tall layer into sub-columns; rewrites
    ``rows`` in place and returns each node's sub-column and each layer's
    first column.  Nodes of one layer share no arrow, so every arrow still
    points rightwards; the node on the main row (exposure or outcome) keeps it."""
    sub: dict[str, int] = {}
    start: dict[int, int] = {}
    first = 0
    for layer in order:
        members = sorted(columns[layer], key=lambda n: rows[n])
        k = math.ceil(len(members) / max_rows)
        start[layer] = first
        first += max(k, 1)
        if k <= 1:
            sub.update(dict.fromkeys(members, 0))
            continue
        centre = next((j for j, n in enumerate(members) if rows[n] >= 0), len(members))
        for j, n in enumerate(members):
            rank = j - centre
            sub[n] = rank % k
            rows[n] = rank / k
    return sub, start


def _barycenter(node: str, neighbours: dict[str, list[str]], rows: dict[str, float]) -> float:
    placed = [rows[m] for m in neighbours[node] if m in rows]
    return sum(placed) / len(placed) if placed else rows.get(node, 0.0)
