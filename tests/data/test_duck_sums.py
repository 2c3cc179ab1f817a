"""DuckDB computes the standard sums where the rows lie, as the batch functions define them.

The reference is the batch definition itself (:mod:`covariscope.analysis.rows`),
applied to the same rows streamed out of the database: the aggregate queries
must give the same column statistics, Newton sums and sandwich middle term.
The study-level agreement with the in-memory engine is in test_sources.py.
"""

from __future__ import annotations

from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.analysis.rows import (
    SummingReducer,
    column_stats,
    glm_sums,
    merge_column_stats,
    merge_glm_sums,
    merge_sandwich_sums,
    reduce_column_stats,
    sandwich_sums,
)
from covariscope.data.sources.duck import DuckSource
from covariscope.data.sources.duck_sql import SqlRows


@pytest.fixture
def rows(tmp_path: Path) -> SqlRows:
    rng = np.random.default_rng(15)
    n = 3000
    x = rng.normal(size=n)
    c = rng.normal(loc=1e4, scale=2.0, size=n)  # far from zero: centring matters
    count = rng.poisson(np.exp(0.2 * x))
    binary = (rng.random(n) < 1 / (1 + np.exp(-x))).astype(float)
    frame = pd.DataFrame(
        {"x": x, "c": c, "count": count, "b": binary, "t": rng.uniform(0.5, 2.0, n)}
    )
    frame.loc[::17, "c"] = np.nan
    frame.to_parquet(tmp_path / "rows.parquet")
    source = DuckSource(tmp_path / "rows.parquet", batch_rows=700)
    base = f"FROM {source._from} WHERE c IS NOT NULL AND NOT isnan(c)"
    return SqlRows(source, ["x", "c", "b", "CAST(count AS DOUBLE)"], "ln(t)", base)


def test_the_database_is_asked_for_the_sums(rows: SqlRows) -> None:
    assert isinstance(rows, SummingReducer)


def test_column_statistics_match_the_batch_definition(rows: SqlRows) -> None:
    streamed = rows.reduce(column_stats, merge_column_stats)
    summed = reduce_column_stats(rows)
    assert summed.summary.n == streamed.summary.n == 3000 - 177
    np.testing.assert_allclose(summed.summary.mean, streamed.summary.mean, rtol=1e-13)
    np.testing.assert_allclose(summed.summary.comoment, streamed.summary.comoment, rtol=1e-10)
    np.testing.assert_array_equal(summed.low, streamed.low)
    np.testing.assert_array_equal(summed.high, streamed.high)
    assert summed.outcome_positive == streamed.outcome_positive
    assert summed.outcome_not_binary == streamed.outcome_not_binary
    assert summed.offset_exp_sum == pytest.approx(streamed.offset_exp_sum, rel=1e-13)


@pytest.mark.parametrize(
    ("family", "columns", "params"),
    [
        ("logistic", (0, 1), np.array([0.3, 0.8, -1e-4])),
        ("risk_ratio", (0, 2), np.array([-0.1, 0.2, 0.05])),
        ("logistic", (0,), np.array([40.0, 0.0])),  # μ at the edge: log1p(e) for tiny e
    ],
)
def test_newton_sums_match_the_batch_definition(
    rows: SqlRows, family: str, columns: tuple[int, ...], params: np.ndarray
) -> None:
    ylogy = family == "risk_ratio"
    if family == "logistic":
        rows = SqlRows(rows.source, ["x", "c", "CAST(count AS DOUBLE)", "b"], None, _base(rows))
    fn = partial(glm_sums, columns=columns, params=params, family=family, ylogy=ylogy)
    streamed = rows.reduce(fn, merge_glm_sums)
    summed = rows.glm_sums(columns, params, family, ylogy)
    np.testing.assert_allclose(summed.information, streamed.information, rtol=1e-11)
    np.testing.assert_allclose(summed.score, streamed.score, rtol=1e-9, atol=1e-9)
    assert summed.deviance == pytest.approx(streamed.deviance, rel=1e-11)
    assert summed.weight_sum == pytest.approx(streamed.weight_sum, rel=1e-11)
    assert summed.mu_low == pytest.approx(streamed.mu_low, rel=1e-11)
    assert summed.mu_high == pytest.approx(streamed.mu_high, rel=1e-11)
    assert summed.rows == streamed.rows


def test_the_sandwich_middle_term_matches_the_batch_definition(rows: SqlRows) -> None:
    params = np.array([-0.1, 0.2, 0.0001])
    streamed = rows.reduce(
        partial(sandwich_sums, columns=(0, 1), params=params), merge_sandwich_sums
    )
    summed = rows.sandwich_sums((0, 1), params)
    np.testing.assert_allclose(summed.meat, streamed.meat, rtol=1e-11)


def _base(rows: SqlRows) -> str:
    return rows.query[rows.query.index(" FROM ") :]
