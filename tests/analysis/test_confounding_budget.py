"""The search for confounders (collider-free backdoor paths) has a work
budget, says when it stopped, and never names a node that is not one.

Outside reference: plain enumeration of backdoor paths with
``networkx.all_simple_paths`` on seeded random diagrams.
"""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest

from covariscope.analysis import roles
from covariscope.analysis.graph import classify_covariates
from covariscope.analysis.roles import CONFOUNDING_BUDGET, confounding_nodes


def _kinds(G: nx.DiGraph, x: str, y: str) -> nx.DiGraph:
    for v in G:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    return G


def random_dag(seed: int) -> tuple[nx.DiGraph, str, str]:
    """A seeded DAG of 5-11 nodes, ids unrelated to the causal order."""
    rng = random.Random(seed)
    n = rng.randint(5, 11)
    names = [f"v{i}" for i in range(n)]
    rng.shuffle(names)
    p = rng.choice([0.25, 0.4, 0.55])
    G = nx.DiGraph()
    G.add_nodes_from(names)
    G.add_edges_from(
        (names[i], names[j]) for i, j in itertools.combinations(range(n), 2) if rng.random() < p
    )
    i = rng.randint(n // 3, (2 * n) // 3 - 1)
    x, y = names[i], names[rng.randint(i + 1, n - 1)]
    return _kinds(G, x, y), x, y


def dense_dag(n: int, seed: int = 3) -> tuple[nx.DiGraph, str, str]:
    """Three causes each among the earlier nodes, every fifth a cause of x
    and every seventh of y (benchmarks/bench_diagram_size.py's ``dense``)."""
    rng = random.Random(seed)
    ids = [f"n{i}" for i in range(n)]
    G = nx.DiGraph([("x", "y")])
    for j in range(1, n):
        G.add_edges_from((ids[i], ids[j]) for i in rng.sample(range(j), min(j, 3)))
    G.add_edges_from((i, "x") for i in ids[::5])
    G.add_edges_from((i, "y") for i in ids[::7])
    return _kinds(G, "x", "y"), "x", "y"


def reference_confounding(G: nx.DiGraph, x: str, y: str) -> set[str]:
    """Non-colliders on backdoor paths open given nothing whose top is not y
    (a path y → … → x makes its nodes descendants of y, an earlier rule),
    by enumeration with networkx.all_simple_paths."""
    out: set[str] = set()
    for p in nx.all_simple_paths(G.to_undirected(), x, y):
        into_x, into_y = G.has_edge(p[1], x), G.has_edge(p[-2], y)
        collider = any(
            G.has_edge(p[i - 1], p[i]) and G.has_edge(p[i + 1], p[i]) for i in range(1, len(p) - 1)
        )
        if into_x and into_y and not collider:
            out.update(p[1:-1])
    return out


@pytest.mark.parametrize("seed", range(200))
def test_unbounded_search_matches_path_enumeration(seed: int) -> None:
    G, x, y = random_dag(seed)
    got = confounding_nodes(G, x, y, budget=None)
    assert got.nodes == reference_confounding(G, x, y)
    assert not got.unsettled
    assert confounding_nodes(G, x, y) == confounding_nodes(G, x, y, budget=None)


@pytest.mark.parametrize("budget", [0, 3, 10, 40])
def test_a_stopped_search_names_only_confounders_and_leaves_none_out(budget: int) -> None:
    stopped = 0
    for seed in range(80):
        G, x, y = random_dag(seed)
        truth = reference_confounding(G, x, y)
        got = confounding_nodes(G, x, y, budget=budget)
        assert got.nodes <= truth
        assert truth <= got.nodes | got.unsettled
        assert not got.nodes & got.unsettled
        stopped += bool(got.unsettled)
    assert stopped > 0


def test_the_search_stops_at_its_budget_on_a_dense_diagram() -> None:
    G, x, y = dense_dag(320)
    whole = confounding_nodes(G, x, y, budget=None)
    assert whole.work > 100_000  # so that the bound below bites
    part = confounding_nodes(G, x, y, budget=20_000)
    widest = 2 * max(d for _, d in G.out_degree) + 1
    assert 20_000 < part.work <= 20_000 + widest
    assert part.unsettled
    assert part.nodes < whole.nodes <= part.nodes | part.unsettled
    # the default budget settles a diagram of this size whole
    assert whole.work < CONFOUNDING_BUDGET


def test_classify_marks_unsettled_covariates_as_confounders(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    G, x, y = dense_dag(80)
    settled = classify_covariates(G, x, y)
    assert not any(f.confounding_stopped for f in settled.values())
    monkeypatch.setattr(roles, "CONFOUNDING_BUDGET", 200)
    tight = classify_covariates(G, x, y)
    flagged = {c for c, f in tight.items() if f.confounding_stopped}
    assert flagged
    for c, f in tight.items():
        if c in flagged or settled[c].role == "confounder":
            assert f.role == "confounder"
    # nothing it calls a confounder is anything else when settled, but for
    # the covariates it names as unsettled
    wrong = {c for c, f in tight.items() if f.role != settled[c].role}
    assert wrong <= flagged
