"""Adjustment sets: the backdoor criterion, all minimal sets, a proposal's review."""

from __future__ import annotations

import itertools
from collections import Counter
from collections.abc import Collection, Iterable, Mapping
from dataclasses import dataclass

import networkx as nx

from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.analysis.paths import (
    PathSearch,
    WalkBudget,
    ancestors_of,
    descendants_of,
    given_constructs,
    listing,
    open_path_with_collider,
    skeleton,
)
from covariscope.analysis.separation import d_connected_closure, minimal_d_separator

__all__ = [
    "MINIMAL_SETS_BUDGET",
    "PAIR_CHECK_LIMIT",
    "UNSEARCHED_CHECK_LIMIT",
    "Backdoor",
    "MinimalSets",
    "ProposalReview",
    "is_sufficient",
    "list_minimal_sets",
    "minimal_adjustment_sets",
    "review_proposal",
]


@dataclass(frozen=True)
class ProposalReview:
    """What the diagram says about a proposed adjustment set.

    Attributes
    ----------
    proposed : tuple of str
        The proposed covariates, sorted.
    sufficient : bool
        Whether the set meets the backdoor criterion.
    open_paths : tuple of tuple of str
        Backdoor paths the set leaves open (at most 500 listed).  Each is
        truly open; ``sufficient`` is decided by d-separation, not from this
        listing, so neither depends on the cap or the count's budget.
    open_paths_total : int
        How many backdoor paths the set leaves open; a lower bound when
        ``open_paths_total_exact`` is False.
    open_paths_total_exact : bool
        False when counting stopped at its work budget (read "at least").
    unnecessary : tuple of str
        Members, not harmful, whose removal leaves the set sufficient.
    harmful : tuple of str
        Descendants of the exposure, and members whose removal closes a
        backdoor path that the full set opens.
    unmeasured_in_set : tuple of str
        Members marked as not measured.
    exposure_descendants : tuple of str
        Members that descend from the exposure (a mediator, or any other
        descendant of the exposure or the outcome): a set that holds one is
        insufficient whatever paths it closes.
    not_together : tuple of tuple of str
        Groups of ``unnecessary`` members that may be dropped one at a time
        but not together: dropping two of a group at once would leave the set
        insufficient (two measures of one confounder: either one, not both).
        Members of ``unnecessary`` outside every group may all be dropped at
        once.
    unsearched : tuple of str
        Members whose search for a backdoor path they open stopped at its
        work budget (:data:`~covariscope.analysis.paths.SEARCH_BUDGET` paths,
        or the :data:`~covariscope.analysis.paths.WALK_BUDGET` the searches of
        all members share) without a find: not marked harmful, but not shown
        harmless either.
    not_together_checked : bool
        False when ``unnecessary`` held more members than the pairwise check
        takes (:data:`PAIR_CHECK_LIMIT`): they are then all one group of
        ``not_together`` (drop them one at a time), unchecked.
    open_paths_stopped : bool
        True when the walk that lists the open paths stopped at its work
        budget (:data:`~covariscope.analysis.paths.WALK_BUDGET`) before
        listing 500: fewer are listed than ``open_paths_total`` counts.
    """

    proposed: tuple[str, ...]
    sufficient: bool
    open_paths: tuple[tuple[str, ...], ...]
    open_paths_total: int
    open_paths_total_exact: bool
    unnecessary: tuple[str, ...]
    harmful: tuple[str, ...]
    unmeasured_in_set: tuple[str, ...]
    exposure_descendants: tuple[str, ...] = ()
    not_together: tuple[tuple[str, ...], ...] = ()
    unsearched: tuple[str, ...] = ()
    open_paths_stopped: bool = False
    not_together_checked: bool = True

    def open_paths_text(self) -> str:
        """The number of open paths in words: ``"3"`` or ``"at least 10,001"``."""
        n = f"{self.open_paths_total:,}"
        return n if self.open_paths_total_exact else f"at least {n}"


def without_exposure_arrows(M: nx.DiGraph, X: str) -> nx.DiGraph:
    """The graph with the arrows out of X removed (the backdoor graph)."""
    H = M.copy()
    H.remove_edges_from(list(M.out_edges(X)))
    return H


