"""The paths a collider in the proposed set opens, against plain enumeration.

Outside reference: ``networkx.all_simple_paths`` on the skeleton, each
path's status read by the definition (Pearl 2009, §3.3.1).
"""

from __future__ import annotations

import itertools
import random
from collections.abc import Callable, Sequence

import networkx as nx
import pytest

from covariscope.analysis.constructs import merge_diagram
from covariscope.study.facts import opened_paths


def _random(seed: int) -> tuple[nx.DiGraph, str, str]:
    rng = random.Random(seed)
    n = rng.randint(5, 9)
    names = [f"v{i}" for i in range(n)]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for i, j in itertools.combinations(range(n), 2):
        if rng.random() < 0.4:
            G.add_edge(names[i], names[j])
    x, y = names[n // 2], names[-1]
    G.add_edge(x, y)
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    return G, x, y


@pytest.mark.parametrize("seed", range(60))
def test_opened_paths_match_enumeration(
    seed: int, path_open: Callable[[nx.DiGraph, Sequence[str], set[str]], bool]
) -> None:
    G, x, y = _random(seed)
    rng = random.Random(seed)
    others = [v for v in G if v not in (x, y) and v not in nx.descendants(G, x)]
    if not others:
        return
    # a node with two parents first: adjusting for it may open a path
    merging = [v for v in others if G.in_degree(v) >= 2] or others
    z = {rng.choice(merging), *rng.sample(others, rng.randint(0, min(2, len(others))))}
    paths = [tuple(p) for p in nx.all_simple_paths(G.to_undirected(), x, y) if G.has_edge(p[1], x)]
    for node in sorted(z):
        want = sorted(p for p in paths if path_open(G, p, z) and not path_open(G, p, z - {node}))
        got = opened_paths(merge_diagram(G, x, y), x, y, sorted(z), sorted(z))
        assert list(got[node]) == want, (seed, node)


@pytest.mark.parametrize("seed", range(40))
def test_stands_for_matches_networkx_ancestors(seed: int) -> None:
    from covariscope.analysis.graph import analyse_diagram
    from covariscope.study.facts import stands_for

    G, x, y = _random(seed)
    da = analyse_diagram(G, x, y)
    confounders = {c for c, f in da.roles.items() if f.role == "confounder"}
    got = stands_for(G, da, list(G))
    for node in G:
        # outside reference: networkx.ancestors
        assert got[node] == tuple(sorted(confounders & nx.ancestors(G, node))), (seed, node)


def test_a_measure_group_stays_adjusted_through_its_other_member() -> None:
    # x ← a → m1|m2 ← b → y: the group is a collider; DESIGN §2: a set that
    # holds any member adjusts the construct
    G = nx.DiGraph([("a", "x"), ("a", "m1"), ("b", "m2"), ("b", "y"), ("x", "y")])
    for v in G:
        G.nodes[v]["kind"] = {"x": "exposure", "y": "outcome"}.get(v, "covariate")
    G.graph["proxies"] = [("m1", "m2")]
    md = merge_diagram(G, "x", "y")
    both = opened_paths(md, "x", "y", ["m1", "m2"], ["m1", "m2", "a"])
    assert both == {"m1": (), "m2": (), "a": ()}
    one = opened_paths(md, "x", "y", ["m1"], ["m1"])
    assert one == {"m1": (("x", "a", "m1|m2", "b", "y"),)}


def _reference_sufficient(G: nx.DiGraph, x: str, y: str, z: set[str]) -> bool:
    """The backdoor criterion on networkx.is_d_separator."""
    if z & nx.descendants(G, x):
        return False
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    return bool(nx.is_d_separator(H, {x}, {y}, z))


@pytest.mark.parametrize("seed", range(40))
def test_needed_together_matches_its_definition_on_networkx(seed: int) -> None:
    from covariscope.analysis.adjustment import Backdoor
    from covariscope.study.facts import SetInUse, needed_together

    G, x, y = _random(seed)
    rng = random.Random(seed)
    others = sorted(v for v in G if v not in (x, y) and v not in nx.descendants(G, x))
    if len(others) < 2:
        return
    in_use = SetInUse(
        Backdoor(merge_diagram(G, x, y), x, y), rng.sample(others, rng.randint(0, len(others)))
    )
    for group in itertools.combinations(others, 2):
        rest = set(in_use.members) - set(group)
        if any(_reference_sufficient(G, x, y, rest | {m}) for m in group):
            want: tuple[str, ...] = ()
        elif not _reference_sufficient(G, x, y, rest | set(group)):
            want = ()
        else:
            want = tuple(
                m for m in group if not _reference_sufficient(G, x, y, rest | set(group) - {m})
            )
        assert needed_together(in_use, group) == want, (seed, group)
        assert in_use.without(group) == frozenset(rest)


def test_group_reasons_name_the_proxy_link_the_highest_r2_and_the_dimension() -> None:
    from covariscope.study.facts import GroupReasons

    reasons = GroupReasons(
        [("a", "b"), ("p", "q")],
        {("a", "c"): 0.95, ("b", "c"): 0.5, ("a", "b"): 0.92, ("p", "z"): 0.99},
        [("b", "c", "w")],
        0.9,
        {"a": "Area", "b": "Income", "c": "Class"},
    )
    assert reasons.why(("a", "b", "c"), member="c") == (
        "a proxy link joins them, its R² with Area is 0.95 against the guide 0.9 and they "
        "share a dimension with a high condition index"
    )
    assert reasons.why(("a", "b", "c")) == (
        "a proxy link joins them, the Area–Class R² is 0.95 against the guide 0.9 and they "
        "share a dimension with a high condition index"
    )
    assert (
        reasons.why(("a", "b"))
        == "a proxy link joins them and their R² is 0.92 against the guide 0.9"
    )
    assert reasons.why(("a", "p")) == ""
