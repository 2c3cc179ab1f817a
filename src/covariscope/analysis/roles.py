"""The role of each covariate for the total effect of X on Y (DESIGN §2)."""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import Any

import networkx as nx

from covariscope.analysis.adjustment import without_exposure_arrows
from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.analysis.paths import (
    PathListing,
    WalkBudget,
    ancestors_of,
    descendants_of,
    listing,
    open_path_with_collider,
    skeleton,
)
from covariscope.vocabulary import Role

__all__ = [
    "ROLES",
    "RoleFacts",
    "classify_covariates",
]

#: Role codes in the order their rules are tried (DESIGN §2).
ROLES: tuple[str, ...] = tuple(Role)


@dataclass(frozen=True)
class RoleFacts:
    """A covariate's role and the facts behind it.

    ``on_paths`` holds (index into the unadjusted backdoor listing, whether
    the covariate is a collider on that path).
    """

    role: str
    ancestor_of_exposure: bool
    ancestor_of_outcome: bool
    common_cause: bool
    descendant_of_exposure: bool
    descendant_of_outcome: bool
    group: tuple[str, ...]
    on_paths: tuple[tuple[int, bool], ...]
    explanation: str
    #: the search for a backdoor path that adjusting for it alone opens stopped
    #: at its work budget without a find (its role then comes from the later
    #: rules): its own path budget, or the walk budget all covariates share
    search_stopped: bool = False


def confounding_nodes(M: nx.DiGraph, X: str, Y: str) -> set[str]:
    """Interior nodes of collider-free backdoor paths X ← … ← T → … → Y, T ≠ Y.

    Such a path is two directed paths from a common top T, one into X and
    one into Y, sharing only T.  Their existence through a given node is
    decided without listing paths by the two-pebble game for disjoint paths
    in an acyclic graph (Fortune, Hopcroft & Wyllie 1980): always move the
    pebble that stands earlier in topological order, so neither can step on
    a node the other has used.  A state lies on a winning run when it is
    reachable from a start and can reach the finish; the pebbles of such
    states, and the tops of such runs, are exactly the nodes sought.
    """
    order = {v: i for i, v in enumerate(nx.topological_sort(M))}
    left_ok = ancestors_of(M.subgraph(set(M) - {Y}), {X})
    right_ok = ancestors_of(M.subgraph(set(M) - {X}), {Y})
    State = tuple[str, str]

    def moves(s: State) -> list[State]:
        u, v = s
        done1, done2 = u == X, v == Y
        if done1 and done2:
            return []
        first = not done1 and (done2 or order[u] < order[v])
        out: list[State] = []
        if first:
            for w in M.successors(u):
                if w in left_ok and w != v and w != Y:
                    out.append((w, v))
        else:
            for w in M.successors(v):
                if w in right_ok and w != u and w != X:
                    out.append((u, w))
        return out

    starts: dict[State, set[str]] = {}
    for top in left_ok & right_ok:
        if top in (X, Y):
            continue
        kids = list(M.successors(top))
        for a in kids:
            if a not in left_ok or a == Y:
                continue
            for b in kids:
                if b != a and b in right_ok and b != X:
                    starts.setdefault((a, b), set()).add(top)
    forward: dict[State, list[State]] = {}
    queue = deque(starts)
    seen = set(starts)
    while queue:
        s = queue.popleft()
        forward[s] = moves(s)
        for t in forward[s]:
            if t not in seen:
                seen.add(t)
                queue.append(t)
    backward: dict[State, list[State]] = {s: [] for s in seen}
    for s, ts in forward.items():
        for t in ts:
            backward[t].append(s)
    useful = {(X, Y)} & seen
    queue = deque(useful)
    while queue:
        t = queue.popleft()
        for s in backward[t]:
            if s not in useful:
                useful.add(s)
                queue.append(s)
    nodes: set[str] = set()
    for u, v in useful:
        nodes.update((u, v))
    for s, tops in starts.items():
        if s in useful:
            nodes |= tops
    return nodes - {X, Y}


def _below_colliders(Gx: nx.DiGraph, X: str) -> set[str]:
    """Nodes at or below a node with two or more parents once X's arrows out
    are removed: only these can open a backdoor path by being adjusted.

    With ``linked to X`` and ``linked to Y without X's arrows`` this is a
    necessary condition for the collider role (an opened path runs X … K1,
    a collider-free stretch into the first collider, and Kr … Y, one out of
    the last, both ancestors of the adjusted node); it spares the path
    search for every covariate that cannot pass it.
    """
    merging = [v for v in Gx if v != X and Gx.in_degree(v) >= 2]
    return descendants_of(Gx, merging)


def _paths_through(unadjusted: PathListing) -> dict[str, list[tuple[int, bool]]]:
    through: dict[str, list[tuple[int, bool]]] = {}
    for i, path in enumerate(unadjusted.paths):
        coll = set(path.colliders)
        for v in path.nodes[1:-1]:
            through.setdefault(v, []).append((i, v in coll))
    return through


