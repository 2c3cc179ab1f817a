"""VIF, GVIF, condition indices and aliasing from the linear summary."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from statsmodels.stats.outliers_influence import variance_inflation_factor

from covariscope.analysis.collinearity import collinearity_report, find_aliases, gvif, vif
from covariscope.analysis.linear import linear_summary


def _statsmodels_vif(x):
    # Outside source: statsmodels variance_inflation_factor, called with a constant column.
    exog = sm.add_constant(x)
    return np.array([variance_inflation_factor(exog, j) for j in range(1, exog.shape[1])])


def test_vif_and_tolerance_on_longley_match_statsmodels():
    x = sm.datasets.longley.load_pandas().exog.to_numpy(float)
    ours = vif(linear_summary(x), range(6))
    ref = _statsmodels_vif(x)
    np.testing.assert_allclose(ours, ref, rtol=1e-8)
    np.testing.assert_allclose(1 / ours, 1 / ref, rtol=1e-8)


@pytest.mark.parametrize("seed", range(5))
def test_vif_on_random_designs_matches_statsmodels(seed):
    rng = np.random.default_rng(seed)
    k = int(rng.integers(2, 7))
    mix = rng.normal(size=(k, k))
    x = rng.normal(size=(80, k)) @ mix + rng.normal(size=k) * 10
    np.testing.assert_allclose(vif(linear_summary(x), range(k)), _statsmodels_vif(x), rtol=1e-9)


def _dummies(levels, reference):
    frame = pd.get_dummies(pd.Categorical(levels), dtype=float)
    return frame.drop(columns=reference).to_numpy()


def test_gvif_equals_vif_for_one_column_terms():
    rng = np.random.default_rng(1)
    x = rng.normal(size=(100, 4))
    x[:, 3] += x[:, 0] - x[:, 1]
    s = linear_summary(x)
    v = vif(s, range(4))
    for j in range(4):
        assert gvif(s, [j], [i for i in range(4) if i != j]) == pytest.approx(v[j], rel=1e-10)


def test_gvif_is_invariant_to_the_reference_level():
    # Fox & Monette (1992): the GVIF does not depend on the coding of the term's columns.
    rng = np.random.default_rng(2)
    n = 200
    z = rng.normal(size=n)
    levels = np.where(z > 0.5, "c", np.where(z < -0.5, "a", "b"))
    w = z + rng.normal(size=n)
    values = {}
    for ref in ("a", "b", "c"):
        d = _dummies(levels, ref)
        s = linear_summary(np.column_stack([w, d]))
        values[ref] = gvif(s, [1, 2], [0])
    assert values["a"] > 1.2
    assert values["b"] == pytest.approx(values["a"], rel=1e-10)
    assert values["c"] == pytest.approx(values["a"], rel=1e-10)


def _direct_bkw(x):
    # Outside source: a direct SVD of the design (with a column of ones), columns scaled to
    # unit length and not centred (Belsley, Kuh & Welsch 1980, ch. 3).
    design = np.column_stack([np.ones(len(x)), x])
    design = design / np.linalg.norm(design, axis=0)
    _, sv, vt = np.linalg.svd(design, full_matrices=False)
    phi = vt.T**2 / sv**2
    props = (phi / phi.sum(axis=1, keepdims=True)).T
    order = np.argsort(sv)[::-1]  # largest singular value first: indices ascend
    return (sv[0] / sv)[order], props[order]


@pytest.mark.parametrize("which", ["longley", "random"])
def test_condition_indices_match_direct_svd(which):
    if which == "longley":
        x = sm.datasets.longley.load_pandas().exog.to_numpy(float)
    else:
        rng = np.random.default_rng(7)
        x = rng.normal(size=(60, 4)) + 3
        x[:, 3] = x[:, 0] + 0.01 * rng.normal(size=60)
    k = x.shape[1]
    names = [f"c{j}" for j in range(k)]
    report = collinearity_report(linear_summary(x), range(k), names, names)
    ci, props = _direct_bkw(x)
    assert np.all(np.diff(report.condition_indices) >= 0), "ascending, as documented"
    np.testing.assert_allclose(report.condition_indices, ci, rtol=1e-6)
    np.testing.assert_allclose(report.proportions, props, atol=1e-6)
    assert report.flagged, "a strong near-dependency is flagged"
    top = max(report.flagged, key=lambda f: f.index)
    assert top.index >= 30
    assert len(top.nodes) >= 2


def test_no_flag_for_independent_columns():
    rng = np.random.default_rng(0)
    x = rng.normal(size=(200, 3))
    report = collinearity_report(linear_summary(x), range(3), ["a", "b", "c"], ["a", "b", "c"])
    assert report.flagged == ()
    assert report.columns[0] == "(intercept)"


def test_aliases_are_named():
    rng = np.random.default_rng(0)
    a, b = rng.normal(size=40), rng.normal(size=40)
    levels = rng.integers(0, 3, size=40)
    d = np.column_stack([levels == 1, levels == 2]).astype(float)
    v = np.column_stack([a, b, 3 * a - b + 2, a, d, 1 - d.sum(axis=1)])
    found = find_aliases(
        linear_summary(v), {"x": [0], "b": [1], "c": [2], "copy": [3], "grp": [4, 5], "rest": [6]}
    )
    messages = [f.message for f in found]
    assert messages == [
        "c is an exact linear combination of x, b",
        "copy is an exact linear combination of x",
        "rest is an exact linear combination of grp",
    ]


def test_flag_needs_both_a_high_index_and_two_high_proportions():
    # Rule of Belsley, Kuh & Welsch (1980, ch. 3): a dimension points at a near-dependency
    # when its condition index reaches the guide AND two or more variance proportions reach
    # theirs.  On Longley, the dimension with index about 230 has only one proportion above
    # 0.45 (GNPDEFL, about 0.46), so it is not flagged although its index exceeds 30.
    x = sm.datasets.longley.load_pandas().exog.to_numpy(float)
    names = [f"c{j}" for j in range(6)]
    s = linear_summary(x)
    report = collinearity_report(s, range(6), names, names, proportion_threshold=0.45)
    lone = int(np.argmin(np.abs(report.condition_indices - 230.4)))
    assert report.condition_indices[lone] > 30
    assert int(np.sum(report.proportions[lone] >= 0.45)) == 1
    assert all(abs(f.index - report.condition_indices[lone]) > 1 for f in report.flagged)
    for k, index in enumerate(report.condition_indices):
        high = int(np.sum(report.proportions[k] >= 0.45))
        expected = index >= 30 and high >= 2
        assert expected == any(f.index == pytest.approx(index) for f in report.flagged)
    strict = collinearity_report(s, range(6), names, names, index_threshold=1e5)
    assert strict.flagged == ()


def test_constant_column_is_named_as_a_multiple_of_the_intercept():
    rng = np.random.default_rng(0)
    a = rng.normal(size=30)
    found = find_aliases(
        linear_summary(np.column_stack([a, np.full(30, 2.0)])), {"a": [0], "k": [1]}
    )
    assert [f.message for f in found] == ["k is constant: an exact multiple of the intercept"]
