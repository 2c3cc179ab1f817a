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