class Backdoor:
    """The backdoor criterion on one merged diagram, asked of many sets.

    X and Y are d-separated given Z exactly when they are separated in the
    moral graph of the ancestors of X, Y and Z (Lauritzen SL, Dawid AP,
    Larsen BN, Leimer HG (1990), Independence properties of directed Markov
    fields, *Networks* 20:491–505; from memory), which
    :func:`~covariscope.analysis.separation.d_connected_closure` searches in
    linear time.  (networkx's ``is_d_separator`` gives the same answer but
    took 20 s a call on a 140-node diagram of stacked rungs.)

    The graph without the exposure's arrows out and the exposure's
    descendants are built once, so each question costs one linear search,
    not a merge and a copy of the diagram as well; each answer is kept per
    set of constructs, so two members of one measure group, which adjust the
    same construct, cost one search.  The caller owns the object (one per
    stage run; it is not shared between threads).

    Examples
    --------
    >>> G = nx.DiGraph([("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"), ("x", "y")])
    >>> check = Backdoor(merge_diagram(G, "x", "y"), "x", "y")
    >>> check.suffices([]), check.suffices(["m"]), check.suffices(["m", "a"])
    (True, False, True)
    >>> check.searches
    3
    """

    def __init__(self, md: MergedDiagram, X: str, Y: str) -> None:
        self.merged = md
        self.exposure, self.outcome = X, Y
        self._gx = without_exposure_arrows(md.graph, X)
        self._below_x = descendants_of(md.graph, {X}) - {X}
        self._known: dict[frozenset[str], bool] = {}
        #: searches made (answers kept are not searched again)
        self.searches = 0

    def suffices(self, members: Iterable[str]) -> bool:
        """Whether adjusting for ``members`` (node ids) meets the criterion."""
        return self.suffices_constructs(
            given_constructs(self.merged, members, self.exposure, self.outcome)
        )

    def suffices_constructs(self, Z: frozenset[str]) -> bool:
        """Whether adjusting for the constructs ``Z`` meets the criterion."""
        known = self._known.get(Z)
        if known is not None:
            return known
        self.searches += 1
        if Z & self._below_x:
            answer = False
        else:
            X, Y = self.exposure, self.outcome
            within = ancestors_of(self._gx, {X, Y} | Z)
            answer = Y not in d_connected_closure(self._gx, [X], within, Z)
        self._known[Z] = answer
        return answer

    def pinned(self, Z: frozenset[str]) -> set[str]:
        """Ancestors of X, Y and of a parent of a member of Z (in the graph
        without X's arrows out): the members of Z whose removal leaves the
        ancestral set of X, Y and Z as it is."""
        parents = {p for z in Z for p in self._gx.pred[z]}
        return ancestors_of(self._gx, {self.exposure, self.outcome} | parents)

    def removable(self, Z: frozenset[str]) -> frozenset[str]:
        """The constructs ``c`` of a sufficient ``Z`` for which ``Z − {c}`` is
        sufficient too, all in one linear pass (not one search per member).

        In the moral graph of the ancestors of X, Y and Z, Z separates X from
        Y (the criterion of :class:`Backdoor`).  Taken out of Z, a member
        joins X's side to Y's exactly when it borders both (the components
        of the separator test TESTMINSEP of van der Zander & Liśkiewicz
        2020); if its removal shrinks the ancestral set, the smaller moral
        graph is part of the larger and joins no more (and such a member,
        whose only links there are its parents, which are married through
        it, never borders both sides of a separator).

        Examples
        --------
        >>> G = nx.DiGraph([("c", "a"), ("a", "x"), ("c", "y"), ("d", "y"), ("x", "y")])
        >>> check = Backdoor(merge_diagram(G, "x", "y"), "x", "y")
        >>> sorted(check.removable(frozenset({"a", "c", "d"})))
        ['a', 'c', 'd']
        >>> sorted(check.removable(frozenset({"a", "d"})))
        ['d']
        """
        if not self.suffices_constructs(Z):
            raise ValueError("removable() asks of a sufficient set")
        X, Y = self.exposure, self.outcome
        A = ancestors_of(self._gx, {X, Y} | Z)
        adj = _moral_stars(self._gx, A)
        sides = [_component(adj, end, Z) for end in (X, Y)]
        return frozenset(z for z in Z if not all(adj[z] & side for side in sides))


