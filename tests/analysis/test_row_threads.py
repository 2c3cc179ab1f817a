"""Passes over the rows cut into ranges on threads of their own: the sums equal
the one-range sums (up to the order of the additions), BLAS is held to one
thread while the ranges run and given back its thread count after, and an
error in a range reaches the caller."""

from __future__ import annotations

import threading

import numpy as np
import pytest
from threadpoolctl import threadpool_info

from covariscope.analysis import row_threads
from covariscope.analysis.families import family_of
from covariscope.analysis.glm_batch import batch_pass
from covariscope.analysis.glm_newton import PassRequest
from covariscope.analysis.passes import glm_pass


def _blas_threads() -> int:
    return max(lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas")


def _data(n: int = 3001) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Invented rows: five covariates, a 0/1 outcome, a small offset."""
    rng = np.random.default_rng(5)
    X = np.asfortranarray(np.column_stack([np.ones(n), rng.normal(size=(n, 5))]))
    y = (rng.random(n) < 0.3).astype(float)
    return X, y, rng.normal(scale=0.1, size=n)


def test_ranges_cover_every_row_once() -> None:
    for n in (1, 2, 7, 100, 65537):
        for parts in (1, 2, 3, 5):
            ranges = row_threads.row_ranges(n, parts)
            covered = np.concatenate([np.arange(a, b) for a, b in ranges])
            assert covered.tolist() == list(range(n))


def test_short_passes_stay_on_one_range() -> None:
    assert row_threads.threads_for(row_threads.MIN_RANGE_ROWS) == 1


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
@pytest.mark.parametrize("parts", [2, 3])
def test_sums_in_ranges_equal_one_range(
    family: str, parts: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    X, y, off = _data()
    beta = np.array([-0.8, 0.2, -0.1, 0.05, 0.3, 0.0])
    one = glm_pass(X, y, family, beta, offset=off, meat=True)
    link = family_of(family).glm
    models = [np.arange(6), np.array([0, 1, 4]), np.array([0, 1, 5, 2])]
    asks = [PassRequest(beta[c], True, True) for c in models]
    alone = batch_pass(X, y, link, list(zip(models, asks, strict=True)), offset=off)
    monkeypatch.setattr(row_threads, "threads_for", lambda n: parts)
    split = glm_pass(X, y, family, beta, offset=off, meat=True)
    together = batch_pass(X, y, link, list(zip(models, asks, strict=True)), offset=off)
    for a, b in [(one, split), *zip(alone, together, strict=True)]:
        assert b.deviance == pytest.approx(a.deviance, rel=1e-13)
        np.testing.assert_allclose(b.score, a.score, rtol=1e-11, atol=1e-11)
        np.testing.assert_allclose(b.info, a.info, rtol=1e-12)
        np.testing.assert_allclose(b.meat, a.meat, rtol=1e-12)
        assert (b.mu_low, b.mu_high) == pytest.approx((a.mu_low, a.mu_high), rel=1e-14)


def test_blas_runs_on_one_thread_in_the_ranges_and_gets_its_count_back() -> None:
    before = _blas_threads()
    seen: list[int] = []
    lock = threading.Lock()

    def work(start: int, stop: int) -> int:
        with lock:
            seen.append(_blas_threads())
        return stop - start

    assert sum(row_threads.in_ranges(10, work, parts=3)) == 10
    assert seen == [1, 1, 1]
    assert _blas_threads() == before


def test_an_error_in_a_range_reaches_the_caller_after_every_range_ends() -> None:
    ended: list[int] = []

    def work(start: int, stop: int) -> int:
        if start == 0:
            raise FloatingPointError("overflow in range")
        ended.append(start)
        return start

    with pytest.raises(FloatingPointError, match="overflow in range"):
        row_threads.in_ranges(9, work, parts=3)
    assert sorted(ended) == [3, 6]
    assert _blas_threads() >= 1
