"""Minimal d-separators in linear time, and graph criteria that grow linearly.

Outside reference: ``networkx.find_minimal_d_separator`` (the same
algorithm of van der Zander & Liśkiewicz 2020, whose visited states sit in a
queue that is searched on every step) and ``networkx.is_d_separator``.
Growth is checked by counting operations, never by timing.
"""

from __future__ import annotations

import itertools

import networkx as nx
import pytest

from covariscope.analysis import roles
from covariscope.analysis.graph import classify_covariates
from covariscope.analysis.separation import d_connected_closure, minimal_d_separator

from .test_graph_random import random_diagram


@pytest.mark.parametrize("seed", range(60))
def test_minimal_separator_matches_networkx(seed: int) -> None:
    G, _, _ = random_diagram(seed)
    nodes = sorted(G)
    for a, b in itertools.combinations(nodes, 2):
        if G.has_edge(a, b) or G.has_edge(b, a):
            continue
        restricted = set(nodes[seed % 3 :: 2]) - {a, b}
        for allowed in (None, restricted):
            ours = minimal_d_separator(G, a, b, restricted=allowed)
            theirs = nx.find_minimal_d_separator(G, a, b, restricted=allowed)
            assert ours == (None if theirs is None else frozenset(theirs)), (a, b, allowed)
            if ours is not None:
                assert nx.is_d_separator(G, {a}, {b}, set(ours))


class _CountingGraph(nx.DiGraph):  # type: ignore[misc]
    """A DiGraph that counts how often a search looks at a node's neighbours."""

    looks = 0

    @property  # type: ignore[misc]
    def pred(self):  # type: ignore[no-untyped-def]
        type(self).looks += 1
        return super().pred

    @property  # type: ignore[misc]
    def succ(self):  # type: ignore[no-untyped-def]
        type(self).looks += 1
        return super().succ


def _looks(n: int) -> int:
    """Neighbour look-ups of one reachability search on a ladder of n rungs."""
    G = _CountingGraph()
    for i in range(n):
        G.add_edges_from([(f"a{i}", f"a{i + 1}"), (f"b{i}", f"b{i + 1}"), (f"a{i}", f"b{i + 1}")])
    within = set(G)
    _CountingGraph.looks = 0
    d_connected_closure(G, [f"b{n}"], within, {f"a{i}" for i in range(0, n, 3)})
    return _CountingGraph.looks


def test_reachability_search_grows_linearly() -> None:
    # each (node, direction) state is expanded once: twice the ladder, about
    # twice the look-ups (a search that re-expanded states would grow faster)
    small, large = _looks(300), _looks(600)
    assert small > 300
    assert large <= 2.1 * small


def test_roles_skip_the_path_search_for_nodes_that_cannot_collide(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    calls: list[str] = []
    search = roles.open_path_with_collider

    def counted(*args, **kwargs):  # type: ignore[no-untyped-def]
        calls.append(next(iter(args[3])))
        return search(*args, **kwargs)

    monkeypatch.setattr(roles, "open_path_with_collider", counted)
    G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y"), ("a", "m"), ("b", "m"), ("a", "x")])
    G.add_edge("b", "y")
    G.add_edges_from((f"p{i}", "y") for i in range(300))  # 300 causes of the outcome
    G.add_edges_from((f"q{i}", f"q{i + 1}") for i in range(300))  # a chain beside it
    got = classify_covariates(G, "x", "y")
    assert got["m"].role == "collider"
    assert got["p7"].role == "precision"
    assert got["q7"].role == "unrelated"
    # only the one node below two parents, linked to both ends, is searched
    assert calls == ["m"]