def is_sufficient(G: nx.DiGraph, exposure: str, outcome: str, adjustment: Iterable[str]) -> bool:
    """Whether a set meets the backdoor criterion for the exposure's total effect.

    The set holds no descendant of the exposure X, and X is d-separated from
    the outcome Y given the set once the arrows out of X are removed.  A set
    that holds any member of a measure group adjusts the whole group.  (To
    ask of many sets, merge once and use :class:`Backdoor`.)

    References
    ----------
    Pearl J (1993). Comment: graphical models, causality and intervention.
    *Statistical Science* 8:266–269; Pearl J (2009). *Causality*, 2nd ed.,
    Definition 3.3.1.

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"), ("x", "y")])
    >>> is_sufficient(G, "x", "y", [])
    True
    >>> is_sufficient(G, "x", "y", ["m"])
    False
    """
    return Backdoor(merge_diagram(G, exposure, outcome), exposure, outcome).suffices(adjustment)


def _component(
    adj: Mapping[object, set[object]], start: object, blocked: Collection[str]
) -> set[object]:
    """Vertices joined to ``start`` in ``adj`` by paths that avoid ``blocked``."""
    seen = {start}
    stack = [start]
    while stack:
        for w in adj[stack.pop()]:
            if w not in seen and w not in blocked:
                seen.add(w)
                stack.append(w)
    return seen


def _moral_stars(M: nx.DiGraph, A: set[str]) -> dict[object, set[object]]:
    """The moral graph of ``M[A]`` with each family's clique drawn as a star.

    Moralising marries all parents of a node, which costs the square of its
    number of parents (a thousand causes of the outcome give half a million
    links).  Instead each node with two or more parents gets one extra
    vertex joined to it and to its parents: two original nodes are then
    joined by a path through extra vertices exactly when the moral graph
    joins them, and the extra vertices are never in R, so the separator
    listing forces them to a side and finds the same minimal separators
    among the original nodes, in time linear in the number of arrows.
    """
    adj: dict[object, set[object]] = {v: set() for v in A}
    for v in A:
        parents = [p for p in M.predecessors(v) if p in A]
        if len(parents) < 2:
            for p in parents:
                adj[v].add(p)
                adj[p].add(v)
            continue
        hub = ("family", v)
        adj[hub] = {v, *parents}
        for w in adj[hub]:
            adj[w].add(hub)
    return adj


#: Most minimal sufficient sets listed.  Their number can grow exponentially
#: with the diagram (k backdoor paths side by side, each with two measured
#: covariates that close it, have 2**k), and each listed set gets a model of
#: its own.  Common practice: a longer list is read by hand anyway, and the
#: listing and its models stay quick.
MINIMAL_SETS_BUDGET = 100


@dataclass(frozen=True)
class MinimalSets:
    """Minimal sufficient sets as listed, and whether the listing is complete.

    ``complete`` is False when the listing stopped at its budget
    (:data:`MINIMAL_SETS_BUDGET`): every set listed is minimal and
    sufficient, but more exist.
    """

    sets: tuple[tuple[str, ...], ...]
    complete: bool = True


