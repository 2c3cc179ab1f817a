"""Graph criteria against networkx on seeded random diagrams.

Outside reference: ``networkx.is_d_separator`` (and plain path enumeration
with ``networkx.all_simple_paths``).  Every brute-force search lives here in
the test, never in the engine.
"""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest

from covariscope.analysis.graph import (
    analyse_diagram,
    backdoor_paths,
    classify_covariates,
    is_sufficient,
    minimal_adjustment_sets,
    review_proposal,
)


def random_diagram(seed: int, max_nodes: int = 12) -> tuple[nx.DiGraph, str, str]:
    rng = random.Random(seed)
    n = rng.randint(4, max_nodes)
    names = [f"v{i}" for i in range(n)]
    rng.shuffle(names)  # node ids unrelated to the causal order
    p = rng.choice([0.25, 0.35, 0.5])
    G = nx.DiGraph()
    G.add_nodes_from(names)
    if rng.random() < 0.5:
        for i, j in itertools.combinations(range(n), 2):
            if rng.random() < p:
                G.add_edge(names[i], names[j])
    else:
        # few parents each: long chains, so paths can be blocked at many places
        for j in range(1, n):
            for i in rng.sample(range(j), min(j, rng.randint(1, 3))):
                G.add_edge(names[i], names[j])
    if rng.random() < 0.8:
        # exposure early and outcome late in the causal order: richer structure
        i = rng.randint(n // 3, (2 * n) // 3 - 1)
        x, y = names[i], names[rng.randint(i + 1, n - 1)]
    else:
        x, y = rng.sample(names, 2)
    if rng.random() < 0.8 and not G.has_edge(x, y) and not nx.has_path(G, y, x):
        G.add_edge(x, y)
    for v in names:
        G.nodes[v]["kind"] = "covariate"
        G.nodes[v]["measured"] = rng.random() > 0.25
    G.nodes[x]["kind"] = "exposure"
    G.nodes[y]["kind"] = "outcome"
    return G, x, y


def reference_sufficient(G: nx.DiGraph, x: str, y: str, z: set[str]) -> bool:
    """Backdoor criterion built directly on networkx.is_d_separator."""
    if z & nx.descendants(G, x):
        return False
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    return bool(nx.is_d_separator(H, {x}, {y}, z))


def reference_minimal_sets(G: nx.DiGraph, x: str, y: str) -> list[tuple[str, ...]]:
    """Every subset of measured covariates tried; the minimal sufficient ones kept."""
    cands = sorted(v for v, m in G.nodes(data="measured") if m and v not in (x, y))
    good = [
        frozenset(s)
        for k in range(len(cands) + 1)
        for s in itertools.combinations(cands, k)
        if reference_sufficient(G, x, y, set(s))
    ]
    minimal = [s for s in good if not any(t < s for t in good)]
    return sorted(tuple(sorted(s)) for s in minimal)


def reference_backdoor_paths(G: nx.DiGraph, x: str, y: str) -> list[tuple[str, ...]]:
    U = G.to_undirected()
    return [tuple(p) for p in nx.all_simple_paths(U, x, y) if G.has_edge(p[1], x)]


def colliders(G: nx.DiGraph, p: tuple[str, ...]) -> set[str]:
    return {
        p[i]
        for i in range(1, len(p) - 1)
        if G.has_edge(p[i - 1], p[i]) and G.has_edge(p[i + 1], p[i])
    }


def is_open(G: nx.DiGraph, p: tuple[str, ...], z: set[str]) -> bool:
    anz = set(z).union(*(nx.ancestors(G, v) for v in z)) if z else set()
    col = colliders(G, p)
    return all((v in anz) if v in col else (v not in z) for v in p[1:-1])


def reference_roles(G: nx.DiGraph, x: str, y: str) -> dict[str, str]:
    """DESIGN §2's nine rules read literally, paths by enumeration, d-connection by networkx."""
    paths = reference_backdoor_paths(G, x, y)
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    dx, dy = nx.descendants(G, x), nx.descendants(G, y)
    ay = nx.ancestors(G, y)
    roles = {}
    for c in G:
        if c in (x, y):
            continue
        conn_x = not nx.is_d_separator(G, {c}, {x}, set())
        sep_y = nx.is_d_separator(H, {c}, {y}, set())
        if c in dx and c in ay:
            r = "mediator"
        elif c in dy:
            r = "descendant_of_outcome"
        elif c in dx:
            r = "descendant_of_exposure"
        elif any(c in p[1:-1] and c not in colliders(G, p) and is_open(G, p, set()) for p in paths):
            r = "confounder"
        elif any(not is_open(G, p, set()) and is_open(G, p, {c}) for p in paths):
            r = "collider"
        elif conn_x and sep_y:
            r = "instrument"
        elif c in ay and not conn_x:
            r = "precision"
        elif conn_x and not sep_y:
            r = "confounder_proxy"
        else:
            r = "unrelated"
        roles[c] = r
    return roles


SEEDS = range(320)


def test_minimal_sets_match_networkx_reference() -> None:
    """≥300 seeded DAGs: minimal sets pass the networkx backdoor check,
    hold no descendant of X, no proper subset passes, and the list equals the
    brute-force enumeration; sufficiency of random proposals agrees."""
    not_identifiable = 0
    for seed in SEEDS:
        G, x, y = random_diagram(seed)
        found = minimal_adjustment_sets(G, x, y)
        desc = nx.descendants(G, x)
        for s in found:
            assert reference_sufficient(G, x, y, set(s)), (seed, s)
            assert not set(s) & desc
            assert all(G.nodes[v]["measured"] for v in s)
            for k in range(len(s)):
                for sub in itertools.combinations(s, k):
                    assert not reference_sufficient(G, x, y, set(sub)), (seed, s, sub)
        assert list(found) == reference_minimal_sets(G, x, y), seed
        not_identifiable += not found
        rng = random.Random(seed + 10_000)
        others = [v for v in G if v not in (x, y)]
        for _ in range(4):
            z = set(rng.sample(others, rng.randint(0, len(others))))
            assert is_sufficient(G, x, y, z) == reference_sufficient(G, x, y, z), (seed, z)
    # the sample covers both outcomes of identifiability
    assert 0 < not_identifiable < len(SEEDS)


@pytest.mark.parametrize("seed", range(0, 200, 2))
def test_roles_match_literal_rules(seed: int) -> None:
    G, x, y = random_diagram(seed, max_nodes=9)
    got = {k: v.role for k, v in classify_covariates(G, x, y).items()}
    assert got == reference_roles(G, x, y)


@pytest.mark.parametrize("seed", range(1, 200, 2))
def test_paths_and_review_match_enumeration(seed: int) -> None:
    G, x, y = random_diagram(seed, max_nodes=9)
    rng = random.Random(seed)
    others = [v for v in G if v not in (x, y)]
    z = set(rng.sample(others, rng.randint(0, min(4, len(others)))))
    ref = reference_backdoor_paths(G, x, y)
    listing = backdoor_paths(G, x, y, given=z)
    assert listing.total == len(ref)
    assert sorted(p.nodes for p in listing.paths) == sorted(ref)
    for p in listing.paths:
        assert p.open == is_open(G, p.nodes, z)
    review = review_proposal(G, x, y, z)
    assert sorted(review.open_paths) == sorted(p for p in ref if is_open(G, p, z))
    harmful = {
        m
        for m in z
        if m in nx.descendants(G, x)
        or any(is_open(G, p, z) and not is_open(G, p, z - {m}) for p in ref)
    }
    assert set(review.harmful) == harmful
    unnecessary = {m for m in z - harmful if reference_sufficient(G, x, y, z - {m})}
    assert set(review.unnecessary) == unnecessary
    assert review.sufficient == reference_sufficient(G, x, y, z)
    analysis = analyse_diagram(G, x, y, z)
    assert analysis.identifiable == bool(analysis.minimal_sets)


@pytest.mark.parametrize("seed", range(150))
def test_path_counts_match_enumeration(seed: int) -> None:
    """The counter behind capped listings, all paths and open paths only."""
    G, x, y = random_diagram(seed, max_nodes=9)
    ref = reference_backdoor_paths(G, x, y)
    others = [v for v in G if v not in (x, y)]
    rng = random.Random(seed)
    z = set(rng.sample(others, rng.randint(0, min(3, len(others)))))
    counted = backdoor_paths(G, x, y, cap=0)
    assert counted.total_exact
    assert counted.total == len(ref)
    open_ref = [p for p in ref if is_open(G, p, z)]
    assert listing_total_open(G, x, y, z) == len(open_ref)
    review = review_proposal(G, x, y, z)
    assert review.open_paths_total_exact
    assert review.open_paths_total == len(open_ref)


def listing_total_open(G: nx.DiGraph, x: str, y: str, z: set[str]) -> int:
    from covariscope.analysis.paths import listing

    return listing(G, x, y, frozenset(z), 0, only_open=True).total


def complete_dag(n: int) -> nx.DiGraph:
    order = [f"n{i}" for i in range(n)]
    G = nx.DiGraph(itertools.combinations(order, 2))
    for v in G:
        G.nodes[v]["kind"] = "covariate"
        G.nodes[v]["measured"] = True
    return G


def dense_diagram(n: int, arrows: int, seed: int) -> tuple[nx.DiGraph, str, str]:
    """A connected random diagram with the given number of arrows."""
    rng = random.Random(seed)
    names = [f"v{i:02d}" for i in range(n)]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for j in range(1, n):
        G.add_edge(names[rng.randrange(j)], names[j])
    while G.number_of_edges() < arrows - 1:
        i, j = sorted(rng.sample(range(n), 2))
        G.add_edge(names[i], names[j])
    x, y = names[n // 2], names[n - 3]
    G.add_edge(x, y)
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    return G, x, y


@pytest.mark.parametrize("budget", [1, 50, 400, 3000])
def test_count_past_its_budget_is_a_lower_bound(budget: int) -> None:
    G = complete_dag(9)
    x, y = "n4", "n8"
    # outside reference: networkx.all_simple_paths on the undirected skeleton
    ref = reference_backdoor_paths(G, x, y)
    z = {"n0", "n6"}
    got = backdoor_paths(G, x, y, given=z, cap=30, count_budget=budget)
    assert not got.total_exact
    assert got.truncated
    assert 30 < got.total <= len(ref)
    assert got.total_text() == f"at least {got.total:,}"
    # the listed paths and their status do not depend on the budget
    exact = backdoor_paths(G, x, y, given=z, cap=30, count_budget=None)
    assert exact.total_exact
    assert exact.total == len(ref)
    assert got.paths == exact.paths
    assert {p.nodes for p in got.paths} <= set(ref)
    for p in got.paths:
        assert p.open == is_open(G, p.nodes, z)


def test_budget_leaves_roles_and_review_alone() -> None:
    from covariscope.analysis.constructs import merge_diagram
    from covariscope.analysis.paths import listing
    from covariscope.analysis.roles import roles_on

    G = complete_dag(9)
    x, y = "n4", "n8"
    md = merge_diagram(G, x, y)
    tight = listing(md.graph, x, y, frozenset(), 40, count_budget=1)
    loose = listing(md.graph, x, y, frozenset(), 40, count_budget=None)
    assert not tight.total_exact
    assert loose.total_exact
    assert roles_on(md, x, y, tight) == roles_on(md, x, y, loose)
    z = {"n5"}  # a descendant of the exposure: open paths remain
    review = review_proposal(G, x, y, z)
    open_ref = [p for p in reference_backdoor_paths(G, x, y) if is_open(G, p, z)]
    assert review.open_paths_total == len(open_ref)
    assert set(review.open_paths) <= set(open_ref)
    assert review.sufficient == reference_sufficient(G, x, y, z)


def test_dense_diagram_count_stops_at_its_budget() -> None:
    G, x, y = dense_diagram(40, 76, seed=3)
    assert G.number_of_edges() == 76
    listing = backdoor_paths(G, x, y, cap=200)
    assert not listing.total_exact
    assert listing.total > 200
    U = G.to_undirected()
    for p in listing.paths:
        nodes = p.nodes
        assert nodes[0] == x
        assert nodes[-1] == y
        assert G.has_edge(nodes[1], x)
        assert len(set(nodes)) == len(nodes)
        assert all(U.has_edge(a, b) for a, b in itertools.pairwise(nodes))
        assert p.open == is_open(G, nodes, set())
    z = set(list(G.predecessors(x))[:2])
    review = review_proposal(G, x, y, z)
    assert review.sufficient == reference_sufficient(G, x, y, z)
    for p in review.open_paths[:50]:
        assert is_open(G, p, z)
    assert (not review.open_paths) == review.sufficient
