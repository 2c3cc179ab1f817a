"""Graph criteria on published structures and textbook shapes."""

from __future__ import annotations

import itertools

import networkx as nx
import pytest

from covariscope.analysis.graph import (
    ROLES,
    analyse_diagram,
    backdoor_paths,
    classify_covariates,
    is_sufficient,
    merge_diagram,
    minimal_adjustment_sets,
    review_proposal,
)
from covariscope.errors import CycleError, DiagramError


def diagram(
    arrows: list[tuple[str, str]],
    unmeasured: tuple[str, ...] = (),
    proxies: list[tuple[str, str]] | None = None,
    isolated: tuple[str, ...] = (),
) -> nx.DiGraph:
    G = nx.DiGraph(arrows)
    G.add_nodes_from(isolated)
    for v in G:
        G.nodes[v]["kind"] = {"x": "exposure", "y": "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = v not in unmeasured
    if proxies is not None:
        G.graph["proxies"] = proxies
    return G


def roles(G: nx.DiGraph) -> dict[str, str]:
    return {k: v.role for k, v in classify_covariates(G, "x", "y").items()}


# M-structure: Greenland S, Pearl J, Robins JM (1999). Causal diagrams for
# epidemiologic research. Epidemiology 10:37–48; Greenland S (2003).
# Quantifying biases in causal models: classical confounding vs
# collider-stratification bias. Epidemiology 14:300–306.
M_STRUCTURE = [("a", "x"), ("a", "m"), ("b", "m"), ("b", "y"), ("x", "y")]

# Butterfly (bow-tie): Ding P, Miratrix LW (2015). To adjust or not to adjust?
# Sensitivity analysis of M-bias and butterfly-bias. J Causal Inference 3:41–57.
BUTTERFLY = [*M_STRUCTURE, ("m", "x"), ("m", "y")]


def test_m_structure_greenland() -> None:
    G = diagram(M_STRUCTURE)
    assert is_sufficient(G, "x", "y", [])
    assert not is_sufficient(G, "x", "y", ["m"])
    assert minimal_adjustment_sets(G, "x", "y") == ((),)
    facts = classify_covariates(G, "x", "y")
    assert facts["m"].role == "collider"
    assert facts["a"].role == "instrument"
    assert facts["b"].role == "precision"
    listing = backdoor_paths(G, "x", "y")
    (path,) = listing.paths
    assert path.nodes == ("x", "a", "m", "b", "y")
    assert not path.open
    assert path.colliders == ("m",)
    assert path.blocked_by == ("m",)
    assert facts["m"].on_paths == ((0, True),)
    assert facts["a"].on_paths == ((0, False),)
    review = review_proposal(G, "x", "y", ["m"])
    assert not review.sufficient
    assert review.harmful == ("m",)
    assert review.open_paths == (("x", "a", "m", "b", "y"),)
    # adjusting for a as well closes the path again: m is then merely unnecessary
    review = review_proposal(G, "x", "y", ["a", "m"])
    assert review.sufficient
    assert review.harmful == ()
    assert review.unnecessary == ("m",)
    assert backdoor_paths(G, "x", "y", ["a", "m"]).paths[0].blocked_by == ("a",)


def test_descendant_of_m_collider_is_collider() -> None:
    G = diagram([*M_STRUCTURE, ("m", "m2")])
    assert roles(G)["m2"] == "collider"
    assert not is_sufficient(G, "x", "y", ["m2"])


def test_butterfly_ding_miratrix() -> None:
    G = diagram(BUTTERFLY)
    assert minimal_adjustment_sets(G, "x", "y") == (("a", "m"), ("b", "m"))
    assert not is_sufficient(G, "x", "y", ["m"])
    assert not is_sufficient(G, "x", "y", [])
    assert roles(G) == {"a": "confounder", "b": "confounder", "m": "confounder"}
    hidden = diagram(BUTTERFLY, unmeasured=("a", "b"))
    assert minimal_adjustment_sets(hidden, "x", "y") == ()
    analysis = analyse_diagram(hidden, "x", "y", ["m"])
    assert not analysis.identifiable
    assert not analysis.review.sufficient
    assert ("x", "a", "m", "b", "y") in analysis.review.open_paths


# Textbook shapes (Hernán MA, Robins JM, Causal Inference: What If, ch. 6–8).
TEXTBOOK = {
    "mediator": ([("x", "c"), ("c", "y"), ("x", "y")], ()),
    "descendant_of_outcome": ([("x", "y"), ("y", "c")], ()),
    "descendant_of_exposure": ([("x", "y"), ("x", "c")], ()),
    "confounder": ([("c", "x"), ("c", "y"), ("x", "y")], ()),
    "collider": ([("x", "y"), ("a", "x"), ("a", "c"), ("b", "c"), ("b", "y")], ()),
    "instrument": ([("c", "x"), ("x", "y")], ()),
    "precision": ([("c", "y"), ("x", "y")], ()),
    "confounder_proxy": ([("u", "x"), ("u", "y"), ("u", "c"), ("x", "y")], ("u",)),
    "unrelated": ([("x", "y"), ("d", "c")], ()),
}


def test_textbook_table_covers_every_role() -> None:
    assert tuple(TEXTBOOK) == ROLES


@pytest.mark.parametrize("role", ROLES)
def test_textbook_shape(role: str) -> None:
    arrows, unmeasured = TEXTBOOK[role]
    assert roles(diagram(arrows, unmeasured))["c"] == role


def test_one_diagram_with_all_nine_roles() -> None:
    G = diagram(
        [
            ("x", "y"),
            ("x", "med"),
            ("med", "y"),
            ("y", "dy"),
            ("x", "dx"),
            ("conf", "x"),
            ("conf", "y"),
            ("a", "x"),
            ("a", "coll"),
            ("b", "coll"),
            ("b", "y"),
            ("u", "x"),
            ("u", "y"),
            ("u", "prox"),
        ],
        unmeasured=("u",),
        isolated=("lone",),
    )
    got = roles(G)
    assert got == {
        "a": "instrument",
        "b": "precision",
        "coll": "collider",
        "conf": "confounder",
        "dx": "descendant_of_exposure",
        "dy": "descendant_of_outcome",
        "lone": "unrelated",
        "med": "mediator",
        "prox": "confounder_proxy",
        "u": "confounder",
    }
    assert set(got.values()) == set(ROLES)
    assert minimal_adjustment_sets(G, "x", "y") == ()


def test_common_cause_that_reaches_both_only_through_one_node() -> None:
    # t, a and b are causes of both x and y, but every path from them to x
    # and to y runs through d: no backdoor path has them as a non-collider.
    G = diagram(
        [("t", "a"), ("t", "b"), ("a", "d"), ("b", "d"), ("d", "x"), ("d", "y"), ("x", "y")]
    )
    facts = classify_covariates(G, "x", "y")
    assert facts["d"].role == "confounder"
    for c in "tab":
        assert facts[c].role == "confounder_proxy"
        assert facts[c].common_cause
    assert minimal_adjustment_sets(G, "x", "y") == (("d",),)


def test_facts_behind_roles() -> None:
    G = diagram([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y"), ("y", "z")])
    facts = classify_covariates(G, "x", "y")
    assert facts["c"].common_cause
    assert facts["c"].ancestor_of_exposure
    assert facts["m"].descendant_of_exposure
    assert facts["m"].ancestor_of_outcome
    assert facts["z"].descendant_of_outcome
    assert facts["z"].descendant_of_exposure
    assert facts["z"].role == "descendant_of_outcome"
    assert not facts["m"].common_cause
    assert all(f.explanation.endswith(".") for f in facts.values())


def test_measure_group_two_proxy_linked_confounders() -> None:
    G = diagram([("c1", "x"), ("c2", "y"), ("x", "y")], proxies=[("c1", "c2")])
    assert minimal_adjustment_sets(G, "x", "y") == (("c1",), ("c2",))
    facts = classify_covariates(G, "x", "y")
    assert facts["c1"].role == facts["c2"].role == "confounder"
    assert facts["c1"].group == ("c1", "c2")
    assert backdoor_paths(G, "x", "y").paths[0].nodes == ("x", "c1|c2", "y")
    review = review_proposal(G, "x", "y", ["c1", "c2"])
    assert review.sufficient
    assert review.unnecessary == ("c1", "c2")
    assert is_sufficient(G, "x", "y", ["c2"])
    # an unmeasured member is not offered
    G.nodes["c2"]["measured"] = False
    assert minimal_adjustment_sets(G, "x", "y") == (("c1",),)
    assert review_proposal(G, "x", "y", ["c2"]).unmeasured_in_set == ("c2",)


def test_proxy_of_exposure_is_reported_not_merged() -> None:
    G = diagram(
        [("c", "x"), ("c", "y"), ("x", "y"), ("x", "pay")],
        proxies=[("pay", "x"), ("w", "y")],
        isolated=("w",),
    )
    analysis = analyse_diagram(G, "x", "y")
    assert analysis.measures_exposure == {"pay"}
    assert analysis.measures_outcome == {"w"}
    assert analysis.groups == ()
    assert analysis.roles["pay"].role == "descendant_of_exposure"


def test_merge_names_the_cycle() -> None:
    G = diagram([("a", "c"), ("c", "b"), ("x", "y")])
    G.graph["proxies"] = [("a", "b")]
    with pytest.raises(CycleError, match="a\\|b → c → a\\|b") as err:
        merge_diagram(G, "x", "y")
    assert err.value.cycle == ["a|b", "c", "a|b"]


def test_bad_input_gets_plain_messages() -> None:
    G = diagram([("c", "x"), ("c", "y"), ("x", "y")])
    with pytest.raises(DiagramError, match='exposure "q" is not a node'):
        minimal_adjustment_sets(G, "q", "y")
    with pytest.raises(DiagramError, match="both the exposure and the outcome"):
        classify_covariates(G, "x", "x")
    with pytest.raises(DiagramError, match='"zz" is not a node'):
        is_sufficient(G, "x", "y", ["zz"])
    with pytest.raises(DiagramError, match='"x" is the exposure'):
        review_proposal(G, "x", "y", ["x"])
    G.add_edge("y", "c")
    with pytest.raises(CycleError, match="→") as err:
        analyse_diagram(G, "x", "y")
    assert err.value.cycle[0] == err.value.cycle[-1]


def test_no_confounding_and_no_identification() -> None:
    assert minimal_adjustment_sets(diagram([("x", "y")]), "x", "y") == ((),)
    # the outcome causes the exposure: no set of covariates can help
    assert minimal_adjustment_sets(diagram([("y", "x")]), "x", "y") == ()


def test_descendant_of_exposure_in_proposal_is_harmful() -> None:
    G = diagram([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y")])
    review = review_proposal(G, "x", "y", ["c", "m"])
    assert not review.sufficient
    assert review.harmful == ("m",)
    assert review.unnecessary == ()


def test_capped_listing_on_dense_graph_reports_true_total() -> None:
    order = [f"n{i}" for i in range(9)]
    G = nx.DiGraph(itertools.combinations(order, 2))
    x, y = "n4", "n8"
    # outside reference: plain enumeration with networkx.all_simple_paths
    U = G.to_undirected()
    expected = sum(1 for p in nx.all_simple_paths(U, x, y) if G.has_edge(p[1], x))
    listing = backdoor_paths(G, x, y, cap=50)
    assert listing.truncated
    assert len(listing.paths) == 50
    assert listing.total == expected
    assert listing.total_exact
    assert expected > 1000
    full = backdoor_paths(G, x, y, cap=expected)
    assert not full.truncated
    assert full.total == expected
    assert len({p.nodes for p in full.paths}) == expected


def test_check_json_keys() -> None:
    G = diagram(BUTTERFLY)
    data = analyse_diagram(G, "x", "y", ["m"]).to_json()
    assert set(data) == {
        "exposure",
        "outcome",
        "roles",
        "roles_unsettled",
        "minimal_sets",
        "identifiable",
        "proposed",
        "proposed_sufficient",
        "open_paths",
        "unnecessary",
        "unnecessary_not_together",
        "harmful",
    }
    assert data["minimal_sets"] == [["a", "m"], ["b", "m"]]
    assert data["proposed_sufficient"] is False


def test_open_path_count_in_words() -> None:
    from dataclasses import replace

    review = review_proposal(diagram(BUTTERFLY), "x", "y", ["m"])
    assert review.open_paths_total == 1
    assert review.open_paths_text() == "1"
    bound = replace(review, open_paths_total=10_001, open_paths_total_exact=False)
    assert bound.open_paths_text() == "at least 10,001"


def test_a_budgeted_path_count_is_the_same_in_every_run():
    """The lower bound given when the count budget runs out must not depend
    on string hashing (a rationale printed twice must read the same)."""
    import os
    import subprocess
    import sys

    script = (
        "import itertools, networkx as nx\n"
        "from covariscope.analysis.graph import backdoor_paths\n"
        "G = nx.DiGraph(itertools.combinations([f'v{i}' for i in range(10)], 2))\n"
        "L = backdoor_paths(G, 'v3', 'v8')\n"
        "print(L.total, L.total_exact)\n"
    )
    outputs = set()
    for seed in ("1", "2", "3"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run(
            [sys.executable, "-c", script], capture_output=True, text=True, env=env, check=True
        )
        outputs.add(run.stdout.strip())
    assert len(outputs) == 1, outputs
    assert outputs.pop().endswith("False")  # the budget did run out


def _ladder(rungs: int) -> nx.DiGraph:
    """x ← l0 … ← l(k−1) → y through two nodes per layer, every arrow between
    neighbouring layers: 2**k open backdoor paths, none through a collider;
    p is a cause of y alone."""
    G = nx.DiGraph([("x", "y"), ("p", "y")])
    for a in ("a", "b"):
        G.add_edge(f"{a}0", "x")
        G.add_edge(f"{a}{rungs - 1}", "y")
        for i in range(rungs - 1):
            for b in ("a", "b"):
                G.add_edge(f"{b}{i + 1}", f"{a}{i}")
    return G


def test_searches_over_very_many_paths_stop_at_their_budget_and_say_so() -> None:
    from covariscope.analysis.paths import SEARCH_BUDGET

    big = _ladder(12)  # 4,096 open paths, more than the budget
    assert SEARCH_BUDGET < 2**12
    review = review_proposal(big, "x", "y", ["p"])
    assert review.unsearched == ("p",)
    assert review.harmful == ()
    assert classify_covariates(big, "x", "y")["p"].role == "precision"
    small = _ladder(5)  # 32 paths: the searches finish
    assert review_proposal(small, "x", "y", ["p"]).unsearched == ()