def _restricted_separators(
    M: nx.DiGraph, X: str, Y: str, R: frozenset[str], budget: int | None = None
) -> tuple[list[frozenset[str]], bool]:
    """All minimal d-separators of X and Y drawn from R (Gx is passed as M).

    Minimal d-separators lie in An(X ∪ Y) and are exactly the minimal vertex
    separators of the moral graph of that ancestral set (van der Zander,
    Liśkiewicz & Textor 2019, Lemma 3.6 and §4).  These are listed by
    growing the exposure's side: each separator is the one closest to X
    among those whose X side holds a given connected set, and every other
    separator is reached from a closer one by moving one of its nodes to the
    X side (Berry, Bordat & Cogis 2000; Takata 2010).  Nodes outside R can
    never be in a separator, so a node outside R that borders the X side is
    forced onto it.
    """
    A = ancestors_of(M, {X, Y})
    adj = _moral_stars(M, A)
    if Y in adj[X]:
        return [], True
    allowed = R & A

    def component(start: object, blocked: set[object]) -> set[object]:
        seen = {start}
        stack = [start]
        while stack:
            u = stack.pop()
            for w in adj[u]:
                if w not in seen and w not in blocked:
                    seen.add(w)
                    stack.append(w)
        return seen

    def border(S: set[object]) -> set[object]:
        return {w for v in S for w in adj[v]} - S

    def close(S: set[object]) -> tuple[frozenset[str], set[object]] | None:
        S = set(S)
        while True:
            NS = border(S)
            if Y in NS:
                return None
            forced = NS - allowed
            if forced:
                S |= forced
                continue
            CY = component(Y, NS)
            Z = border(CY)
            # Z borders Y's side within NS, so it holds original nodes only
            return frozenset(str(z) for z in Z), component(X, set(Z))

    first = close({X})
    if first is None:
        return [], True
    seen = {first[0]}
    queue = [first]
    while queue:
        Z, side = queue.pop()
        for v in sorted(Z):
            nxt = close(side | {v})
            if nxt is not None and nxt[0] not in seen:
                if budget is not None and len(seen) >= budget:
                    return sorted(seen, key=sorted), False
                seen.add(nxt[0])
                queue.append(nxt)
    return sorted(seen, key=sorted), True


def list_minimal_sets(
    md: MergedDiagram, X: str, Y: str, budget: int | None = MINIMAL_SETS_BUDGET
) -> MinimalSets:
    """Minimal sufficient sets of measured covariates on a merged diagram,
    at most ``budget`` of them (None: all)."""
    M = md.graph
    Gx = without_exposure_arrows(M, X)
    descendants = nx.descendants(M, X)
    R = frozenset(
        n
        for n, measured in M.nodes(data="measured", default=True)
        if measured and n not in (X, Y) and n not in descendants
    )
    # FindMinSep (van der Zander & Liśkiewicz 2020; networkx's, made linear) settles
    # whether any measured set suffices before the listing starts.
    if minimal_d_separator(Gx, X, Y, restricted=R) is None:
        return MinimalSets(())
    measured_members = {
        c: tuple(m for m in md.members[c] if md_measured(md, m)) for c in md.members
    }
    separators, complete = _restricted_separators(Gx, X, Y, R, budget)
    out: set[tuple[str, ...]] = set()
    for Z in separators:
        choices = [measured_members[c] for c in sorted(Z)]
        for pick in itertools.product(*choices):
            if budget is not None and len(out) >= budget:
                return MinimalSets(tuple(sorted(out)), complete=False)
            out.add(tuple(sorted(pick)))
    return MinimalSets(tuple(sorted(out)), complete)


def md_measured(md: MergedDiagram, member: str) -> bool:
    """Whether an original node is measured (recorded on the construct graph)."""
    return md.member_measured.get(member, True)


def minimal_adjustment_sets(
    G: nx.DiGraph, exposure: str, outcome: str, *, budget: int | None = MINIMAL_SETS_BUDGET
) -> tuple[tuple[str, ...], ...]:
    """All minimal sufficient adjustment sets drawn from measured covariates.

    Each set is sorted and the list is sorted.  An empty result means no set
    of measured covariates suffices (the effect is not identified by
    adjustment in this diagram); ``((),)`` means no adjustment is needed.
    A minimal set over measure groups is listed once per choice of measured
    member.

    The sets are the minimal d-separators of X and Y, restricted to measured
    non-descendants of X, in the graph with the arrows out of X removed; they
    are listed with the minimal-separator enumeration of van der Zander,
    Liśkiewicz & Textor (2019), not by trying subsets.  Their number can
    grow exponentially with the diagram, so at most ``budget`` are listed
    (:data:`MINIMAL_SETS_BUDGET`; None for all);
    :func:`list_minimal_sets` also says whether the list is complete.

    References
    ----------
    van der Zander B, Liśkiewicz M, Textor J (2019). Separators and adjustment
    sets in causal graphs: complete criteria and an algorithmic framework.
    *Artificial Intelligence* 270:1–40.

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"),
    ...                 ("m", "x"), ("m", "y"), ("x", "y")])
    >>> minimal_adjustment_sets(G, "x", "y")
    (('a', 'm'), ('b', 'm'))
    """
    md = merge_diagram(G, exposure, outcome)
    return list_minimal_sets(md, exposure, outcome, budget).sets


