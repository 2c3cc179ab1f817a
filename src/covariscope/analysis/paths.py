"""Backdoor paths between exposure and outcome: listing, status, counting.

A backdoor path is a path between X and Y (arrows taken in either
direction, no node twice) whose first arrow points into X.  It is open given
a set Z when every non-collider on it is outside Z and every collider on it
is in Z or has a descendant in Z (Pearl 2009, *Causality*, 2nd ed., §3.3.1).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Callable, Collection, Iterable, Iterator
from dataclasses import dataclass
from functools import cached_property

import networkx as nx

from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.errors import DiagramError

__all__ = [
    "COUNT_BUDGET",
    "SEARCH_BUDGET",
    "WALK_BUDGET",
    "PathListing",
    "PathSearch",
    "PathStatus",
    "WalkBudget",
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
    """

    nodes: tuple[str, ...]
    open: bool
    colliders: tuple[str, ...]
    blocked_by: tuple[str, ...]

    @cached_property
    def explanation(self) -> str:
        """One plain sentence, built when first read (a listing holds hundreds
        of paths and few are ever put in words)."""
        if self.open and not self.colliders:
            return "Open: it has no collider and nothing on it is adjusted for."
        if self.open:
            return (
                f"Open: the collider {', '.join(self.colliders)} is adjusted for or has an "
                "adjusted descendant, which opens it, and nothing else on it is adjusted for."
            )
        coll = set(self.colliders)
        blocked_nc = [v for v in self.blocked_by if v not in coll]
        blocked_c = [v for v in self.blocked_by if v in coll]
        parts = []
        if blocked_nc:
            parts.append(f"adjusting for {', '.join(blocked_nc)}")
        if blocked_c:
            parts.append(
                f"the collider {', '.join(blocked_c)}, which is not adjusted for and has "
                "no adjusted descendant"
            )
        return f"Blocked by {' and by '.join(parts)}."


@dataclass(frozen=True)
class PathListing:
    """A capped listing of backdoor paths with their total.

    Attributes
    ----------
    paths : tuple of PathStatus
        The listed paths, shortest first; at most the cap.
    total : int
        The number of backdoor paths when ``total_exact``; otherwise a lower
        bound (more than ``len(paths)``), to be read as "at least ``total``".
    truncated : bool
        Whether more paths exist than are listed.
    total_exact : bool
        False when counting stopped at its work budget.
    walk_stopped : bool
        True when the walk that lists the paths stopped at its work budget
        (:data:`WALK_BUDGET`) before it had listed ``cap`` of them: every path
        listed is real and ``total`` still counts them all (or is a lower
        bound), but fewer are listed than there are.
    """

    paths: tuple[PathStatus, ...]
    total: int
    truncated: bool
    total_exact: bool = True
    walk_stopped: bool = False

    def total_text(self) -> str:
        """The total in words: ``"12"`` or ``"at least 3,400,000"``."""
        return f"{self.total:,}" if self.total_exact else f"at least {self.total:,}"


#: Default work budget of the path counter: frontier entries handled, summed
#: over the arrows (a state costs one entry per node on its frontier, plus one,
#: so the budget follows the time spent: counting states alone let a dense
#: 150-node diagram, whose frontiers hold 45 nodes, take 2 s).  About half a
#: second on a dense 150-node diagram on a loaded machine; a complete 9-node
#: diagram is still counted exactly.
COUNT_BUDGET = 100_000

#: Default work budget of a search for one open path of a kind: paths examined.
#: Branches that end in no path are bounded by :data:`WALK_BUDGET` instead;
#: common practice, chosen to stay well under a second on a dense 80-node
#: diagram.
SEARCH_BUDGET = 2_000

#: Default work budget of the path walks of one result (one listing, or the
#: searches of every covariate of one stage together): reachability searches
#: made, each at most one pass over the diagram's arrows.  A walk that keeps
#: to open paths can go down branches that end in no path at all (below a
#: collider that blocks every way on), so the path budgets alone do not bound
#: it: a ladder of k rungs under such a collider takes 2**k of them.  Common
#: practice, chosen to stay near a second on a dense 150-node diagram.
WALK_BUDGET = 20_000


