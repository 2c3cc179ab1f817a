"""Tables of models that each add columns of their own to one model, fitted in
lockstep: every model equals the same model fitted alone (which
test_modification.py and test_splines.py check against statsmodels; one is
checked here too), in fewer reads of the rows; the tables split into groups
give the same numbers; a model whose columns cannot be made, or whose fit
fails, fails alone with its own message."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.analysis import column_tables, glm_batch
from covariscope.analysis.column_fit import ColumnFit, base_fit, start_from
from covariscope.analysis.column_tables import ExtraModel, fit_extra_many, fit_model
from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.modification import effect_modification, modification_table
from covariscope.analysis.splines import residual_confounding, residual_table


def _cohort(n: int = 3000, seed: int = 21) -> pd.DataFrame:
    """Invented: x continuous, m modifies its effect, c enters the outcome curved."""
    rng = np.random.default_rng(seed)
    c = rng.uniform(-2, 2, n)
    w = rng.normal(size=n)
    v = rng.normal(size=n)
    m = rng.integers(0, 2, n).astype(float)
    x = 0.4 * c**2 + 0.3 * w + rng.normal(size=n)
    lin = -1.0 + 0.3 * x + 0.3 * x * m + 0.3 * m + 0.4 * c**2 + 0.2 * w - 0.2 * v
    yb = (rng.random(n) < 1 / (1 + np.exp(-lin))).astype(float)
    yr = (rng.random(n) < 0.2 * np.exp(0.3 * (lin - lin.max()))).astype(float)
    return pd.DataFrame({"x": x, "c": c, "w": w, "v": v, "m": m, "yb": yb, "yr": yr})


def _design(family: str, frame: pd.DataFrame | None = None) -> Any:
    return make_design(
        _cohort() if frame is None else frame,
        exposure=TermSpec("x", "continuous"),
        covariates={
            "c": TermSpec("c", "continuous"),
            "w": TermSpec("w", "continuous"),
            "v": TermSpec("v", "continuous"),
            "m": TermSpec("m", "binary"),
        },
        outcome="yb" if family == "logistic" else "yr",
        family=family,
    )


def _products(design: Any, near: ColumnFit | None, node: str) -> ExtraModel:
    """exposure + c, w, v + node + exposure × node, as the modification check builds it."""
    cols = [0, *(design.blocks[t].index[0] for t in design.blocks if t in {"c", "w", "v", node})]
    names = [design.column_names[j] for j in cols]
    every = (*names, f"x×{node}")

    def prepare() -> tuple[list[np.ndarray], np.ndarray | None]:
        product = design.values[:, 0] * design.blocks[node].values[:, 0]
        return [product], None if near is None else start_from(near, list(every))

    return ExtraModel(tuple(cols), every, prepare)


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
@pytest.mark.parametrize("group_width", [1, 16])
def test_models_fitted_together_equal_the_models_fitted_alone(
    family: str,
    group_width: int,
    monkeypatch: pytest.MonkeyPatch,
    count_calls: Callable[[Any, str], list[int]],
) -> None:
    design = _design(family)
    near = base_fit(design, ["c", "w", "v"])
    models = [_products(design, near, node) for node in ("c", "w", "v", "m")]
    alone = [fit_model(design, model) for model in models]
    reads = count_calls(glm_batch, "batch_pass")
    monkeypatch.setattr(column_tables, "GROUP_WIDTH", group_width)
    monkeypatch.setattr(column_tables, "GROUP_BYTES", 0)
    seen: list[int] = []
    together = fit_extra_many(design, models, announce=seen.append)
    assert reads[0] > 0
    for a, b in zip(alone, together, strict=True):
        assert isinstance(a, ColumnFit)
        assert isinstance(b, ColumnFit)
        np.testing.assert_allclose(b.coef, a.coef, rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose(b.cov, a.cov, rtol=1e-8, atol=1e-14)
        assert b.names == a.names
    # progress: every model's number is said, in order, and no other
    assert seen == sorted(seen)
    assert set(seen) <= {0, 1, 2, 3}
    assert seen[0] == 0


def test_a_model_fitted_together_equals_statsmodels_logit() -> None:
    design = _design("logistic")
    near = base_fit(design, ["c", "w", "v"])
    models = [_products(design, near, node) for node in ("c", "m")]
    fitted = fit_extra_many(design, models)[1]
    assert isinstance(fitted, ColumnFit)
    frame = _cohort()
    X = sm.add_constant(frame[["x", "c", "w", "v", "m"]].assign(xm=frame["x"] * frame["m"]))
    ref = sm.Logit(frame["yb"], X).fit(disp=0)  # Reference: statsmodels Logit
    np.testing.assert_allclose(fitted.coef, np.asarray(ref.params)[1:], rtol=1e-8)
    np.testing.assert_allclose(np.sqrt(np.diag(fitted.cov)), np.asarray(ref.bse)[1:], rtol=1e-7)


def test_a_model_that_cannot_be_made_or_fitted_fails_alone() -> None:
    frame = _cohort()
    # s separates the outcome perfectly: its model cannot be fitted
    separating = np.where(frame["yb"] > 0, 1.0, -1.0) * (1.0 + frame["v"].abs().to_numpy())
    design = _design("logistic")
    near = base_fit(design, ["c", "w", "v"])
    good = [_products(design, near, node) for node in ("c", "w")]
    cols = good[0].cols

    def refused() -> str:
        return "too few distinct values for a spline"

    def separates() -> tuple[list[np.ndarray], np.ndarray | None]:
        return [separating], None

    names = tuple(design.column_names[j] for j in cols)
    bad = ExtraModel(cols, (*names, "s"), separates)
    models = [good[0], ExtraModel(cols, (*names, "s"), refused), bad, good[1]]
    together = fit_extra_many(design, models)
    assert together[1] == "too few distinct values for a spline"
    assert isinstance(together[2], str)
    assert together[2] == fit_model(design, bad)  # the message it gets alone
    assert "separat" in together[2].lower()
    for k in (0, 3):
        alone = fit_model(design, models[k])
        assert isinstance(alone, ColumnFit)
        assert isinstance(together[k], ColumnFit)
        np.testing.assert_allclose(together[k].coef, alone.coef, rtol=1e-9)


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_tables_fitted_together_equal_the_checks_made_one_by_one(family: str) -> None:
    design = _design(family)
    terms = ["c", "w", "v"]
    near = base_fit(design, terms)
    table = modification_table(design, terms, ["c", "w", "m"], near=near)
    for node in ("c", "w", "m"):
        one = effect_modification(design, terms, node, near=near)
        for a, b in zip(one.strata, table[node].strata, strict=True):
            assert b.coef == pytest.approx(a.coef, rel=1e-9, abs=1e-12)
            assert b.se == pytest.approx(a.se, rel=1e-8)
        assert table[node].interaction_p == pytest.approx(one.interaction_p, rel=1e-7, abs=1e-12)
    checks = residual_table(design, terms, ["c", "w"], near=near)
    for node in ("c", "w"):
        raw = design.blocks[node].values[:, 0]
        one = residual_confounding(design, terms, node, raw, near=near)
        assert checks[node].spline == pytest.approx(one.spline, rel=1e-9)
        assert checks[node].linear == pytest.approx(one.linear, rel=1e-12)
        assert checks[node].flagged == one.flagged
