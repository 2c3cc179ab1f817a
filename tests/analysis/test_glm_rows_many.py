"""Several logistic or Poisson models fitted from row sums at once, their Newton
steps sharing each read of the rows: every model ends where it ends alone
(the one-by-one fit is itself checked against statsmodels below and in
tests/data/test_sources.py), and one that cannot be fitted fails alone."""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest

from covariscope.analysis.glm_rows import RowModel, RowOutcome, fit_glm_rows, fit_glm_rows_many
from covariscope.analysis.rows import RowBatch


class Batches:
    """The rows in four batches, counting the reads."""

    def __init__(self, values: np.ndarray) -> None:
        self.values, self.reads = values, 0

    def reduce(self, fn: Any, merge: Any) -> Any:
        self.reads += 1
        parts = [fn(RowBatch(v)) for v in np.array_split(self.values, 4)]
        out = parts[0]
        for part in parts[1:]:
            out = merge(out, part)
        return out


def _rows(family: str, n: int = 3000, seed: int = 5) -> np.ndarray:
    """Invented: x and four covariates, a binary outcome; column 5 separates it perfectly."""
    rng = np.random.default_rng(seed)
    z = rng.normal(size=(n, 5))
    eta = -1.0 + 0.5 * z[:, 0] + z[:, 1:] @ np.array([0.4, -0.3, 0.2, 0.1])
    p = 1 / (1 + np.exp(-eta)) if family == "logistic" else 0.2 * np.exp(0.3 * (eta - eta.max()))
    y = (rng.random(n) < p).astype(float)
    separating = np.where(y == 1, 1.0, -1.0) + 0.01 * rng.normal(size=n)
    return np.column_stack([z, separating, y])


def _model(values: np.ndarray, cols: tuple[int, ...]) -> RowModel:
    X = values[:, list(cols)]
    return RowModel(
        cols,
        ["(intercept)", *(f"v{c}" for c in cols)],
        tuple(f"v{c}" for c in cols[1:]),
        np.concatenate([[0.0], X.std(axis=0)]),
        np.concatenate([[1.0], np.abs(X).max(axis=0)]),
    )


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_models_fitted_together_equal_the_models_fitted_alone(family: str) -> None:
    values = _rows(family)
    y = values[:, -1]
    outcome = RowOutcome(float(y.mean()), 0.0, len(y), True)
    plans = [(0,), (0, 1), (0, 1, 2, 3, 4), (0, 2, 3, 4), (0, 1, 3)]
    models = [_model(values, cols) for cols in plans]
    together = Batches(values)
    many = fit_glm_rows_many(together, models, family, outcome=outcome)
    alone_reads = 0
    for m, (fit, params, _) in zip(models, many, strict=True):
        alone = Batches(values)
        ref, ref_params, _ = fit_glm_rows(
            alone,
            m.columns,
            family,
            outcome=outcome,
            column_names=m.column_names,
            terms=m.terms,
            scale=m.scale,
            reach=m.reach,
        )
        alone_reads += alone.reads
        assert fit.ok
        assert ref.ok
        assert params is not None
        assert ref_params is not None
        np.testing.assert_allclose(params, ref_params, rtol=1e-12, atol=1e-14)
        assert fit.se == pytest.approx(ref.se, rel=1e-12)
    assert together.reads < alone_reads / 2


def test_the_batch_equals_statsmodels_logit() -> None:
    """statsmodels Logit on the same columns (the reference for every logistic fit)."""
    import statsmodels.api as sm

    values = _rows("logistic")
    y = values[:, -1]
    outcome = RowOutcome(float(y.mean()), 0.0, len(y), True)
    plans = [(0, 1, 2), (0, 3, 4)]
    many = fit_glm_rows_many(
        Batches(values), [_model(values, c) for c in plans], "logistic", outcome=outcome
    )
    for cols, (fit, _, _) in zip(plans, many, strict=True):
        ref = sm.Logit(y, sm.add_constant(values[:, list(cols)])).fit(disp=0)
        assert fit.coef == pytest.approx(ref.params[1], rel=1e-8)
        assert fit.se == pytest.approx(ref.bse[1], rel=1e-7)


def test_a_model_that_cannot_be_fitted_fails_alone() -> None:
    values = _rows("logistic")
    y = values[:, -1]
    outcome = RowOutcome(float(y.mean()), 0.0, len(y), True)
    plans = [(0, 1), (0, 5), (0, 2)]
    models = [_model(values, c) for c in plans]
    many = fit_glm_rows_many(Batches(values), models, "logistic", outcome=outcome)
    assert not many[1][0].ok
    assert "separation" in (many[1][0].message or "")
    for i in (0, 2):
        ref = fit_glm_rows(
            Batches(values),
            models[i].columns,
            "logistic",
            outcome=outcome,
            column_names=models[i].column_names,
            terms=models[i].terms,
            scale=models[i].scale,
            reach=models[i].reach,
        )[0]
        assert many[i][0].coef == pytest.approx(ref.coef, rel=1e-12)