class WalkBudget:
    """Reachability searches that path walks may still make.

    One object may be shared by several walks (the searches of every
    covariate of one stage), so that their work together stays bounded;
    ``ran_out`` tells a walk that stopped because of it.

    Examples
    --------
    >>> b = WalkBudget(1)
    >>> b.take(), b.take(), b.ran_out
    (True, False, True)
    """

    def __init__(self, steps: int | None = WALK_BUDGET) -> None:
        self.left = steps
        self.ran_out = False

    def take(self) -> bool:
        """Spend one step: False, and ``ran_out`` set, once none is left."""
        if self.left is None:
            return True
        if self.left <= 0:
            self.ran_out = True
            return False
        self.left -= 1
        return True


@dataclass(frozen=True)
class PathSearch:
    """The outcome of a search for one path: the path found, or None; and
    whether the search was complete (False: it stopped at its work budget
    without finding one, so "none found" is not "none exists")."""

    path: tuple[str, ...] | None
    complete: bool = True


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
    """The nodes and all their ancestors (one search from all of them at
    once, so linear in the size of the graph however many nodes are given)."""
    return _closure(M.predecessors, nodes)


def descendants_of(M: nx.DiGraph, nodes: Iterable[str]) -> set[str]:
    """The nodes and all their descendants (one search, linear)."""
    return _closure(M.successors, nodes)


def _closure(step: Callable[[str], Iterable[str]], nodes: Iterable[str]) -> set[str]:
    out = set(nodes)
    stack = list(out)
    while stack:
        for w in step(stack.pop()):
            if w not in out:
                out.add(w)
                stack.append(w)
    return out


def path_colliders(M: nx.DiGraph, nodes: tuple[str, ...]) -> tuple[str, ...]:
    """Interior nodes of ``nodes`` with both neighbouring arrows pointing in."""
    return tuple(
        nodes[i]
        for i in range(1, len(nodes) - 1)
        if M.has_edge(nodes[i - 1], nodes[i]) and M.has_edge(nodes[i + 1], nodes[i])
    )


def _reaches(
    adj: _Adjacency,
    start: str,
    target: str,
    blocked: Collection[str],
    nodes_ok: Collection[str] | None = None,
) -> bool:
    if start == target:
        return True
    seen = {start}
    stack = [start]
    while stack:
        v = stack.pop()
        for w in adj[v]:
            if w == target:
                return True
            if w not in seen and w not in blocked and (nodes_ok is None or w in nodes_ok):
                seen.add(w)
                stack.append(w)
    return False


def _cuthill_mckee_reversed(U: nx.Graph) -> list[str]:
    """Reverse Cuthill–McKee order of a connected graph (Cuthill & McKee 1969),
    ties broken by node id so that the order, and a budgeted count that
    depends on it, is the same in every run (networkx's version iterates sets)."""
    start = min(U, key=lambda n: (U.degree(n), n))
    order, seen = [start], {start}
    queue = deque([start])
    while queue:
        v = queue.popleft()
        for w in sorted((w for w in U[v] if w not in seen), key=lambda n: (U.degree(n), n)):
            seen.add(w)
            order.append(w)
            queue.append(w)
    return order[::-1]


def _walk(
    M: nx.DiGraph,
    adj: _Adjacency,
    X: str,
    Y: str,
    allow: Callable[[str, str, str], bool] | None = None,
    nodes_ok: Collection[str] | None = None,
    budget: WalkBudget | None = None,
) -> Iterator[tuple[str, ...]]:
    """Depth-first backdoor paths X … Y in sorted-neighbour order.

    ``allow(prev, v, nxt)`` may refuse passing through interior node v;
    ``nodes_ok`` restricts the nodes a path may visit.  Branches from which
    Y can no longer be reached are cut, so without ``allow`` every leaf is a
    path; with it a branch may still end in none.  Each reachability check
    spends one step of ``budget``; the walk ends when it runs out.
    """
    steps = budget if budget is not None else WalkBudget(None)
    path = [X]
    on_path = {X}
    # Neighbours are sorted only where the walk goes (sorting them all would
    # cost the whole graph on every call).
    sorted_adj: dict[str, list[str]] = {}

    def ok(w: str) -> bool:
        return nodes_ok is None or w in nodes_ok

    def enter(w: str) -> Iterator[str]:
        path.append(w)
        on_path.add(w)
        if w not in sorted_adj:
            sorted_adj[w] = sorted(adj[w])
        return iter(sorted_adj[w])

    for p in sorted(M.predecessors(X)):
        if steps.ran_out:
            return
        if not ok(p):
            continue
        if p == Y:
            yield (X, Y)
            continue
        if not steps.take() or not _reaches(adj, p, Y, on_path, nodes_ok):
            continue
        # depth first with a stack of neighbour iterators, not recursion: a
        # path may be longer than Python's recursion limit
        stack = [enter(p)]
        while stack:
            w = next(stack[-1], None)
            if w is None:
                stack.pop()
                on_path.discard(path.pop())
                continue
            if steps.ran_out:
                return
            if w in on_path or not ok(w):
                continue
            if allow is not None and not allow(path[-2], path[-1], w):
                continue
            if w == Y:
                yield (*path, Y)
                continue
            if not steps.take() or not _reaches(adj, w, Y, on_path, nodes_ok):
                continue
            stack.append(enter(w))


