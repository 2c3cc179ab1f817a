"""One Backdoor object asked of many sets gives networkx's answers, and
searches once per distinct set of constructs.

Outside reference: ``networkx.is_d_separator`` on the graph without the
exposure's arrows out (the backdoor criterion, Pearl 2009, Definition 3.3.1).
"""

from __future__ import annotations

import itertools
import random
from collections.abc import Callable, Sequence

import networkx as nx
import pytest

from covariscope.analysis.adjustment import Backdoor
from covariscope.analysis.constructs import merge_diagram


def _random(seed: int) -> tuple[nx.DiGraph, str, str]:
    rng = random.Random(seed)
    n = rng.randint(5, 10)
    names = [f"v{i}" for i in range(n)]
    rng.shuffle(names)
    G = nx.DiGraph()
    G.add_nodes_from(names)
    p = rng.choice([0.3, 0.5])
    G.add_edges_from(
        (names[i], names[j]) for i, j in itertools.combinations(range(n), 2) if rng.random() < p
    )
    x, y = names[n // 3], names[-1]
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    return G, x, y


def reference_sufficient(G: nx.DiGraph, x: str, y: str, z: set[str]) -> bool:
    if z & nx.descendants(G, x):
        return False
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    return bool(nx.is_d_separator(H, {x}, {y}, z))


@pytest.mark.parametrize("seed", range(60))
def test_one_object_answers_every_set_as_networkx(seed: int) -> None:
    G, x, y = _random(seed)
    check = Backdoor(merge_diagram(G, x, y), x, y)
    others = sorted(set(G) - {x, y})
    sets = [
        set(s) for k in range(min(3, len(others)) + 1) for s in itertools.combinations(others, k)
    ]
    for z in sets + sets:  # asked twice: the kept answers are the same
        assert check.suffices(z) == reference_sufficient(G, x, y, z), (seed, z)
    assert check.searches == len(sets)


def test_members_of_one_measure_group_cost_one_search() -> None:
    G = nx.DiGraph([("c1", "x"), ("c2", "y"), ("x", "y")])
    for v in G:
        G.nodes[v]["kind"] = {"x": "exposure", "y": "outcome"}.get(v, "covariate")
    G.graph["proxies"] = [("c1", "c2")]
    check = Backdoor(merge_diagram(G, "x", "y"), "x", "y")
    assert check.suffices(["c1"])
    assert check.suffices(["c2"])
    assert check.suffices(["c1", "c2"])
    assert check.searches == 1
    assert not check.suffices([])
    assert check.searches == 2


@pytest.mark.parametrize("seed", range(80))
def test_removable_members_match_one_networkx_check_each(seed: int) -> None:
    G, x, y = _random(seed)
    check = Backdoor(merge_diagram(G, x, y), x, y)
    rng = random.Random(seed)
    below = nx.descendants(G, x)
    others = sorted(set(G) - {x, y} - below)
    for _ in range(12):
        z = set(rng.sample(others, rng.randint(0, len(others))))
        if not reference_sufficient(G, x, y, z):
            with pytest.raises(ValueError, match="sufficient"):
                check.removable(frozenset(z))
            continue
        want = {c for c in z if reference_sufficient(G, x, y, z - {c})}
        assert check.removable(frozenset(z)) == want, (seed, z)


@pytest.mark.parametrize("seed", range(60))
def test_review_of_a_large_proposal_matches_networkx(
    seed: int, path_open: Callable[[nx.DiGraph, Sequence[str], set[str]], bool]
) -> None:
    from covariscope.analysis.adjustment import review_proposal

    G, x, y = _random(seed)
    rng = random.Random(seed + 1000)
    others = sorted(set(G) - {x, y})
    z = set(rng.sample(others, rng.randint(len(others) // 2, len(others))))
    paths = [p for p in nx.all_simple_paths(G.to_undirected(), x, y) if G.has_edge(p[1], x)]
    harmful = {
        m
        for m in z
        if m in nx.descendants(G, x)
        or any(path_open(G, p, z) and not path_open(G, p, z - {m}) for p in paths)
    }
    review = review_proposal(G, x, y, z)
    assert set(review.harmful) == harmful, seed
    want = {m for m in z - harmful if reference_sufficient(G, x, y, z - {m})}
    assert set(review.unnecessary) == want, seed
