"""The recommended set among the minimal sufficient sets."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from covariscope.analysis.recommend import pair_r2, rank_members, recommend_set


def test_members_of_the_proposed_set_come_first():
    se = {("a", "c"): 0.1, ("b", "c"): 0.3}.get
    r = recommend_set([("a", "c"), ("b", "c")], proposed=["b", "c", "m"], se_of=se)
    assert r.members == ("b", "c")
    assert "proposed" in r.reason


def test_no_two_members_of_one_collinear_group():
    r = recommend_set([("a", "b"), ("a", "d")], groups=[("a", "b")])
    assert r.members == ("a", "d")


def test_saved_choice_within_a_group_is_honoured():
    r = recommend_set([("a", "c"), ("b", "c")], groups=[("a", "b")], keep_choices={"a|b": "b"})
    assert r.members == ("b", "c")


def test_smallest_standard_error_breaks_ties():
    se = {("a",): 0.20, ("b",): 0.11, ("c",): float("nan")}.get
    r = recommend_set([("a",), ("b",), ("c",)], se_of=se)
    assert r.members == ("b",)
    assert "0.11" in r.reason


def test_not_identified():
    r = recommend_set([])
    assert r.members is None
    assert "No set" in r.reason


def test_pair_r2_matches_regressions():
    # Outside reference: R² of statsmodels OLS (with a constant) between the terms.
    rng = np.random.default_rng(3)
    a = rng.normal(size=400)
    b = 0.8 * a + rng.normal(scale=0.5, size=400)
    c1 = (rng.random(400) < 0.3).astype(float)
    c2 = (rng.random(400) < 0.3).astype(float) * (1 - c1)
    a = a + 0.7 * c1
    X = np.column_stack([a, b, c1, c2])
    corr = np.corrcoef(X, rowvar=False)
    out = pair_r2(corr, {"a": [0], "b": [1], "c": [2, 3]})
    assert out[("a", "b")] == pytest.approx(np.corrcoef(a, b)[0, 1] ** 2)
    r2_a_on_c = sm.OLS(a, sm.add_constant(np.column_stack([c1, c2]))).fit().rsquared
    r2_c1_on_a = sm.OLS(c1, sm.add_constant(a)).fit().rsquared
    r2_c2_on_a = sm.OLS(c2, sm.add_constant(a)).fit().rsquared
    assert out[("a", "c")] == pytest.approx(max(r2_a_on_c, r2_c1_on_a, r2_c2_on_a))


def test_saved_choice_stands_in_for_the_proposed_members_of_its_group():
    se = {("a", "c"): 0.1, ("b", "c"): 0.3}.get
    sets = [("a", "c"), ("b", "c")]
    assert recommend_set(sets, proposed=["a", "c"], groups=[("a", "b")], se_of=se).members == (
        "a",
        "c",
    )
    r = recommend_set(
        sets, proposed=["a", "c"], groups=[("a", "b")], keep_choices={"a|b": "b"}, se_of=se
    )
    assert r.members == ("b", "c")
    assert "saved choice" in r.reason


def test_reason_names_the_criterion_that_decided():
    se = {("a", "c"): 0.1, ("b", "c"): 0.3}.get
    r = recommend_set([("a", "c"), ("b", "c")], proposed=["a", "b", "c"], se_of=se)
    assert "smallest standard error (0.1, against 0.3" in r.reason
    r = recommend_set([("a", "c"), ("b", "c")], proposed=["b"], se_of=se)
    assert "most members of the proposed set" in r.reason


def _two_measures(seed: int = 7, n: int = 4000):
    """A confounder U measured twice: ``good`` with reliability 0.95, ``noisy``
    with reliability 0.6 (reliability = var(U) / var(measure)); true effect 1.6."""
    rng = np.random.default_rng(seed)
    u = rng.normal(size=n)
    good = u + rng.normal(scale=np.sqrt(1 / 0.95 - 1), size=n)
    noisy = u + rng.normal(scale=np.sqrt(1 / 0.6 - 1), size=n)
    x = 1.5 * u + rng.normal(size=n)
    y = 1.6 * x + 0.5 * u + rng.normal(size=n)
    return {"good": good, "noisy": noisy, "x": x, "y": y}


def _ols_lookup(data):
    # Outside reference: statsmodels OLS fits give the estimates the ranking reads.
    def fit(members):
        X = sm.add_constant(np.column_stack([data["x"], *(data[m] for m in members)]))
        return sm.OLS(data["y"], X).fit()

    return (lambda s: float(fit(s).params[1])), (lambda s: float(fit(s).bse[1]))


def test_keep_one_default_keeps_the_more_reliable_measure():
    data = _two_measures()
    estimate_of, se_of = _ols_lookup(data)
    # The trap: the noisy measure is less correlated with the exposure, so its
    # model gives the smaller standard error while it leaves confounding behind.
    assert se_of(("noisy",)) < se_of(("good",))
    assert abs(estimate_of(("good",)) - 1.6) < abs(estimate_of(("noisy",)) - 1.6)
    r = recommend_set(
        [("good",), ("noisy",)], groups=[("good", "noisy")], se_of=se_of, estimate_of=estimate_of
    )
    assert r.members == ("good",)
    assert "closest to adjusting for every member" in r.reason
    ranking = rank_members(("good", "noisy"), (), estimate_of=estimate_of, se_of=se_of)
    assert ranking.best == "good"
    assert not ranking.by_se


def test_standard_error_decides_between_equivalent_members():
    est = {("a",): 1.0, ("b",): 1.0, ("a", "b"): 1.2}.get
    se = {("a",): 0.3, ("b",): 0.2}.get
    ranking = rank_members(("a", "b"), (), estimate_of=est, se_of=se)
    assert ranking.best == "b"
    assert ranking.by_se
    assert recommend_set(
        [("a",), ("b",)], groups=[("a", "b")], se_of=se, estimate_of=est
    ).members == ("b",)


def test_saved_choice_beats_the_confounding_default():
    data = _two_measures()
    estimate_of, se_of = _ols_lookup(data)
    r = recommend_set(
        [("good",), ("noisy",)],
        groups=[("good", "noisy")],
        keep_choices={"good|noisy": "noisy"},
        se_of=se_of,
        estimate_of=estimate_of,
    )
    assert r.members == ("noisy",)


def test_a_set_that_departs_from_a_saved_choice_loses_a_tie():
    from covariscope.analysis.recommend import recommend_set

    # neither set holds the saved choice a; (b, x) holds another member of its group
    rec = recommend_set(
        [("b", "x"), ("y", "z")], groups=[("a", "b", "c")], keep_choices={"a|b|c": "a"}
    )
    assert rec.members == ("y", "z")
    assert "keeps the saved choice" in rec.reason
    # a member in two groups counts in each (groups may overlap)
    two = recommend_set(
        [("b", "x"), ("d", "e")],
        groups=[("a", "b"), ("b", "c")],
        keep_choices={"a|b": "a", "b|c": "c"},
    )
    assert two.members == ("d", "e")
