"""Pieces shared by the model fits, checked against numpy."""

from __future__ import annotations

import numpy as np

from covariscope.analysis.fitting_common import CHUNK_ROWS, weighted_crossprod


def test_blocked_weighted_cross_product_matches_numpy_in_both_layouts() -> None:
    # Reference: numpy's X.T @ (w X) on the same array; n spans several row blocks.
    rng = np.random.default_rng(21)
    n = 2 * CHUNK_ROWS + 123
    X = rng.normal(size=(n, 5))
    w = rng.random(n)
    ref = X.T @ (w[:, None] * X)
    np.testing.assert_allclose(weighted_crossprod(X, w), ref, rtol=1e-12)
    np.testing.assert_allclose(weighted_crossprod(np.asfortranarray(X), w), ref, rtol=1e-12)


def test_a_pass_over_many_row_blocks_sums_what_numpy_sums() -> None:
    # Reference: numpy's X.T @ (w X) and X.T @ (y − μ) over all rows at once.
    from covariscope.analysis.passes import glm_pass

    n = 5 * CHUNK_ROWS + 77
    rng = np.random.default_rng(22)
    X = np.asfortranarray(np.column_stack([np.ones(n), rng.normal(size=(n, 3))]))
    y = (rng.random(n) < 0.3).astype(float)
    beta = np.array([-0.8, 0.2, 0.0, -0.1])
    w = rng.random(n)
    np.testing.assert_allclose(weighted_crossprod(X, w), X.T @ (w[:, None] * X), rtol=1e-11)
    mu = 1 / (1 + np.exp(-(X @ beta)))
    res = glm_pass(X, y, "logistic", beta, meat=True)
    assert res.info is not None
    assert res.meat is not None
    np.testing.assert_allclose(res.info, X.T @ ((mu * (1 - mu))[:, None] * X), rtol=1e-11)
    np.testing.assert_allclose(res.score, X.T @ (y - mu), rtol=1e-9, atol=1e-8)
    np.testing.assert_allclose(res.meat, X.T @ (((y - mu) ** 2)[:, None] * X), rtol=1e-11)
