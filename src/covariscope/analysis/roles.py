"""The role of each covariate for the total effect of X on Y (DESIGN §2)."""

from __future__ import annotations

from collections import deque
from collections.abc import Collection, Mapping
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
    "CONFOUNDING_BUDGET",
    "ROLES",
    "Confounding",
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
    #: the search for collider-free backdoor paths stopped at its work budget
    #: (:data:`CONFOUNDING_BUDGET`) before it showed whether the covariate lies
    #: on one; it lies on a collider-free walk from a common cause, so it is
    #: taken to be a confounder
    confounding_stopped: bool = False


#: Default work budget of the search for confounders (:func:`confounding_nodes`):
#: arrows looked along by the two-pebble game.  The game's states are pairs of
#: nodes, so its work grows as the square of the diagram (1.3 s for a dense
#: 616-node diagram, four times that at twice the size).  Common practice,
#: chosen to stay near half a second on a loaded machine; a dense 300-node
#: diagram is still settled whole.
CONFOUNDING_BUDGET = 400_000


@dataclass(frozen=True)
class Confounding:
    """Covariates on a collider-free backdoor path, as far as the search went.

    ``nodes`` are shown to lie on one (every one listed is right).
    ``unsettled`` is empty when the search was complete; when it stopped at
    its work budget, it holds the covariates that lie on a collider-free
    walk from X to Y through a common cause (the walk may pass a node twice)
    but were not shown to lie on a path: every confounder is in ``nodes`` or
    ``unsettled``.
    """

    nodes: frozenset[str]
    unsettled: frozenset[str] = frozenset()
    #: arrows the game looked along (its work, which the budget bounds)
    work: int = 0


def _candidates(
    M: nx.DiGraph, X: str, Y: str, left_ok: set[str], right_ok: set[str]
) -> tuple[set[str], set[str]]:
    """Nodes on some collider-free walk X ← … ← T → … → Y, T a common cause
    on the X side and on the Y side (one search each, linear): a superset of
    the confounding nodes, since a path is a walk that passes no node twice."""
    tops = (left_ok & right_ok) - {X, Y}
    left = descendants_of(M.subgraph(left_ok), tops)
    right = descendants_of(M.subgraph(right_ok), tops)
    return left, right


_State = tuple[str, str]


def confounding_nodes(
    M: nx.DiGraph, X: str, Y: str, budget: int | None = CONFOUNDING_BUDGET
) -> Confounding:
    """Interior nodes of collider-free backdoor paths X ← … ← T → … → Y, T ≠ Y.

    Such a path is two directed paths from a common top T, one into X and
    one into Y, sharing only T.  Their existence through a given node is
    decided without listing paths by the two-pebble game for disjoint paths
    in an acyclic graph (Fortune, Hopcroft & Wyllie 1980): always move the
    pebble that stands earlier in topological order, so neither can step on
    a node the other has used.  A state lies on a winning run when it is
    reachable from a start and can reach the finish; the pebbles of such
    states, and the tops of such runs, are exactly the nodes sought.

    The states are pairs of nodes, so the game looks along at most ``budget``
    arrows (:data:`CONFOUNDING_BUDGET`; None: no bound).  Past it, the runs
    already won still name confounders, and the nodes they leave that lie on
    a collider-free walk are returned as ``unsettled``.

    References
    ----------
    Fortune S, Hopcroft J, Wyllie J (1980). The directed subgraph
    homeomorphism problem. *Theoretical Computer Science* 10:111–121.

    Examples
    --------
    >>> G = nx.DiGraph([("t", "a"), ("a", "x"), ("t", "b"), ("b", "y"), ("x", "y"), ("i", "x")])
    >>> sorted(confounding_nodes(G, "x", "y").nodes)
    ['a', 'b', 't']
    >>> stopped = confounding_nodes(G, "x", "y", budget=0)
    >>> sorted(stopped.nodes), sorted(stopped.unsettled)
    ([], ['a', 'b', 't'])
    """
    left_ok = ancestors_of(M.subgraph(set(M) - {Y}), {X})
    right_ok = ancestors_of(M.subgraph(set(M) - {X}), {Y})
    left, right = _candidates(M, X, Y, left_ok, right_ok)
    # in a winning run the first pebble keeps to the X side, the second to the Y side
    left.add(X)
    right.add(Y)
    starts = _starts(M, X, Y, left, right)
    forward, work = _play(M, X, Y, starts, left, right, budget)
    complete = budget is None or work <= budget
    useful = _winning(forward, (X, Y), starts)
    nodes: set[str] = set()
    for u, v in useful:
        nodes.update((u, v))
    for s, tops in starts.items():
        if s in useful:
            nodes |= tops
    nodes -= {X, Y}
    unsettled = frozenset() if complete else frozenset((left | right) - nodes - {X, Y})
    return Confounding(frozenset(nodes), unsettled, work)


