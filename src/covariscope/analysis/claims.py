"""The independences a diagram claims between the variables that have data.

A causal diagram claims more than an adjustment set: every pair of measured
variables with no arrow between them is claimed independent given some set
of others (the local Markov property; Pearl 2009, §1.2.3).  Those claims are
the data's only direct check on the drawing.  This module lists them; the
tests live in :mod:`covariscope.analysis.claim_tests`.

For each pair of testable nodes (measured and bound to data) that are not
adjacent and not joined by a proxy link, one claim ``a ⫫ b | S`` is made,
where ``S`` is a minimal d-separating set drawn from the testable nodes
(FINDMINSEP of van der Zander & Liśkiewicz 2020, restricted to those nodes,
in linear time: :func:`~covariscope.analysis.separation.minimal_d_separator`).  A pair that no
such set separates is listed as untestable, naming an unmeasured variable a
separating set would need.

Proxy links follow DESIGN §2: proxy-linked nodes are two measures of one
thing, merged into one construct that carries the union of their arrows.
Two members of one construct make no claim; a construct in a separating set
is conditioned on through every member that has data.

References
----------
Pearl, J. (2009). *Causality*, 2nd ed. Cambridge University Press.
van der Zander, B. & Liśkiewicz, M. (2020). Finding minimal d-separators in
linear time and applications. *Proceedings of UAI 2019*, PMLR 115, 637–647.
Shipley, B. (2000). A new inferential test for path models based on directed
acyclic graphs. *Structural Equation Modeling* 7(2), 206–218 (from memory:
testing a diagram through its implied independences).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Hashable, Iterable, Mapping
from dataclasses import dataclass
from functools import partial

import networkx as nx

from covariscope.analysis.constructs import merge_diagram, merge_every_link
from covariscope.analysis.separation import minimal_d_separator
from covariscope.vocabulary import DEFAULT_CLAIM_LIMIT, Correction
from covariscope.vocabulary import Untestable as UntestableReason

__all__ = [
    "CLAIM_SEARCH_BUDGET",
    "CORRECTIONS",
    "DEFAULT_CLAIM_LIMIT",
    "UNTESTABLE_REASONS",
    "Claim",
    "ClaimSet",
    "SeparatorMemo",
    "Untestable",
    "implied_claims",
]

#: Multiplicity corrections, by their code in project files and JSON: Holm's
#: step-down family-wise method (the default) and Benjamini–Hochberg's
#: false-discovery rate.
CORRECTIONS: tuple[str, ...] = tuple(c.value for c in Correction)

#: Most pairs whose separating set is searched for, in one listing.  Each
#: search is linear in the diagram, and the pairs grow as the square of the
#: nodes with data, so the whole listing grows as their cube (8 s for 121
#: nodes with data on a dense 150-node diagram, unbounded).  Pairs that
#: involve the exposure or the outcome are searched first.  Common practice,
#: chosen to stay near two seconds; 2,000 pairs cover 63 nodes with data.
CLAIM_SEARCH_BUDGET = 2_000

#: Why a pair that the diagram calls separable cannot be tested.
UNTESTABLE_REASONS: tuple[str, ...] = tuple(u.value for u in UntestableReason)


@dataclass(frozen=True)
class Claim:
    """The diagram says ``a`` and ``b`` are independent given ``given``.

    ``a < b``; ``given`` is sorted and holds every node with data of each
    construct in the separating set.  ``arrows`` are the arrows between the
    two that the diagram could take without a cycle (``(a, b)`` for
    a → b), the suggestions should the data disagree.
    """

    a: str
    b: str
    given: tuple[str, ...]
    arrows: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class Untestable:
    """A pair with no arrow between them whose claim cannot be tested.

    ``reason`` is one of :data:`UNTESTABLE_REASONS`: ``unmeasured`` (every
    separating set holds a variable without data; ``needs`` names those of
    one such set), ``measures_endpoint`` (one of them measures the exposure
    or outcome and the merge of its proxy link would close a cycle), or
    ``no_fit`` (no test model could be fitted; ``detail`` says why).
    """

    a: str
    b: str
    reason: str
    needs: tuple[str, ...] = ()
    detail: str = ""


@dataclass(frozen=True)
class ClaimSet:
    """Every claim of a diagram about its testable nodes.

    ``claims`` holds at most ``limit`` claims (those nearest the exposure and
    outcome and with the smallest sets first); ``omitted`` counts the rest.
    Both lists are sorted by ``(a, b)``.  ``unsearched`` counts the pairs
    with no arrow between them that were not looked at because the search
    stopped at its budget (:data:`CLAIM_SEARCH_BUDGET`): they make claims
    too, neither listed nor counted in ``omitted``.
    """

    claims: tuple[Claim, ...]
    untestable: tuple[Untestable, ...]
    omitted: int
    limit: int
    unsearched: int = 0


def _claim_graph(
    G: nx.DiGraph, exposure: str, outcome: str
) -> tuple[nx.DiGraph, Mapping[str, str], frozenset[str]]:
    """Construct graph, node → construct, and nodes left unmerged that measure X or Y."""
    merged = merge_every_link(G)
    if merged is not None:
        return merged[0], merged[1], frozenset()
    md = merge_diagram(G, exposure, outcome)
    return md.graph, md.construct_of, md.measures_exposure | md.measures_outcome


#: ``memo(key, find)``: ``find()``'s separating set (None: there is none), or
#: the one kept from an earlier call with the same key
SeparatorMemo = Callable[[Hashable, Callable[[], frozenset[str] | None]], frozenset[str] | None]


def _separator(M: nx.DiGraph, ca: str, cb: str, allowed: set[str]) -> frozenset[str] | None:
    found = minimal_d_separator(M, ca, cb, restricted=allowed)
    return None if found is None else frozenset(found)


def _ancestral_key(
    closed: Mapping[str, tuple[frozenset[str], frozenset[tuple[str, str]]]],
    ca: str,
    cb: str,
    allowed: set[str],
) -> Hashable:
    """What a minimal separator of ``ca`` and ``cb`` depends on: the subgraph
    induced by their ancestors (themselves included) and the allowed nodes in it
    (van der Zander & Liśkiewicz's search looks no further).  ``closed`` holds
    each construct's ancestral set and the arrows into it (`_closed`): a
    union of two ancestral sets is induced by the union of their arrows."""
    (nodes_a, edges_a), (nodes_b, edges_b) = closed[ca], closed[cb]
    A = nodes_a | nodes_b
    return (ca, cb, A, edges_a | edges_b, frozenset(allowed & A))


def _closed(
    M: nx.DiGraph, ancestors: Mapping[str, set[str]]
) -> dict[str, tuple[frozenset[str], frozenset[tuple[str, str]]]]:
    """Each construct's ancestral set (itself included) and every arrow into
    it (an ancestral set holds each of its members' parents)."""
    out = {}
    for c, above in ancestors.items():
        A = frozenset(above | {c})
        out[c] = (A, frozenset((u, v) for v in A for u in M.pred[v]))
    return out


def _priority(claim: Claim, ends: frozenset[str]) -> tuple[int, int, str, str]:
    return (0 if {claim.a, claim.b} & ends else 1, len(claim.given), claim.a, claim.b)


def implied_claims(
    G: nx.DiGraph,
    exposure: str,
    outcome: str,
    testable: Iterable[str],
    *,
    limit: int = DEFAULT_CLAIM_LIMIT,
    memo: SeparatorMemo | None = None,
    budget: int | None = CLAIM_SEARCH_BUDGET,
) -> ClaimSet:
    """List the conditional independences the diagram claims among ``testable``.

    Parameters
    ----------
    G : networkx.DiGraph
        The diagram (``G.graph["proxies"]`` its proxy links).
    exposure, outcome : str
        Node ids of the exposure and the outcome.
    testable : iterable of str
        Nodes with data on the analytic sample (the exposure and outcome
        among them when bound).
    limit : int
        Most claims kept; the rest are counted in ``omitted``.
    memo : callable, optional
        ``memo(key, find)`` returns ``find()``, or the separating set kept
        from an earlier call with the same key (the caller's cache): a key
        names the pair's ancestral subgraph, so an edit of the diagram
        searches again only for the pairs whose ancestors it changed.
    budget : int or None
        Most pairs searched (:data:`CLAIM_SEARCH_BUDGET`; None: every pair),
        those with the exposure or the outcome first; the rest are counted
        in ``unsearched``.  A pair counts whether or not ``memo`` knew it, so
        the claims do not depend on what was searched before.

    Returns
    -------
    ClaimSet

    Raises
    ------
    covariscope.errors.DiagramError
        As :func:`~covariscope.analysis.constructs.merge_diagram`.

    Examples
    --------
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y")])
    >>> s = implied_claims(G, "x", "y", ["c", "x", "m", "y"])
    >>> [(c.a, c.b, c.given) for c in s.claims]
    [('c', 'm', ('x',)), ('x', 'y', ('c', 'm'))]
    >>> s.claims[0].arrows  # m → c would close the cycle c → x → m → c
    (('c', 'm'),)
    """
    merge_diagram(G, exposure, outcome)  # refuses unknown ends and cycles in plain words
    M, construct_of, unmerged = _claim_graph(G, exposure, outcome)
    nodes = sorted(set(testable))
    with_data: dict[str, list[str]] = {}
    for node in nodes:
        with_data.setdefault(construct_of[node], []).append(node)
    claims: list[Claim] = []
    untestable: list[Untestable] = []
    # only the constructs with data are ever one of a pair (all of them: one
    # search per node of a 20,000-node diagram would cost its square)
    ancestors = {c: nx.ancestors(M, c) for c in with_data} if memo is not None else {}
    closed = _closed(M, ancestors)
    ends = frozenset((exposure, outcome))
    searched = unsearched = 0
    for a, b in _pairs(nodes, ends):
        ca, cb = construct_of[a], construct_of[b]
        if ca == cb or M.has_edge(ca, cb) or M.has_edge(cb, ca):
            continue
        if {a, b} & unmerged:
            untestable.append(Untestable(a, b, "measures_endpoint"))
            continue
        if budget is not None and searched >= budget:
            unsearched += 1
            continue
        searched += 1
        allowed = set(with_data) - {ca, cb}
        find = partial(_separator, M, ca, cb, allowed)
        found = find() if memo is None else memo(_ancestral_key(closed, ca, cb, allowed), find)
        if found is None:
            needs = _needs(M, ca, cb, with_data, construct_of)
            untestable.append(Untestable(a, b, "unmeasured", needs))
            continue
        given = tuple(sorted(m for c in found for m in with_data[c]))
        # an arrow u → v is possible unless v already reaches u (a cycle)
        arrows = tuple(
            (u, v)
            for u, v, cu, cv in ((a, b, ca, cb), (b, a, cb, ca))
            if not (cv in ancestors[cu] if ancestors else nx.has_path(M, cv, cu))
        )
        claims.append(Claim(a, b, given, arrows))
    kept = sorted(claims, key=lambda c: _priority(c, ends))[: max(limit, 0)]
    return ClaimSet(
        claims=tuple(sorted(kept, key=lambda c: (c.a, c.b))),
        untestable=tuple(sorted(untestable, key=lambda u: (u.a, u.b))),
        omitted=len(claims) - len(kept),
        limit=limit,
        unsearched=unsearched,
    )


def _pairs(nodes: list[str], ends: frozenset[str]) -> list[tuple[str, str]]:
    """Every pair ``a < b`` of ``nodes``: those with the exposure or outcome
    first (their claims are read first), then the rest, each part sorted."""
    pairs = list(itertools.combinations(nodes, 2))
    return sorted(pairs, key=lambda p: (not ({p[0], p[1]} & ends), p))


def _needs(
    M: nx.DiGraph,
    ca: str,
    cb: str,
    with_data: Mapping[str, list[str]],
    construct_of: Mapping[str, str],
) -> tuple[str, ...]:
    """Variables without data in one minimal separating set (any set is allowed)."""
    found = minimal_d_separator(M, ca, cb)
    if found is None:  # cannot happen for non-adjacent nodes of a DAG
        return ()
    lacking = set(found) - set(with_data)
    return tuple(sorted(n for n, c in construct_of.items() if c in lacking))
