"""What the words say about a proposed set: why it falls short, and which
members may go one at a time but not together."""

from __future__ import annotations

import itertools

import networkx as nx

from covariscope.analysis.adjustment import review_proposal
from covariscope.analysis.proposal_wording import (
    insufficiency_reasons,
    sufficiency_sentence,
    unnecessary_words,
)


def _backdoor_ok(G: nx.DiGraph, x: str, y: str, Z: set[str]) -> bool:
    """Outside reference: Pearl's backdoor criterion with networkx's own
    d-separation (no descendant of x in Z; Z separates x and y once the
    arrows out of x are removed)."""
    if Z & nx.descendants(G, x):
        return False
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    return bool(nx.is_d_separator(H, {x}, {y}, Z))


def test_a_set_holding_a_mediator_names_it_and_never_says_no_open_path():
    # c confounds; m mediates; {c, m} closes every backdoor path yet is not sufficient
    G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y")])
    review = review_proposal(G, "x", "y", ["c", "m"])
    assert not review.sufficient
    assert review.open_paths_total == 0
    assert review.exposure_descendants == ("m",)
    words = sufficiency_sentence(review, {"m": "mediator"}, {"m": "Inflammation"})
    assert words.startswith("not sufficient: it holds Inflammation, a mediator")
    assert "0" not in words
    assert "open" not in words


def test_a_collider_and_a_missing_confounder_are_told_apart():
    # x <- a -> s <- b -> y: adjusting s opens the path; c confounds and is left out
    G = nx.DiGraph(
        [("a", "x"), ("a", "s"), ("b", "s"), ("b", "y"), ("c", "x"), ("c", "y"), ("x", "y")]
    )
    review = review_proposal(G, "x", "y", ["s"])
    reasons = insufficiency_reasons(review, {"s": "collider"}, {"s": "Screen"})
    assert reasons == ("it leaves 2 backdoor paths open (Screen opens a collider path)",)
    assert _backdoor_ok(G, "x", "y", {"s"}) is review.sufficient is False


def test_either_one_not_both_matches_the_backdoor_criterion():
    # two measures of one confounder on the one backdoor path x <- a <- c -> b -> y,
    # plus a precision variable s that may go in any case
    G = nx.DiGraph([("c", "a"), ("c", "b"), ("a", "x"), ("b", "y"), ("x", "y"), ("s", "y")])
    proposed = ["a", "b", "s"]
    review = review_proposal(G, "x", "y", proposed)
    assert review.sufficient
    assert set(review.unnecessary) == {"a", "b", "s"}
    assert review.not_together == (("a", "b"),)
    # each pair the engine calls "not together" fails the criterion when both go;
    # every other pair of unnecessary members may go together
    for u, v in itertools.combinations(review.unnecessary, 2):
        kept = set(proposed) - {u, v}
        together = any({u, v} <= set(g) for g in review.not_together)
        assert _backdoor_ok(G, "x", "y", kept) is not together
    words = unnecessary_words(review, {"a": "Area", "b": "Income", "s": "Smoking"})
    assert words == "Smoking; either Area or Income, not both"


def test_members_that_may_all_go_are_listed_plainly():
    G = nx.DiGraph([("c", "x"), ("c", "y"), ("s", "y"), ("t", "y"), ("x", "y")])
    review = review_proposal(G, "x", "y", ["c", "s", "t"])
    assert review.not_together == ()
    assert unnecessary_words(review, {"s": "Smoking", "t": "Diet"}) == "Smoking, Diet"


def test_a_conflict_among_three_makes_one_group():
    # one backdoor path x <- a <- k -> q -> y: any one of a, k, q closes it
    G = nx.DiGraph([("k", "a"), ("a", "x"), ("k", "q"), ("q", "y"), ("x", "y")])
    review = review_proposal(G, "x", "y", ["a", "k", "q"])
    assert review.sufficient
    # any one, even any two, may go (one left closes the chain), but not all
    # three: the engine must not call them free to drop together
    assert set(review.unnecessary) == {"a", "k", "q"}
    assert review.not_together == (("a", "k", "q"),)
    for u, v in itertools.combinations("akq", 2):
        assert _backdoor_ok(G, "x", "y", set("akq") - {u, v})
    assert _backdoor_ok(G, "x", "y", set()) is False
    words = unnecessary_words(review, {"a": "A", "k": "K", "q": "Q"})
    assert words == "A, K, Q, one at a time (dropping several together can reopen a path)"
