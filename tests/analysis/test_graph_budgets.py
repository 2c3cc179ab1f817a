"""Every graph computation stops at its work budget, says so, and leaves
small diagrams alone.

Outside reference: ``networkx.is_d_separator`` (sufficiency and minimality
of each listed set) and ``networkx.all_simple_paths`` (paths on the small
diagrams).  The large diagrams are built so that the unbounded computation
would take minutes to hours: a ladder of k rungs under a blocking collider
has 2**k dead-end branches; k backdoor paths side by side, each closed by
either of two covariates, have 2**k minimal sets.
"""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest

from covariscope.analysis.adjustment import (
    MINIMAL_SETS_BUDGET,
    list_minimal_sets,
    minimal_adjustment_sets,
)
from covariscope.analysis.claims import CLAIM_SEARCH_BUDGET, implied_claims
from covariscope.analysis.constructs import merge_diagram
from covariscope.analysis.graph import analyse_diagram, classify_covariates, review_proposal
from covariscope.analysis.paths import (
    WALK_BUDGET,
    WalkBudget,
    listing,
    open_path_with_collider,
)


def _kinds(G: nx.DiGraph, x: str = "x", y: str = "y") -> nx.DiGraph:
    for v in G:
        G.nodes[v].setdefault("kind", {x: "exposure", y: "outcome"}.get(v, "covariate"))
        G.nodes[v].setdefault("measured", True)
    return G


def dead_end_ladder(rungs: int, with_m: bool = False) -> nx.DiGraph:
    """x ← two nodes per rung … ← the top rung → c ← d → y, c → x.

    Every way up the ladder ends at the collider c (its parents are the top
    rung and d), so nothing up there is an open path: 2**rungs branches that
    end in none.  The one open backdoor path is x ← c ← d → y.  With
    ``with_m``, an M-structure z1 → m ← z2 (z1 → x, z2 → y) whose open path
    the walk meets only after the ladder (z sorts last).
    """
    G = nx.DiGraph([("x", "y"), ("d", "c"), ("d", "y"), ("c", "x")])
    for a in "ab":
        G.add_edge(f"{a}0", "x")
        G.add_edge(f"{a}{rungs - 1}", "c")
        for i in range(rungs - 1):
            for b in "ab":
                G.add_edge(f"{b}{i + 1}", f"{a}{i}")
    if with_m:
        G.add_edges_from([("z1", "m"), ("z2", "m"), ("z1", "x"), ("z2", "y")])
    return _kinds(G)


def side_by_side(k: int) -> nx.DiGraph:
    """x ← a_i ← b_i → y for i < k: each path is closed by a_i or by b_i,
    so the minimal sets are the 2**k choices of one of each pair."""
    G = nx.DiGraph([("x", "y")])
    for i in range(k):
        G.add_edges_from([(f"b{i}", f"a{i}"), (f"a{i}", "x"), (f"b{i}", "y")])
    return _kinds(G)


def reference_sufficient(G: nx.DiGraph, z: set[str]) -> bool:
    """Backdoor criterion built directly on networkx.is_d_separator."""
    if z & nx.descendants(G, "x"):
        return False
    H = G.copy()
    H.remove_edges_from(list(G.out_edges("x")))
    return bool(nx.is_d_separator(H, {"x"}, {"y"}, z))


def reference_open_paths(G: nx.DiGraph, z: set[str]) -> list[tuple[str, ...]]:
    """Open backdoor paths by plain enumeration (networkx.all_simple_paths)."""
    anz = set(z).union(*(nx.ancestors(G, v) for v in z)) if z else set()
    out = []
    for p in nx.all_simple_paths(G.to_undirected(), "x", "y"):
        if not G.has_edge(p[1], "x"):
            continue
        col = {
            p[i]
            for i in range(1, len(p) - 1)
            if G.has_edge(p[i - 1], p[i]) and G.has_edge(p[i + 1], p[i])
        }
        if all((v in anz) if v in col else (v not in z) for v in p[1:-1]):
            out.append(tuple(p))
    return out


# -- the walk over open paths ----------------------------------------------