def review_on(
    md: MergedDiagram, X: str, Y: str, proposed: Iterable[str], check: Backdoor | None = None
) -> ProposalReview:
    """Review of a proposed set on an already merged diagram (``check``: the
    caller's :class:`Backdoor` for it, when it has one)."""
    M = md.graph
    check = Backdoor(md, X, Y) if check is None else check
    members = tuple(sorted(set(proposed)))
    Z = given_constructs(md, members, X, Y)
    descendants = nx.descendants(M, X)
    opened = listing(M, X, Y, Z, 500, only_open=True)
    harmful, unnecessary, unsearched = _members_review(md, X, Y, members, Z, check)
    unmeasured = tuple(m for m in members if not md_measured(md, m))
    return ProposalReview(
        exposure_descendants=tuple(m for m in members if md.construct_of[m] in descendants),
        not_together=_not_together(check, members, unnecessary),
        proposed=members,
        sufficient=check.suffices_constructs(Z),
        open_paths=tuple(p.nodes for p in opened.paths),
        open_paths_total=opened.total,
        open_paths_total_exact=opened.total_exact,
        unnecessary=tuple(unnecessary),
        harmful=tuple(harmful),
        unmeasured_in_set=unmeasured,
        unsearched=tuple(unsearched),
        open_paths_stopped=opened.walk_stopped,
        not_together_checked=len(unnecessary) <= PAIR_CHECK_LIMIT,
    )


def _members_review(
    md: MergedDiagram,
    X: str,
    Y: str,
    members: tuple[str, ...],
    Z: frozenset[str],
    check: Backdoor,
) -> tuple[list[str], list[str], list[str]]:
    """(harmful, unnecessary, unsearched) members of a proposal.

    The skeleton and the ancestors of X, Y and Z are built once for every
    member's search; each member's own ancestors cost one step of the walk
    budget the searches share, and once it is spent no member searches.
    Which members a sufficient set can do without is found in one pass
    (:meth:`Backdoor.removable`).  An insufficient set can do without none
    (one whose removal makes it sufficient opens a path: it is harmful);
    such a member whose path search stopped is settled by one sufficiency
    check, for at most :data:`UNSEARCHED_CHECK_LIMIT` members.
    """
    M = md.graph
    descendants = nx.descendants(M, X)
    adj = skeleton(M)
    an_given = ancestors_of(M, Z)
    nodes_ok = ancestors_of(M, {X, Y} | Z)
    sufficient = check.suffices_constructs(Z)
    removable = check.removable(Z) if sufficient else frozenset()
    # An insufficient set that holds no descendant of X becomes sufficient
    # without a member only if that member opens a path (it is harmful), and
    # only if it is not pinned: settled so when its path search stopped.
    may_become = not sufficient and not Z & descendants
    pinned = check.pinned(Z) if may_become else set()
    proofs = WalkBudget(UNSEARCHED_CHECK_LIMIT)
    per_construct = Counter(md.construct_of[m] for m in members)
    harmful: list[str] = []
    unnecessary: list[str] = []
    unsearched: list[str] = []
    walk = WalkBudget()  # shared: the searches of all members together stay bounded
    for m in members:
        c = md.construct_of[m]
        sole = per_construct[c] == 1
        if c in descendants:
            harmful.append(m)
            continue
        if sole:
            search = _opening_search(M, X, Y, Z, c, adj, an_given, nodes_ok, walk)
            if search.path is not None:
                harmful.append(m)
                continue
            if not search.complete:
                proved = may_become and c not in pinned and proofs.take()
                if proved and check.suffices_constructs(Z - {c}):
                    harmful.append(m)
                    continue
                unsearched.append(m)
        if sufficient and (not sole or c in removable):
            unnecessary.append(m)
    return harmful, unnecessary, unsearched


