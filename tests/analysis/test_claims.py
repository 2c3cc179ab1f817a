"""Independence claims of a diagram against networkx on seeded random diagrams.

Outside references: ``networkx.is_d_separator`` for every claim and for its
minimality; ``networkx.quotient_graph`` for the merge of proxy-linked nodes;
and, for the pairs called untestable, the ancestral-set criterion (van der
Zander, Liśkiewicz & Textor 2019, *Artificial Intelligence* 270, 1–40: a
separator inside R exists iff R ∩ An(a, b) separates), checked with
``is_d_separator``.
"""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest

from covariscope.analysis.claims import implied_claims


def random_case(seed: int) -> tuple[nx.DiGraph, str, str, list[str]]:
    rng = random.Random(seed)
    n = rng.randint(4, 11)
    names = [f"v{i}" for i in range(n)]
    rng.shuffle(names)
    p = rng.choice([0.2, 0.3, 0.45])
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for i, j in itertools.combinations(range(n), 2):
        if rng.random() < p:
            G.add_edge(names[i], names[j])
    x, y = names[rng.randint(0, n // 2)], names[rng.randint(n // 2 + 1, n - 1)]
    for v in names:
        G.nodes[v]["kind"] = "covariate"
        G.nodes[v]["measured"] = True
    G.nodes[x]["kind"] = "exposure"
    G.nodes[y]["kind"] = "outcome"
    proxies = []
    if rng.random() < 0.3:
        # Two covariates with no path between them: their merge closes no cycle.
        covs = [v for v in names if v not in (x, y)]
        a, b = rng.sample(covs, 2)
        if not nx.has_path(G, a, b) and not nx.has_path(G, b, a):
            proxies.append((a, b))
    G.graph["proxies"] = proxies
    testable = [v for v in names if rng.random() > 0.3 or v in (x, y)]
    return G, x, y, testable


def quotient(G: nx.DiGraph) -> tuple[nx.DiGraph, dict[str, str]]:
    links = nx.Graph(G.graph["proxies"])
    links.add_nodes_from(G)
    blocks = [frozenset(c) for c in nx.connected_components(links)]
    Q = nx.quotient_graph(G, blocks, create_using=nx.DiGraph)
    Q.remove_edges_from(nx.selfloop_edges(Q))
    of = {m: b for b in blocks for m in b}
    return Q, of


@pytest.mark.parametrize("seed", range(300))
def test_claims_are_minimal_d_separations_covering_every_pair(seed: int) -> None:
    G, x, y, testable = random_case(seed)
    Q, of = quotient(G)
    result = implied_claims(G, x, y, testable, limit=10_000)
    assert result.omitted == 0
    data_blocks = {of[v] for v in testable}
    seen: list[tuple[str, str]] = []
    for c in result.claims:
        assert c.a < c.b
        given = {of[g] for g in c.given}
        assert given <= data_blocks - {of[c.a], of[c.b]}
        assert set(c.given) <= set(testable)
        assert nx.is_d_separator(Q, {of[c.a]}, {of[c.b]}, given)
        for g in given:
            assert not nx.is_d_separator(Q, {of[c.a]}, {of[c.b]}, given - {g}), "not minimal"
        seen.append((c.a, c.b))
    for u in result.untestable:
        assert u.reason == "unmeasured"
        allowed = data_blocks - {of[u.a], of[u.b]}
        ancestral = allowed & nx.ancestors(Q, of[u.a]) | allowed & nx.ancestors(Q, of[u.b])
        assert not nx.is_d_separator(Q, {of[u.a]}, {of[u.b]}, ancestral)
        assert u.needs
        assert not set(u.needs) & set(testable)
        seen.append((u.a, u.b))
    expected = [
        (a, b)
        for a, b in itertools.combinations(sorted(testable), 2)
        if of[a] != of[b] and not Q.has_edge(of[a], of[b]) and not Q.has_edge(of[b], of[a])
    ]
    assert sorted(seen) == expected
    assert len(seen) == len(set(seen))


def test_limit_keeps_claims_on_the_exposure_and_outcome_first() -> None:
    G = nx.DiGraph([("x", "y")])
    G.add_nodes_from(["a", "b", "c", "d"])
    full = implied_claims(G, "x", "y", ["a", "b", "c", "d", "x", "y"])
    assert len(full.claims) == 14  # 15 pairs less the arrow x → y
    capped = implied_claims(G, "x", "y", ["a", "b", "c", "d", "x", "y"], limit=8)
    assert len(capped.claims) == 8
    assert capped.omitted == 6
    assert all({"x", "y"} & {c.a, c.b} for c in capped.claims)
    assert [(c.a, c.b) for c in capped.claims] == sorted((c.a, c.b) for c in capped.claims)


def test_proxy_linked_pairs_make_no_claim_and_measures_of_the_exposure_stand_in_for_it() -> None:
    G = nx.DiGraph([("c", "x"), ("x", "y")])
    G.add_node("m")
    G.nodes["x"]["kind"], G.nodes["y"]["kind"] = "exposure", "outcome"
    G.graph["proxies"] = [("m", "x")]
    result = implied_claims(G, "x", "y", ["c", "m", "x", "y"])
    pairs = {(c.a, c.b): c.given for c in result.claims}
    # m measures x: adjacent to y through x, to c likewise; m ~ x makes no claim.
    assert ("m", "x") not in pairs
    assert ("m", "y") not in pairs
    assert pairs == {("c", "y"): ("m", "x")}


def test_unmeasured_common_cause_is_named() -> None:
    G = nx.DiGraph([("u", "a"), ("u", "b"), ("a", "x"), ("x", "y")])
    result = implied_claims(G, "x", "y", ["a", "b", "x", "y"])
    by_pair = {(u.a, u.b): u for u in result.untestable}
    assert by_pair[("a", "b")].needs == ("u",)
    assert by_pair[("a", "b")].reason == "unmeasured"


@pytest.mark.parametrize("seed", range(0, 300, 7))
def test_suggested_arrows_keep_the_diagram_acyclic(seed: int) -> None:
    G, x, y, testable = random_case(seed)
    for c in implied_claims(G, x, y, testable).claims:
        assert c.arrows
        for u, v in c.arrows:
            H = G.copy()
            H.add_edge(u, v)
            Q, _ = quotient(H)
            assert nx.is_directed_acyclic_graph(Q)
        for u, v in {(c.a, c.b), (c.b, c.a)} - set(c.arrows):
            H = G.copy()
            H.add_edge(u, v)
            assert not nx.is_directed_acyclic_graph(quotient(H)[0])


@pytest.mark.parametrize("seed", range(60))
def test_a_separator_memo_shared_across_edits_changes_no_claim(seed: int) -> None:
    """One memo kept while arrows are added: every answer equals a search
    without it, and an edit searches again only where ancestors changed."""
    G, x, y, testable = random_case(seed)
    kept: dict[object, object] = {}
    searches: list[object] = []

    def memo(key, find):
        if key not in kept:
            searches.append(key)
            kept[key] = find()
        return kept[key]

    rng = random.Random(seed)
    order = list(nx.topological_sort(G))
    for _ in range(3):
        plain = implied_claims(G, x, y, testable)
        assert implied_claims(G, x, y, testable, memo=memo) == plain
        i, j = sorted(rng.sample(range(len(order)), 2))
        G.add_edge(order[i], order[j])  # forward in a topological order: stays acyclic
    first = len(list(itertools.combinations(sorted(testable), 2)))
    assert len(searches) <= 3 * first
    assert len(kept) == len(searches)


def test_an_arrow_into_one_node_searches_again_only_below_it() -> None:
    G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y"), ("a", "y"), ("b", "y")])
    for v in G:
        G.nodes[v]["kind"] = {"x": "exposure", "y": "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    G.graph["proxies"] = []
    kept: dict[object, object] = {}
    searches: list[object] = []

    def memo(key, find):
        if key not in kept:
            searches.append(key)
            kept[key] = find()
        return kept[key]

    implied_claims(G, "x", "y", list(G), memo=memo)
    before = len(searches)
    G.add_edge("a", "b")  # only b gains an ancestor; a–b is now adjacent
    after = implied_claims(G, "x", "y", list(G), memo=memo)
    assert after == implied_claims(G, "x", "y", list(G))
    # pairs with b: (b, c), (b, x); pairs without b ((a, c), (a, x)) hit the memo
    assert len(searches) - before == 2