def test_an_open_path_listing_stops_at_its_walk_budget_and_says_so() -> None:
    G = dead_end_ladder(22)  # 4 million dead ends: hours without the budget
    review = review_proposal(G, "x", "y", [])
    assert review.open_paths_stopped
    # what it does say stays true: the count (exact here) and sufficiency
    assert review.open_paths_total == 1
    assert review.open_paths_total_exact
    assert review.sufficient == reference_sufficient(G, set()) is False
    assert len(review.open_paths) <= review.open_paths_total


def test_a_small_ladder_is_listed_whole_and_matches_enumeration() -> None:
    G = dead_end_ladder(4)
    review = review_proposal(G, "x", "y", [])
    assert not review.open_paths_stopped
    assert list(review.open_paths) == reference_open_paths(G, set()) == [("x", "c", "d", "y")]


def test_a_listing_stopped_by_its_walk_budget_keeps_only_real_paths() -> None:
    G = dead_end_ladder(6)
    md = merge_diagram(G, "x", "y")
    whole = listing(md.graph, "x", "y", frozenset(), 500, only_open=True, walk_budget=None)
    tight = listing(md.graph, "x", "y", frozenset(), 500, only_open=True, walk_budget=5)
    assert not whole.walk_stopped
    assert tight.walk_stopped
    assert tight.truncated
    assert {p.nodes for p in tight.paths} <= {p.nodes for p in whole.paths}
    assert tight.total == whole.total == 1


def test_the_collider_search_of_every_covariate_shares_one_walk_budget() -> None:
    G = dead_end_ladder(22, with_m=True)
    roles = classify_covariates(G, "x", "y")
    m = roles["m"]
    # the walk ran out in the ladder before it met z1: said, and the role
    # comes from the later rules
    assert m.search_stopped
    assert m.role == "confounder_proxy"
    # on a small ladder the search finds the M-structure's path
    small = classify_covariates(dead_end_ladder(4, with_m=True), "x", "y")
    assert not small["m"].search_stopped
    assert small["m"].role == "collider"


def test_a_shared_walk_budget_bounds_later_searches_too() -> None:
    G = dead_end_ladder(22)
    md = merge_diagram(G, "x", "y")
    shared = WalkBudget(WALK_BUDGET)
    first = open_path_with_collider(md.graph, "x", "y", frozenset(), {"c"}, walk=shared)
    assert not first.complete
    assert shared.ran_out
    second = open_path_with_collider(md.graph, "x", "y", frozenset(), {"c"}, walk=shared)
    assert second.path is None
    assert not second.complete