def count_backdoor_paths(
    M: nx.DiGraph,
    X: str,
    Y: str,
    Z: Collection[str] | None = None,
    anZ: Collection[str] | None = None,
    budget: int | None = None,
) -> tuple[int, bool]:
    """Number of backdoor paths (only those open given Z when Z is given).

    Returns ``(count, exact)``.  Counting simple paths is #P-hard (Valiant
    1979, *SIAM J. Comput.* 8:410), and on dense diagrams the number of
    frontier states grows into the millions.  With a ``budget``, at most
    about ``budget`` frontier entries (each state: one per frontier node,
    plus one) are handled in all: what is left of it is shared
    evenly by the arrows still to come, and the states of largest count are
    carried from one arrow to the next; once it is spent the count stops.
    When any state is dropped, ``exact`` is False and ``count`` is a lower
    bound, because every path counted is a real path and each path is
    counted once, through its one sequence of states.

    Counted without listing them, by frontier-based dynamic programming over
    the arrows (Knuth's SIMPATH, *The Art of Computer Programming* 4A,
    §7.1.4; Kawahara et al. 2017, IEICE Trans. Fundamentals E100-A:1773).
    Arrows are taken one at a time in a bandwidth-reducing order; a state
    records, for each node on the frontier, how many chosen arrows touch it,
    the other end of its partial path, and whether its one arrow points into
    it (enough to tell a collider when the second arrow arrives).  The arrows
    out of X are left out, so X's one arrow on a path is an arrow into X.
    """
    if anZ is not None and Z is not None:
        # Every node on an open path is an ancestor of X, Y or Z.
        M = M.subgraph(ancestors_of(M, {X, Y, *Z}))
    # sorted, so that a budgeted count is the same from run to run
    edges = sorted((u, v) for u, v in M.edges if u != X)
    U = nx.Graph(edges)
    if X not in U or Y not in U or not nx.has_path(U, X, Y):
        return 0, True
    U = U.subgraph(nx.node_connected_component(U, X))
    pos = {v: i for i, v in enumerate(_cuthill_mckee_reversed(U))}
    edges = sorted(
        ((u, v) for u, v in edges if u in pos and v in pos),
        key=lambda e: (min(pos[e[0]], pos[e[1]]), max(pos[e[0]], pos[e[1]])),
    )
    first: dict[str, int] = {}
    last: dict[str, int] = {}
    for i, (u, v) in enumerate(edges):
        for w in (u, v):
            first.setdefault(w, i)
            last[w] = i
    enter: dict[int, list[str]] = {}
    leave: dict[int, list[str]] = {}
    for w, i in first.items():
        enter.setdefault(i, []).append(w)
    for w, i in last.items():
        leave.setdefault(i, []).append(w)
    ends = (X, Y)
    blocked_nc = set(Z or ()) - {X, Y}
    closed_c = None if anZ is None else set(M) - set(anZ) - {X, Y}

    track_into = Z is not None

    def passes(w: str, collider: bool) -> bool:
        if w in ends:
            return True
        if collider:
            return closed_c is None or w not in closed_c
        return Z is None or w not in blocked_nc

    # state: sorted tuple of (node, degree, partner, arrow into it)
    Entry = tuple[str, int, str, bool]
    states: dict[tuple[Entry, ...], int] = {(): 1}
    accepted = 0
    exact = True
    spent = 0
    for i, (a, b) in enumerate(edges):
        spent += sum(len(k) + 1 for k in states)
        if budget is not None and spent > budget:
            # Spent: the paths completed so far are the lower bound.  (Carrying
            # even one state per arrow would cost the frontier's width each time,
            # and a hub joined to a thousand nodes makes it a thousand wide.)
            return accepted, False
        out: dict[tuple[Entry, ...], int] = {}
        for key, cnt in states.items():
            st = {e[0]: e for e in key}
            for w in enter.get(i, ()):
                st[w] = (w, 0, w, False)
            candidates = [st]
            da, pa = st[a][1], st[a][2]
            db, pb, ib = st[b][1], st[b][2], st[b][3]
            cap_a = 1 if a in ends else 2
            cap_b = 1 if b in ends else 2
            if (
                da < cap_a
                and db < cap_b
                and not (da == 1 and pa == b)
                and (da == 0 or passes(a, False))
                and (db == 0 or passes(b, ib))
            ):
                ea = pa if da == 1 else a
                eb = pb if db == 1 else b
                t = dict(st)
                t[a] = (a, da + 1, a, False)
                # the arrow-into flag only matters while a node has one arrow
                t[b] = (b, db + 1, b, db == 0 and track_into)
                if {ea, eb} == {X, Y}:
                    # the path is complete: every later arrow is left out
                    if not any(e[1] == 1 and e[0] not in ends for e in t.values()):
                        accepted += cnt
                else:
                    for e_self, e_other in ((ea, eb), (eb, ea)):
                        if e_self in t:
                            _, d, _, into = t[e_self]
                            t[e_self] = (e_self, d, e_other, into)
                    candidates.append(t)
            for c in candidates:
                ok = True
                for w in leave.get(i, ()):
                    d = c[w][1]
                    if (w in ends and d != 1) or (w not in ends and d == 1):
                        ok = False
                        break
                if not ok:
                    continue
                k = tuple(sorted(e for w, e in c.items() if w not in leave.get(i, ())))
                out[k] = out.get(k, 0) + cnt
        # What is left of the budget is shared evenly by the arrows to come.
        per_arrow = None
        if budget is not None:
            width = 1 + max((len(k) for k in out), default=0)
            per_arrow = max(1, max(0, budget - spent) // (len(edges) - i) // width)
        if per_arrow is not None and len(out) > per_arrow:
            # Keep the states that stand for the most partial paths, ties by
            # key so the bound does not depend on dictionary order.
            kept = sorted(out.items(), key=lambda kv: (-kv[1], kv[0]))[:per_arrow]
            out = dict(kept)
            exact = False
        states = out
    return accepted, exact


def path_status(
    M: nx.DiGraph, nodes: tuple[str, ...], Z: frozenset[str], anZ: Collection[str]
) -> PathStatus:
    """Status of one path given Z (``anZ``: Z and all ancestors of Z)."""
    colliders = path_colliders(M, nodes)
    coll = set(colliders)
    interior = nodes[1:-1]
    blocked_nc = tuple(v for v in interior if v not in coll and v in Z)
    blocked_c = tuple(v for v in colliders if v not in anZ)
    return PathStatus(
        nodes=nodes,
        open=not blocked_nc and not blocked_c,
        colliders=colliders,
        blocked_by=blocked_nc + blocked_c,
    )


def listing(
    M: nx.DiGraph,
    X: str,
    Y: str,
    Z: frozenset[str],
    cap: int,
    *,
    only_open: bool = False,
    count_budget: int | None = COUNT_BUDGET,
    walk_budget: int | None = WALK_BUDGET,
) -> PathListing:
    """Backdoor paths on a merged graph (see :func:`backdoor_paths`).

    ``walk_budget`` bounds the reachability searches of the walk that lists
    them (:data:`WALK_BUDGET`; None: no bound).
    """
    if cap < 0:
        raise ValueError("cap must be zero or more")
    if count_budget is not None and count_budget < 1:
        raise ValueError("count_budget must be one or more, or None for an exact count")
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
    walk = WalkBudget(walk_budget)
    for p in _walk(M, adj, X, Y, allow, nodes_ok, walk):
        if len(found) == cap:
            truncated = True
            break
        found.append(p)
    found.sort(key=lambda p: (len(p), p))
    exact = True
    stopped = walk.ran_out and not truncated
    if not truncated and not stopped:
        total = len(found)
    else:
        if only_open:
            total, exact = count_backdoor_paths(M, X, Y, Z, anZ, budget=count_budget)
        else:
            total, exact = count_backdoor_paths(M, X, Y, budget=count_budget)
        # The walk already met the paths it listed (and, past the cap, one more).
        total = max(total, cap + 1 if truncated else len(found))
        if stopped and exact and total == len(found):
            stopped = False  # the walk had listed them all
        truncated = truncated or stopped
    statuses = tuple(path_status(M, p, Z, anZ) for p in found)
    return PathListing(
        paths=statuses, total=total, truncated=truncated, total_exact=exact, walk_stopped=stopped
    )


def open_path_with_collider(
    M: nx.DiGraph,
    X: str,
    Y: str,
    Z: frozenset[str],
    wanted: Collection[str],
    adj: _Adjacency | None = None,
    *,
    budget: int | None = SEARCH_BUDGET,
    walk: WalkBudget | None = None,
    an_given: Collection[str] | None = None,
    nodes_ok: Collection[str] | None = None,
) -> PathSearch:
    """A backdoor path open given Z with a collider in ``wanted``.

    Open paths are walked in a fixed order; with a ``budget`` at most that
    many are examined, and the walk makes at most the reachability searches
    ``walk`` has left (a new :data:`WALK_BUDGET` when None; pass one object
    to many searches to bound them together).  A search that stops at either
    budget without a find says so (``complete`` False).  When the caller
    asks many times of one graph, it passes what it has already built:
    ``adj`` is ``skeleton(M)``, ``an_given`` the ancestors of Z (Z
    included) and ``nodes_ok`` those of X, Y and Z.
    """
    adj = skeleton(M) if adj is None else adj
    walk = WalkBudget() if walk is None else walk
    anZ = ancestors_of(M, Z) if an_given is None else an_given
    nodes_ok = ancestors_of(M, {X, Y} | Z) if nodes_ok is None else nodes_ok

    def allow(prev: str, v: str, nxt: str) -> bool:
        collider = M.has_edge(prev, v) and M.has_edge(nxt, v)
        return v in anZ if collider else v not in Z

    for seen, p in enumerate(_walk(M, adj, X, Y, allow, nodes_ok, walk)):
        if budget is not None and seen >= budget:
            return PathSearch(None, complete=False)
        if any(c in wanted for c in path_colliders(M, p)):
            return PathSearch(p)
    return PathSearch(None, complete=not walk.ran_out)


def backdoor_paths(
    G: nx.DiGraph,
    exposure: str,
    outcome: str,
    given: Iterable[str] = (),
    *,
    cap: int = 500,
    count_budget: int | None = COUNT_BUDGET,
) -> PathListing:
    """Backdoor paths from the exposure to the outcome, with their status.

    Measure groups are merged first (a group appears as ``a|b``).  At most
    ``cap`` paths are listed, shortest first among those found; each listed
    path and its status are exact whatever the budget.  When there are more
    than ``cap``, ``total`` is counted without listing the paths; counting
    simple paths is #P-hard, so the count has a work budget.  When the budget
    runs out, ``total_exact`` is False and ``total`` is a lower bound (read
    "at least ``total``", see :meth:`PathListing.total_text`).

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
    count_budget : int or None
        Work budget of the count (frontier entries handled over all arrows,
        :data:`COUNT_BUDGET`); None counts exactly however long it takes.

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
    >>> K = nx.DiGraph((f"n{i}", f"n{j}") for i in range(9) for j in range(i + 1, 9))
    >>> backdoor_paths(K, "n4", "n8", cap=5).total_text()
    '7,828'
    >>> backdoor_paths(K, "n4", "n8", cap=5, count_budget=100).total_exact
    False
    """
    md = merge_diagram(G, exposure, outcome)
    Z = given_constructs(md, given, exposure, outcome)
    return listing(md.graph, exposure, outcome, Z, cap, count_budget=count_budget)
