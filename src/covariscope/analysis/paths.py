"""Backdoor paths between exposure and outcome: listing, status, counting.

A backdoor path is a path between X and Y (arrows taken in either
direction, no node twice) whose first arrow points into X.  It is open given
a set Z when every non-collider on it is outside Z and every collider on it
is in Z or has a descendant in Z (Pearl 2009, *Causality*, 2nd ed., §3.3.1).
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Iterable, Iterator
from dataclasses import dataclass

import networkx as nx

from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.model.errors import DiagramError

__all__ = [
    "PathListing",
    "PathStatus",
    "backdoor_paths",
    "given_constructs",
]

_Adjacency = dict[str, set[str]]


@dataclass(frozen=True)
class PathStatus:
    """One backdoor path and its status under a given set.

    Attributes
    ----------
    nodes : tuple of str
        X … Y; a measure group appears as its ``a|b`` construct name.
    open : bool
        Whether the path is open given the set.
    colliders : tuple of str
        Colliders on the path, in path order.
    blocked_by : tuple of str
        Non-colliders in the set, and colliders neither in the set nor with a
        descendant in it.
    explanation : str
        One plain sentence.
    """

    nodes: tuple[str, ...]
    open: bool
    colliders: tuple[str, ...]
    blocked_by: tuple[str, ...]
    explanation: str


@dataclass(frozen=True)
class PathListing:
    """A capped listing of backdoor paths with the true total."""

    paths: tuple[PathStatus, ...]
    total: int
    truncated: bool


def given_constructs(
    md: MergedDiagram, given: Iterable[str], exposure: str, outcome: str
) -> frozenset[str]:
    """Constructs adjusted for by ``given`` (member ids or construct names).

    Raises DiagramError for an unknown id or for the exposure or outcome.
    """
    out: set[str] = set()
    for node in given:
        if node in (exposure, outcome):
            role = "exposure" if node == exposure else "outcome"
            raise DiagramError(
                f'"{node}" is the {role}; an adjustment set holds covariates only, '
                f"so take it out of the set."
            )
        if node in md.construct_of:
            out.add(md.construct_of[node])
        elif node in md.members:
            out.add(node)
        else:
            raise DiagramError(
                f'"{node}" is not a node of the diagram; remove it from the set or add the node.'
            )
    return frozenset(out)


def skeleton(M: nx.DiGraph) -> _Adjacency:
    """Undirected adjacency of a directed graph."""
    adj: _Adjacency = {str(n): set() for n in M}
    for u, v in M.edges:
        adj[u].add(v)
        adj[v].add(u)
    return adj


def ancestors_of(M: nx.DiGraph, nodes: Iterable[str]) -> set[str]:
    """The nodes and all their ancestors."""
    out: set[str] = set()
    for node in nodes:
        if node not in out:
            out.add(node)
            out |= nx.ancestors(M, node)
    return out


def path_colliders(M: nx.DiGraph, nodes: tuple[str, ...]) -> tuple[str, ...]:
    """Interior nodes of ``nodes`` with both neighbouring arrows pointing in."""
    return tuple(
        nodes[i]
        for i in range(1, len(nodes) - 1)
        if M.has_edge(nodes[i - 1], nodes[i]) and M.has_edge(nodes[i + 1], nodes[i])
    )


def _reaches(adj: _Adjacency, start: str, target: str, blocked: Collection[str]) -> bool:
    if start == target:
        return True
    seen = {start}
    stack = [start]
    while stack:
        v = stack.pop()
        for w in adj[v]:
            if w == target:
                return True
            if w not in seen and w not in blocked:
                seen.add(w)
                stack.append(w)
    return False


def _walk(
    M: nx.DiGraph,
    adj: _Adjacency,
    X: str,
    Y: str,
    allow: Callable[[str, str, str], bool] | None = None,
    nodes_ok: Collection[str] | None = None,
) -> Iterator[tuple[str, ...]]:
    """Depth-first backdoor paths X … Y in sorted-neighbour order.

    ``allow(prev, v, nxt)`` may refuse passing through interior node v;
    ``nodes_ok`` restricts the nodes a path may visit.  Branches from which
    Y can no longer be reached are cut, so every leaf is a path.
    """
    path = [X]
    on_path = {X}
    sorted_adj = {v: sorted(ws) for v, ws in adj.items()}

    def ok(w: str) -> bool:
        return nodes_ok is None or w in nodes_ok

    def extend(v: str) -> Iterator[tuple[str, ...]]:
        for w in sorted_adj[v]:
            if w in on_path or not ok(w):
                continue
            if allow is not None and not allow(path[-2], v, w):
                continue
            if w == Y:
                yield (*path, Y)
                continue
            blocked = on_path if nodes_ok is None else on_path | (set(adj) - set(nodes_ok))
            if not _reaches(adj, w, Y, blocked):
                continue
            path.append(w)
            on_path.add(w)
            yield from extend(w)
            path.pop()
            on_path.discard(w)

    for p in sorted(M.predecessors(X)):
        if not ok(p):
            continue
        if p == Y:
            yield (X, Y)
            continue
        if not _reaches(adj, p, Y, on_path):
            continue
        path.append(p)
        on_path.add(p)
        yield from extend(p)
        path.pop()
        on_path.discard(p)


def count_backdoor_paths(
    M: nx.DiGraph,
    X: str,
    Y: str,
    allow: Callable[[str, str, str], bool] | None = None,
    nodes_ok: Collection[str] | None = None,
) -> int:
    """Number of backdoor paths (optionally only those ``allow`` lets pass).

    Memoised on (node, arrow into it or not, component of the remaining
    graph): the number of ways to finish a path from v depends only on how
    the path arrived at v and on the connected component of v once the nodes
    already used are removed, not on the order they were used in.
    """
    adj = skeleton(M)
    excluded = set() if nodes_ok is None else set(adj) - set(nodes_ok)
    memo: dict[tuple[str, bool, frozenset[str]], int] = {}

    def component(v: str, blocked: set[str]) -> frozenset[str]:
        seen = {v}
        stack = [v]
        while stack:
            u = stack.pop()
            for w in adj[u]:
                if w not in seen and w not in blocked and w not in excluded:
                    seen.add(w)
                    stack.append(w)
        return frozenset(seen)

    def count(prev: str, v: str, blocked: set[str]) -> int:
        comp = component(v, blocked)
        if Y not in comp:
            return 0
        into = M.has_edge(prev, v)
        key = (v, into, comp)
        if key in memo:
            return memo[key]
        blocked.add(v)
        total = 0
        for w in adj[v]:
            if w in blocked or w not in comp:
                continue
            if allow is not None and not allow(prev, v, w):
                continue
            total += 1 if w == Y else count(v, w, blocked)
        blocked.discard(v)
        memo[key] = total
        return total

    total = 0
    for p in M.predecessors(X):
        if p in excluded:
            continue
        total += 1 if p == Y else count(X, p, {X})
    return total


def path_status(
    M: nx.DiGraph, nodes: tuple[str, ...], Z: frozenset[str], anZ: Collection[str]
) -> PathStatus:
    """Status of one path given Z (``anZ``: Z and all ancestors of Z)."""
    colliders = path_colliders(M, nodes)
    coll = set(colliders)
    interior = nodes[1:-1]
    blocked_nc = tuple(v for v in interior if v not in coll and v in Z)
    blocked_c = tuple(v for v in colliders if v not in anZ)
    is_open = not blocked_nc and not blocked_c
    if is_open and not colliders:
        text = "Open: it has no collider and nothing on it is adjusted for."
    elif is_open:
        text = (
            f"Open: the collider {', '.join(colliders)} is adjusted for or has an adjusted "
            "descendant, which opens it, and nothing else on it is adjusted for."
        )
    else:
        parts = []
        if blocked_nc:
            parts.append(f"adjusting for {', '.join(blocked_nc)}")
        if blocked_c:
            parts.append(
                f"the collider {', '.join(blocked_c)}, which is not adjusted for and has "
                "no adjusted descendant"
            )
        text = f"Blocked by {' and by '.join(parts)}."
    return PathStatus(
        nodes=nodes,
        open=is_open,
        colliders=colliders,
        blocked_by=blocked_nc + blocked_c,
        explanation=text,
    )


def listing(
    M: nx.DiGraph, X: str, Y: str, Z: frozenset[str], cap: int, *, only_open: bool = False
) -> PathListing:
    """Backdoor paths on a merged graph (see :func:`backdoor_paths`)."""
    if cap < 0:
        raise ValueError("cap must be zero or more")
    adj = skeleton(M)
    anZ = ancestors_of(M, Z)
    allow = None
    nodes_ok = None
    if only_open:

        def allow(prev: str, v: str, nxt: str) -> bool:
            collider = M.has_edge(prev, v) and M.has_edge(nxt, v)
            return v in anZ if collider else v not in Z

        # Every node on an open path is an ancestor of X, Y or Z.
        nodes_ok = ancestors_of(M, {X, Y} | Z)
    found: list[tuple[str, ...]] = []
    truncated = False
    for p in _walk(M, adj, X, Y, allow, nodes_ok):
        if len(found) == cap:
            truncated = True
            break
        found.append(p)
    found.sort(key=lambda p: (len(p), p))
    total = count_backdoor_paths(M, X, Y, allow, nodes_ok) if truncated else len(found)
    statuses = tuple(path_status(M, p, Z, anZ) for p in found)
    return PathListing(paths=statuses, total=total, truncated=truncated)


def open_path_with_collider(
    M: nx.DiGraph, X: str, Y: str, Z: frozenset[str], wanted: Collection[str]
) -> tuple[str, ...] | None:
    """A backdoor path open given Z with a collider in ``wanted``, or None."""
    adj = skeleton(M)
    anZ = ancestors_of(M, Z)
    nodes_ok = ancestors_of(M, {X, Y} | Z)

    def allow(prev: str, v: str, nxt: str) -> bool:
        collider = M.has_edge(prev, v) and M.has_edge(nxt, v)
        return v in anZ if collider else v not in Z

    for p in _walk(M, adj, X, Y, allow, nodes_ok):
        if any(c in wanted for c in path_colliders(M, p)):
            return p
    return None


def backdoor_paths(
    G: nx.DiGraph,
    exposure: str,
    outcome: str,
    given: Iterable[str] = (),
    *,
    cap: int = 500,
) -> PathListing:
    """Backdoor paths from the exposure to the outcome, with their status.

    Measure groups are merged first (a group appears as ``a|b``).  At most
    ``cap`` paths are listed, shortest first among those found; ``total`` is
    the true number of backdoor paths, counted without listing them when
    there are more than ``cap``.

    Parameters
    ----------
    G : networkx.DiGraph
        The diagram.
    exposure, outcome : str
        Node ids of X and Y.
    given : iterable of str
        The adjustment set under which each path's status is read.
    cap : int
        Most paths listed.

    Returns
    -------
    PathListing

    References
    ----------
    Pearl J (2009). *Causality*, 2nd ed., §3.3.1 (the backdoor criterion).

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y")])
    >>> [p.nodes for p in backdoor_paths(G, "x", "y").paths]
    [('x', 'c', 'y')]
    >>> backdoor_paths(G, "x", "y", given=["c"]).paths[0].open
    False
    """
    md = merge_diagram(G, exposure, outcome)
    Z = given_constructs(md, given, exposure, outcome)
    return listing(md.graph, exposure, outcome, Z, cap)
