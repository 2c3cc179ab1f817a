"""One Backdoor object asked of many sets gives networkx's answers, and
searches once per distinct set of constructs.

Outside reference: ``networkx.is_d_separator`` on the graph without the
exposure's arrows out (the backdoor criterion, Pearl 2009, Definition 3.3.1).
"""

from __future__ import annotations

import itertools
import random

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
