"""The recommended set among the minimal sufficient sets."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from covariscope.analysis.recommend import pair_r2, recommend_set


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