def _starts(
    M: nx.DiGraph, X: str, Y: str, left: set[str], right: set[str]
) -> dict[_State, set[str]]:
    """The game's first states (a child of T on each side) and their tops T."""
    starts: dict[_State, set[str]] = {}
    for top in sorted(left & right - {X, Y}):
        kids = sorted(M.successors(top))
        for a in kids:
            if a not in left or a == Y:
                continue
            for b in kids:
                if b != a and b in right and b != X:
                    starts.setdefault((a, b), set()).add(top)
    return starts


def _play(
    M: nx.DiGraph,
    X: str,
    Y: str,
    starts: Mapping[_State, set[str]],
    left: set[str],
    right: set[str],
    budget: int | None,
) -> tuple[dict[_State, list[_State]], int]:
    """The moves from every state reachable from ``starts``, breadth first,
    until the arrows looked along pass ``budget``; and how many were (more
    than ``budget`` when it stopped early)."""
    order = {v: i for i, v in enumerate(nx.topological_sort(M))}
    succ: dict[str, list[str]] = {}

    def moves(s: _State) -> list[_State]:
        u, v = s
        done1, done2 = u == X, v == Y
        if done1 and done2:
            return []
        first = not done1 and (done2 or order[u] < order[v])
        w0 = u if first else v
        if w0 not in succ:
            succ[w0] = sorted(M.successors(w0))
        if first:
            return [(w, v) for w in succ[u] if w in left and w != v and w != Y]
        return [(u, w) for w in succ[v] if w in right and w != u and w != X]

    forward: dict[_State, list[_State]] = {}
    queue = deque(starts)
    seen = set(starts)
    work = 0
    while queue:
        s = queue.popleft()
        forward[s] = moves(s)
        work += 1 + M.out_degree(s[0]) + M.out_degree(s[1])
        if budget is not None and work > budget:
            return forward, work
        for t in forward[s]:
            if t not in seen:
                seen.add(t)
                queue.append(t)
    return forward, work


def _winning(
    forward: Mapping[_State, list[_State]], finish: _State, starts: Collection[_State]
) -> set[_State]:
    """States from which the moves in ``forward`` reach ``finish`` (itself
    reached by one of them, or a start)."""
    backward: dict[_State, list[_State]] = {}
    for s, ts in forward.items():
        for t in ts:
            backward.setdefault(t, []).append(s)
    useful = {finish} if finish in backward or finish in starts else set()
    queue = deque(useful)
    while queue:
        t = queue.popleft()
        for s in backward.get(t, ()):
            if s not in useful:
                useful.add(s)
                queue.append(s)
    return useful


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
    M: nx.DiGraph,
    X: str,
    Y: str,
    c: str,
    adj: Any,
    an_ends: set[str],
    unsearched: set[str],
    walk: WalkBudget,
) -> bool:
    """Whether adjusting for ``c`` alone opens a backdoor path blocked at a
    collider (``c`` joins ``unsearched`` when the search stopped at its budget;
    ``walk`` is the walk budget every covariate's search draws on, ``an_ends``
    the ancestors of X and Y).  Finding ``c``'s ancestors is one pass over
    the diagram, so it costs one step of ``walk`` too."""
    if not walk.take():
        unsearched.add(c)
        return False
    an_c = ancestors_of(M, {c})
    search = open_path_with_collider(
        M, X, Y, frozenset({c}), an_c, adj, walk=walk, an_given=an_c, nodes_ok=an_ends | an_c
    )
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
    an_ends = ancestors_of(M, {X, Y})
    found = confounding_nodes(M, X, Y, CONFOUNDING_BUDGET)
    # unsettled ones are taken to be confounders: every confounder is among them
    confounding = found.nodes | found.unsettled
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
            and _opens_path(M, X, Y, c, adj, an_ends, unsearched, walk)
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
            confounding_stopped=c in found.unsettled and role == "confounder",
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