def _opening_search(
    M: nx.DiGraph,
    X: str,
    Y: str,
    Z: frozenset[str],
    c: str,
    adj: dict[str, set[str]],
    an_given: set[str],
    nodes_ok: set[str],
    walk: WalkBudget,
) -> PathSearch:
    """A backdoor path open given Z that Z without ``c`` leaves closed: a
    collider on it whose only adjusted descendants lie at or below ``c``."""
    if not walk.take():
        return PathSearch(None, complete=False)
    rest = Z - {c}
    wanted = ancestors_of(M, {c}) - ancestors_of(M, rest)
    return open_path_with_collider(
        M, X, Y, Z, wanted, adj, walk=walk, an_given=an_given, nodes_ok=nodes_ok
    )


#: Most members whose path search stopped at its budget that one sufficiency
#: check each may still show harmful (those an insufficient set is sufficient
#: without); each check is a pass over the diagram.  Common practice.
UNSEARCHED_CHECK_LIMIT = 40

#: Above this many unnecessary members the pairwise check (quadratic in them,
#: each pair a d-separation search) is skipped and they are all reported as one
#: group, which is never wrong (a proposal that large is read by hand anyway).
PAIR_CHECK_LIMIT = 40


def _not_together(
    check: Backdoor, members: tuple[str, ...], unnecessary: list[str]
) -> tuple[tuple[str, ...], ...]:
    """Groups of unnecessary members that cannot all be dropped at once.

    Two members conflict when the set without both of them no longer meets
    the backdoor criterion; the groups are the connected components of that
    relation.  When the members outside every group cannot be dropped
    together either (a conflict among three or more), every unnecessary
    member forms one group, so "drop the rest" is never wrong.
    """
    if len(unnecessary) < 2:
        return ()
    if len(unnecessary) > PAIR_CHECK_LIMIT:
        return (tuple(unnecessary),)

    def suffices_without(dropped: Collection[str]) -> bool:
        return check.suffices([n for n in members if n not in dropped])

    if suffices_without(unnecessary):
        return ()
    conflicts = nx.Graph()
    for a, b in itertools.combinations(unnecessary, 2):
        if not suffices_without((a, b)):
            conflicts.add_edge(a, b)
    groups = [tuple(sorted(c)) for c in nx.connected_components(conflicts)]
    free = [m for m in unnecessary if m not in conflicts]
    if free and not suffices_without(free):
        return (tuple(unnecessary),)
    return tuple(sorted(groups))


def review_proposal(
    G: nx.DiGraph, exposure: str, outcome: str, proposed: Iterable[str]
) -> ProposalReview:
    """Review a proposed adjustment set against the diagram.

    Parameters
    ----------
    G : networkx.DiGraph
        The diagram.
    exposure, outcome : str
        Node ids of X and Y.
    proposed : iterable of str
        Covariates the analyst proposes to adjust for.

    Returns
    -------
    ProposalReview

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"), ("x", "y")])
    >>> r = review_proposal(G, "x", "y", ["m"])
    >>> r.sufficient, r.harmful, r.open_paths
    (False, ('m',), (('x', 'a', 'm', 'b', 'y'),))

    Two covariates on the one backdoor path, each closing it alone: either
    one may go, not both.

    >>> G = nx.DiGraph([("c", "a"), ("c", "b"), ("a", "x"), ("b", "y"), ("x", "y")])
    >>> r = review_proposal(G, "x", "y", ["a", "b"])
    >>> r.unnecessary, r.not_together
    (('a', 'b'), (('a', 'b'),))
    """
    md = merge_diagram(G, exposure, outcome)
    return review_on(md, exposure, outcome, proposed)