_EXPLAIN = {
    "mediator": "It lies on a causal pathway from {x} to {y} (a descendant of {x} and a cause of {y}).",
    "descendant_of_outcome": "It is an effect of {y}, so adjusting for it can bias the estimate.",
    "descendant_of_exposure": "It is an effect of {x} that is not on the way to {y}.",
    "confounder": "It lies, not as a collider, on a backdoor path from {x} to {y} that is open when nothing is adjusted.",
    "collider": "Adjusting for it alone opens a backdoor path from {x} to {y} that is otherwise blocked at a collider.",
    "instrument": "It is linked to {x}, but its only link to {y} runs through {x}; adjusting for it adds variance and removes no bias.",
    "precision": "It is a cause of {y} that is not linked to {x}; adjusting for it can sharpen the estimate.",
    "confounder_proxy": "It is linked to both {x} and {y} apart from the effect of {x}, yet lies on no open backdoor path as a non-collider; it may stand in for a confounder that was not measured.",
    "unrelated": "The diagram links it neither to {x} nor, apart from {x}, to {y} in a way that matters for adjustment.",
}


def _opens_path(
    M: nx.DiGraph, X: str, Y: str, c: str, adj: Any, unsearched: set[str], walk: WalkBudget
) -> bool:
    """Whether adjusting for ``c`` alone opens a backdoor path blocked at a
    collider (``c`` joins ``unsearched`` when the search stopped at its budget;
    ``walk`` is the walk budget every covariate's search draws on)."""
    search = open_path_with_collider(M, X, Y, frozenset({c}), ancestors_of(M, {c}), adj, walk=walk)
    if not search.complete:
        unsearched.add(c)
    return search.path is not None


def roles_on(md: MergedDiagram, X: str, Y: str, unadjusted: PathListing) -> dict[str, RoleFacts]:
    """Roles of every covariate on a merged diagram (see classify_covariates)."""
    M = md.graph
    Gx = without_exposure_arrows(M, X)
    desc_x = nx.descendants(M, X)
    desc_y = nx.descendants(M, Y)
    anc_x = nx.ancestors(M, X)
    anc_y = nx.ancestors(M, Y)
    anc_x_no_y = ancestors_of(M.subgraph(set(M) - {Y}), {X})
    anc_y_no_x = ancestors_of(M.subgraph(set(M) - {X}), {Y})
    # Marginal d-connection: two nodes are d-connected given nothing exactly
    # when they share an ancestor (one may be the ancestor of the other).
    # c shares an ancestor with X exactly when c descends from X or from one
    # of X's ancestors: one search over the graph, not one per covariate.
    linked_x_all = descendants_of(M, anc_x | {X})
    linked_y_gx_all = descendants_of(Gx, ancestors_of(Gx, {Y}))
    may_collide = _below_colliders(Gx, X)
    adj = skeleton(M)
    confounding = confounding_nodes(M, X, Y)
    through = _paths_through(unadjusted)
    unsearched: set[str] = set()
    walk = WalkBudget()  # shared: the searches of all covariates together stay bounded
    # each role's sentence is built once per diagram, not once per covariate
    explain = {role: text.format(x=X, y=Y) for role, text in _EXPLAIN.items()}
    out: dict[str, RoleFacts] = {}
    for c, members in md.members.items():
        if c in (X, Y):
            continue
        linked_x = c in linked_x_all
        linked_y_gx = c in linked_y_gx_all
        if c in desc_x and c in anc_y:
            role = "mediator"
        elif c in desc_y:
            role = "descendant_of_outcome"
        elif c in desc_x:
            role = "descendant_of_exposure"
        elif c in confounding:
            role = "confounder"
        elif (
            linked_x
            and linked_y_gx
            and c in may_collide
            and _opens_path(M, X, Y, c, adj, unsearched, walk)
        ):
            role = "collider"
        elif linked_x and not linked_y_gx:
            role = "instrument"
        elif c in anc_y and not linked_x:
            role = "precision"
        elif linked_x and linked_y_gx:
            role = "confounder_proxy"
        else:
            role = "unrelated"
        facts = RoleFacts(
            role=role,
            ancestor_of_exposure=c in anc_x,
            ancestor_of_outcome=c in anc_y,
            common_cause=c in anc_x_no_y and c in anc_y_no_x,
            descendant_of_exposure=c in desc_x,
            descendant_of_outcome=c in desc_y,
            group=members if len(members) > 1 else (),
            on_paths=tuple(through.get(c, ())),
            explanation=explain[role],
            search_stopped=c in unsearched,
        )
        for m in members:
            out[m] = facts
    return dict(sorted(out.items()))


def classify_covariates(G: nx.DiGraph, exposure: str, outcome: str) -> dict[str, RoleFacts]:
    """The role of every covariate, with the facts behind it.

    Rules, first match wins (``d-connected`` means given nothing):
    mediator (descendant of X and ancestor of Y); descendant_of_outcome;
    descendant_of_exposure; confounder (a non-collider on a backdoor path
    open when nothing is adjusted); collider (adjusting for it alone opens a
    blocked backdoor path: the M-structure of Greenland, Pearl & Robins
    1999); instrument (d-connected to X, d-separated from Y once the arrows
    out of X are removed); precision (ancestor of Y, not d-connected to X);
    confounder_proxy (d-connected to X and, without X's arrows, to Y);
    unrelated.  Members of a measure group share the group's role.

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y"), ("z", "x")])
    >>> {k: v.role for k, v in classify_covariates(G, "x", "y").items()}
    {'c': 'confounder', 'm': 'mediator', 'z': 'instrument'}
    """
    md = merge_diagram(G, exposure, outcome)
    unadjusted = listing(md.graph, exposure, outcome, frozenset(), 500)
    return roles_on(md, exposure, outcome, unadjusted)