def test_path_statuses_keep_their_words() -> None:
    # the sentence is built when read; its words are those of the status
    G = _kinds(nx.DiGraph([("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"), ("x", "y")]))
    md = merge_diagram(G, "x", "y")
    blocked = listing(md.graph, "x", "y", frozenset(), 10).paths[0]
    assert blocked.explanation == (
        "Blocked by the collider m, which is not adjusted for and has no adjusted descendant."
    )
    opened = listing(md.graph, "x", "y", frozenset({"m"}), 10).paths[0]
    assert opened.explanation == (
        "Open: the collider m is adjusted for or has an adjusted descendant, which opens it, "
        "and nothing else on it is adjusted for."
    )
    both = listing(md.graph, "x", "y", frozenset({"a"}), 10).paths[0]
    assert both.explanation == (
        "Blocked by adjusting for a and by the collider m, which is not adjusted for and has "
        "no adjusted descendant."
    )
    C = _kinds(nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y")]))
    plain = listing(merge_diagram(C, "x", "y").graph, "x", "y", frozenset(), 10).paths[0]
    assert plain.explanation == "Open: it has no collider and nothing on it is adjusted for."


# -- minimal sets ------------------------------------------------------------


def test_minimal_sets_stop_at_their_budget_and_each_listed_set_is_minimal() -> None:
    G = side_by_side(12)  # 4,096 minimal sets
    found = list_minimal_sets(merge_diagram(G, "x", "y"), "x", "y")
    assert not found.complete
    assert len(found.sets) == MINIMAL_SETS_BUDGET
    for s in found.sets[:20]:
        assert reference_sufficient(G, set(s))
        for m in s:
            assert not reference_sufficient(G, set(s) - {m})
    analysis = analyse_diagram(G, "x", "y")
    assert not analysis.minimal_sets_complete
    assert analysis.identifiable


def test_minimal_sets_below_the_budget_are_all_listed() -> None:
    G = side_by_side(4)
    found = list_minimal_sets(merge_diagram(G, "x", "y"), "x", "y")
    assert found.complete
    # reference: one of each pair, every choice (checked with networkx)
    choices = [tuple(sorted(p)) for p in itertools.product(*[(f"a{i}", f"b{i}") for i in range(4)])]
    assert list(found.sets) == sorted(choices)
    assert all(reference_sufficient(G, set(s)) for s in found.sets)
    assert minimal_adjustment_sets(G, "x", "y", budget=None) == found.sets


def test_measure_groups_multiply_sets_within_the_budget() -> None:
    # one construct per path, each a group of two measures: 2**8 choices
    G = nx.DiGraph([("x", "y")])
    proxies = []
    for i in range(8):
        G.add_edges_from([(f"p{i}", "x"), (f"p{i}", "y"), (f"q{i}", "x")])
        proxies.append((f"p{i}", f"q{i}"))
    G.graph["proxies"] = proxies
    _kinds(G)
    found = list_minimal_sets(merge_diagram(G, "x", "y"), "x", "y")
    assert not found.complete
    assert len(found.sets) == MINIMAL_SETS_BUDGET
    assert all(len(s) == 8 for s in found.sets)


# -- independence claims -----------------------------------------------------


def _dense(n: int, parents: int, seed: int) -> tuple[nx.DiGraph, str, str]:
    rng = random.Random(seed)
    names = [f"v{i:03d}" for i in range(n)]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for j in range(1, n):
        for i in rng.sample(range(j), min(j, parents)):
            G.add_edge(names[i], names[j])
    x, y = names[n // 2], names[n - 3]
    G.add_edge(x, y)
    hidden = set(rng.sample([v for v in names if v not in (x, y)], n // 5))
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = v not in hidden
    return G, x, y


def test_claims_stop_at_their_search_budget_and_count_what_is_left() -> None:
    G, x, y = _dense(100, 3, seed=2)  # 80 nodes with data: 3,160 pairs
    testable = [v for v, m in G.nodes(data="measured") if m]
    got = implied_claims(G, x, y, testable, budget=300)
    whole = implied_claims(G, x, y, testable, budget=None)
    assert got.unsearched > 0
    assert whole.unsearched == 0
    searched = len(got.untestable) + got.omitted + len(got.claims)
    assert searched + got.unsearched == len(whole.untestable) + whole.omitted + len(whole.claims)
    # the exposure's and the outcome's pairs come first, and their claims agree
    mine = {(c.a, c.b): c for c in got.claims}
    for c in whole.claims:
        if {c.a, c.b} & {x, y} and (c.a, c.b) in mine:
            assert mine[(c.a, c.b)] == c
    assert any({c.a, c.b} & {x, y} for c in got.claims)
    assert CLAIM_SEARCH_BUDGET > 300


@pytest.mark.parametrize("seed", range(6))
def test_claims_below_the_budget_are_the_same_as_unbounded(seed: int) -> None:
    G, x, y = _dense(30, 2, seed)
    testable = [v for v, m in G.nodes(data="measured") if m]
    got = implied_claims(G, x, y, testable)
    assert got == implied_claims(G, x, y, testable, budget=None)
    assert got.unsearched == 0
    # each claim is a true d-separation (networkx)
    for c in got.claims:
        assert nx.is_d_separator(G, {c.a}, {c.b}, set(c.given))


# -- the path count ------------------------------------------------------------


def _hubs(spokes: int) -> nx.DiGraph:
    """x ← s_i → y for every spoke, and a tail t2 → t1 → t0 → x: exactly
    ``spokes`` backdoor paths.  The counter's arrow order starts from the
    tail's end, which takes all arrows into y first: every spoke is then on
    the frontier at once."""
    G = nx.DiGraph([("x", "y"), ("t2", "t1"), ("t1", "t0"), ("t0", "x")])
    for i in range(spokes):
        G.add_edges_from([(f"s{i}", "x"), (f"s{i}", "y")])
    return _kinds(G)


def test_a_count_across_two_hubs_stops_at_its_budget(monkeypatch: pytest.MonkeyPatch) -> None:
    from covariscope.analysis import paths
    from covariscope.analysis.graph import backdoor_paths

    # the counter sorts each new state's frontier entries: count them
    handled = [0]

    def counted(items, **kwargs):  # type: ignore[no-untyped-def]
        out = sorted(items, **kwargs)
        handled[0] += len(out)
        return out

    monkeypatch.setattr(paths, "sorted", counted, raising=False)
    # once spent, the count stops outright: carrying one state per arrow
    # would still cost 3,000 frontier entries on each of 6,000 arrows
    got = backdoor_paths(_hubs(3000), "x", "y", cap=10)
    assert handled[0] < 4 * paths.COUNT_BUDGET + 50_000
    monkeypatch.undo()
    assert got.truncated
    assert not got.total_exact
    assert 10 < got.total <= 3000
    small = _hubs(12)
    exact = backdoor_paths(small, "x", "y", cap=5)
    assert exact.total_exact
    # reference: plain enumeration with networkx.all_simple_paths
    assert exact.total == len(reference_open_paths(small, set())) == 12


def test_a_proposal_too_large_for_the_pair_check_says_so() -> None:
    from covariscope.analysis.adjustment import PAIR_CHECK_LIMIT

    def proposal(extra: int) -> nx.DiGraph:
        G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y")])
        G.add_edges_from((f"p{i}", "y") for i in range(extra))
        return _kinds(G)

    many = PAIR_CHECK_LIMIT + 1
    big = review_proposal(proposal(many), "x", "y", ["c", *(f"p{i}" for i in range(many))])
    assert len(big.unnecessary) == many
    assert not big.not_together_checked
    # every precision covariate may go, one at a time or all together: one
    # group is the conservative answer, and the flag says it was not checked
    assert big.not_together == (big.unnecessary,)
    small = review_proposal(proposal(3), "x", "y", ["c", "p0", "p1", "p2"])
    assert small.not_together_checked
    assert small.not_together == ()
    assert reference_sufficient(proposal(3), {"c"})


def test_a_member_whose_search_stopped_is_shown_harmful_when_the_set_suffices_without_it() -> None:
    # the walk runs out in the 22-rung ladder before it meets z1 → m ← z2; but
    # {d, m} is not sufficient and {d} is (networkx), so m opens a path
    G = dead_end_ladder(22, with_m=True)
    assert not reference_sufficient(G, {"d", "m"})
    assert reference_sufficient(G, {"d"})
    review = review_proposal(G, "x", "y", ["d", "m"])
    assert review.harmful == ("m",)
    assert review.unsearched == ("d",)  # its search stopped too; d is a cause of y
    assert not review.sufficient
    # with one more member the set without m is still not sufficient: m
    # stays unsearched, neither harmful nor unnecessary
    G.add_edges_from([("e", "x"), ("e", "y")])
    G.nodes["e"].update(kind="covariate", measured=True)
    assert not reference_sufficient(G, {"d"})
    review = review_proposal(G, "x", "y", ["d", "m"])
    assert review.unsearched == ("d", "m")
    assert review.harmful == ()
    assert review.unnecessary == ()


def test_a_path_longer_than_the_recursion_limit_is_walked() -> None:
    import sys

    # x ← c0 ← c1 … ← c(n-1) → y ← x: one backdoor path of n + 2 nodes
    n = sys.getrecursionlimit() + 500
    G = nx.DiGraph([("x", "y"), ("c0", "x"), (f"c{n - 1}", "y")])
    G.add_edges_from((f"c{i + 1}", f"c{i}") for i in range(n - 1))
    G = _kinds(G)
    got = backdoor_paths_of(G)
    # reference: networkx.all_simple_paths on the skeleton (the one path)
    ref = [tuple(p) for p in nx.all_simple_paths(G.to_undirected(), "x", "y") if p[1] != "y"]
    assert got == ref
    assert len(got[0]) == n + 2
    review = review_proposal(G, "x", "y", [])
    assert review.open_paths == tuple(ref)
    assert classify_covariates(G, "x", "y")["c0"].role == "confounder"


def backdoor_paths_of(G: nx.DiGraph) -> list[tuple[str, ...]]:
    md = merge_diagram(G, "x", "y")
    return [p.nodes for p in listing(md.graph, "x", "y", frozenset(), 10).paths]
