"""One-pass linear summary and least squares solved from it."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from covariscope.analysis.linear import (
    centred_cross,
    centred_products,
    linear_summary,
    merge_summaries,
    solve_ols,
)


@pytest.fixture(scope="module")
def longley():
    data = sm.datasets.longley.load_pandas()  # NIST StRD Longley data, shipped with statsmodels
    return data.exog.to_numpy(dtype=float), data.endog.to_numpy(dtype=float)


# NIST StRD "Longley" certified values (higher difficulty, linear regression), from memory:
# intercept, GNPDEFL, GNP, UNEMP, ARMED, POP, YEAR; then their standard deviations.
CERTIFIED_COEF = [
    -3482258.63459582,
    15.0618722713733,
    -0.358191792925910e-01,
    -2.02022980381683,
    -1.03322686717359,
    -0.511041056535807e-01,
    1829.15146461355,
]
CERTIFIED_SE = [
    890420.383607373,
    84.9149257747669,
    0.334910077722432e-01,
    0.488399681651699,
    0.214274163161675,
    0.226073200069370,
    455.478499142212,
]
CERTIFIED_RESID_SD = 304.854073561965
CERTIFIED_R2 = 0.995479004577296


def _significant_digits(a, b):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return -np.log10(np.abs(a - b) / np.abs(b) + 1e-300)


def _fast_path(longley):
    x, y = longley
    summary = linear_summary(np.column_stack([x, y]))
    return solve_ols(summary, range(6), 6)


def test_longley_matches_nist_certified_values(longley):
    # Outside source: NIST StRD certified values for Longley (from memory, see above).
    fit = _fast_path(longley)
    coef = [fit.intercept, *fit.coef]
    se = [fit.intercept_se, *fit.se]
    assert _significant_digits(coef, CERTIFIED_COEF).min() >= 9
    assert _significant_digits(se, CERTIFIED_SE).min() >= 9
    assert _significant_digits(fit.sigma, CERTIFIED_RESID_SD) >= 9
    assert _significant_digits(fit.r2, CERTIFIED_R2) >= 9


def test_longley_matches_statsmodels_ols(longley):
    # Outside source: statsmodels OLS (QR on the rows) on the NIST Longley data.
    x, y = longley
    ref = sm.OLS(y, sm.add_constant(x)).fit()
    fit = _fast_path(longley)
    assert _significant_digits([fit.intercept, *fit.coef], ref.params).min() >= 9
    assert _significant_digits([fit.intercept_se, *fit.se], ref.bse).min() >= 9
    assert _significant_digits(fit.r2, ref.rsquared) >= 9
    lo, hi = fit.ci()
    np.testing.assert_allclose(np.column_stack([lo, hi]), ref.conf_int()[1:], rtol=1e-8)


def test_chunked_pass_and_merge_equal_single_pass():
    rng = np.random.default_rng(3)
    v = rng.normal(loc=[5.0, -3.0, 1e4], scale=[1.0, 2.0, 0.1], size=(1000, 3))
    whole = linear_summary(v)
    chunked = linear_summary(v, chunk_rows=37)
    merged = merge_summaries(linear_summary(v[:400]), linear_summary(v[400:]))
    direct = (v - v.mean(0)).T @ (v - v.mean(0))
    for s in (whole, chunked, merged):
        assert s.n == 1000
        np.testing.assert_allclose(s.mean, v.mean(0), rtol=1e-13)
        np.testing.assert_allclose(s.comoment, direct, rtol=1e-10)


def test_crude_model_and_no_degrees_of_freedom():
    rng = np.random.default_rng(0)
    v = rng.normal(size=(4, 4))
    s = linear_summary(v)
    assert solve_ols(s, [0, 1, 2], 3) is None  # 4 rows, 4 parameters
    empty = solve_ols(s, [], 3)
    assert empty is not None
    assert empty.intercept == pytest.approx(v[:, 3].mean())


def test_exact_collinearity_is_refused():
    rng = np.random.default_rng(0)
    a = rng.normal(size=30)
    v = np.column_stack([a, 2 * a + 1, rng.normal(size=30)])
    assert solve_ols(linear_summary(v), [0, 1], 2) is None


def test_centred_cross_centres_raw_columns_on_the_way_to_the_same_bits() -> None:
    # Reference: the plain product of explicitly centred arrays, block by block as
    # centred_cross sums them (the same additions in the same order, so equal bits).
    rng = np.random.default_rng(11)
    values = np.asfortranarray(rng.normal(size=(1000, 5)) * [1.0, 1e3, 1e-3, 5.0, 2.0])
    extra = rng.normal(size=(1000, 2)) + 7.0
    mean, centre = values.mean(axis=0), extra.mean(axis=0)
    cols = [0, 2, 4]
    expected = np.zeros((3, 2))
    for s in range(0, 1000, 300):
        expected += (values[s : s + 300, cols] - mean[cols]).T @ (extra[s : s + 300] - centre)
    got = centred_cross(values, mean[cols], extra, cols, chunk_rows=300, centre=centre)
    np.testing.assert_array_equal(got, expected)
    centred = centred_cross(values, mean[cols], extra - centre, cols, chunk_rows=300)
    np.testing.assert_array_equal(got, centred)


def test_centred_products_read_the_design_as_it_lies_and_keep_every_digit() -> None:
    # Reference: each co-moment summed exactly (math.fsum) over explicitly centred
    # columns.  The column 1e8 + N(0, 1) would lose eight digits to its mean in a
    # product of raw values: it must be crossed centred.
    import math

    rng = np.random.default_rng(12)
    n = 4000
    values = np.asfortranarray(
        np.column_stack(
            [
                rng.normal(size=n),
                3.0 * rng.normal(size=n) + 2.0,
                rng.normal(size=n) + 1e8,
                (rng.random(n) > 0.3).astype(float),
            ]
        )
    )
    extra = 0.5 * values[:, [0, 2]] + rng.normal(size=(n, 2)) + [4.0, -1.0]
    centred = extra - extra.mean(axis=0)
    mean, sd = values.mean(axis=0), values.std(axis=0)
    cols = [3, 0, 2]
    got = centred_products(values, mean[cols], sd[cols], centred, cols)
    for i, c in enumerate(cols):
        for j in range(2):
            exact = math.fsum((values[:, c] - mean[c]) * centred[:, j])
            scale = n * sd[c] * centred[:, j].std()
            assert got[i, j] == pytest.approx(exact, abs=1e-13 * scale), (c, j)
