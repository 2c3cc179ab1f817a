"""Warm starts of the effect-modification and residual-confounding fits: a fit
started from the recommended model's fit gives the same numbers as a cold fit
(to 1e-8; the cold fits are the ones checked against statsmodels in
test_modification.py and test_splines.py) in fewer passes over the rows."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd
import pytest

from covariscope.analysis import column_fit, glm_newton
from covariscope.analysis.column_fit import ColumnFit, RowsBuffer, base_fit, fit_extra, start_from
from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.linear import linear_summary
from covariscope.analysis.modification import effect_modification, modification_table
from covariscope.analysis.splines import residual_confounding, residual_table


def _cohort(n: int = 4000, seed: int = 8) -> pd.DataFrame:
    """Invented: x continuous, m modifies its effect, a curved confounder c, a plain one w."""
    rng = np.random.default_rng(seed)
    c = rng.uniform(-2, 2, n)
    w = rng.normal(size=n)
    m = rng.integers(0, 2, n).astype(float)
    x = 0.5 * c**2 + 0.3 * w + rng.normal(size=n)
    lin = -1.0 + 0.3 * x + 0.4 * x * m + 0.3 * m + 0.5 * c**2 + 0.2 * w
    yb = (rng.random(n) < 1 / (1 + np.exp(-lin))).astype(float)
    yr = (rng.random(n) < 0.15 * np.exp(0.3 * (lin - lin.max()))).astype(float)
    t = rng.exponential(1 / np.exp(0.5 * lin))
    yl = lin + rng.normal(size=n)
    return pd.DataFrame(
        {"x": x, "c": c, "w": w, "m": m, "yb": yb, "yr": yr, "yl": yl, "t": t, "d": 1.0}
    )


def _design(family: str) -> Any:
    frame = _cohort()
    outcome = {"linear": "yl", "logistic": "yb", "risk_ratio": "yr", "cox": None}[family]
    return make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={
            "c": TermSpec("c", "continuous"),
            "w": TermSpec("w", "continuous"),
            "m": TermSpec("m", "binary"),
        },
        outcome=outcome,
        family=family,
        time="t" if family == "cox" else None,
        event="d" if family == "cox" else None,
    )


@pytest.fixture
def passes(count_calls: Callable[[Any, str], list[int]]) -> list[int]:
    """Counts the passes over the rows of the logistic and Poisson fits."""
    return count_calls(glm_newton, "glm_pass")


def test_a_start_keeps_known_coefficients_and_zeroes_new_columns() -> None:
    near = ColumnFit(np.zeros(2), np.eye(2), None, ("x", "z"), np.array([-1.0, 0.5, 0.2]))
    got = start_from(near, ["x", "w", "z"], given={"w": 3.0, "(intercept)": 0.5})
    assert got is not None
    assert got.tolist() == [-0.5, 0.5, 3.0, 0.2]
    assert start_from(ColumnFit(np.zeros(1), np.eye(1), 10), ["x"]) is None


@pytest.mark.parametrize("family", ["logistic", "risk_ratio", "cox"])
def test_modification_from_the_recommended_fit_equals_the_cold_fit(family: str) -> None:
    design = _design(family)
    near = base_fit(design, ["c", "w"])
    assert near is not None
    for node in ("m", "c", "w"):
        cold = effect_modification(design, ["c", "w"], node)
        warm = effect_modification(design, ["c", "w"], node, near=near)
        assert len(cold.strata) == len(warm.strata) > 0
        for a, b in zip(cold.strata, warm.strata, strict=True):
            assert b.coef == pytest.approx(a.coef, rel=1e-8, abs=1e-8 * a.se)
            assert b.se == pytest.approx(a.se, rel=1e-8)
        assert warm.interaction_stat == pytest.approx(cold.interaction_stat, rel=1e-7, abs=1e-9)


@pytest.mark.parametrize("family", ["logistic", "risk_ratio", "cox"])
def test_residual_check_from_the_recommended_fit_equals_the_cold_fit(family: str) -> None:
    design = _design(family)
    near = base_fit(design, ["c", "w"])
    for node in ("c", "w"):
        raw = design.blocks[node].values[:, 0]
        cold = residual_confounding(design, ["c", "w"], node, raw)
        warm = residual_confounding(design, ["c", "w"], node, raw, near=near)
        assert warm.linear == pytest.approx(cold.linear, rel=1e-8)
        assert warm.spline == pytest.approx(cold.spline, rel=1e-8)
        assert warm.flagged == cold.flagged
    table = residual_table(design, ["c", "w"], ["c"], near=near)
    assert table["c"].spline == pytest.approx(
        residual_confounding(design, ["c", "w"], "c", design.blocks["c"].values[:, 0]).spline,
        rel=1e-8,
    )


def test_warm_started_checks_make_fewer_passes(passes: list[int]) -> None:
    design = _design("logistic")
    cold_nodes = ["m", "c", "w"]
    for node in cold_nodes:
        effect_modification(design, ["c", "w"], node)
    for node in ("c", "w"):
        residual_confounding(design, ["c", "w"], node, design.blocks[node].values[:, 0])
    cold = passes[0]
    passes[0] = 0
    near = base_fit(design, ["c", "w"])
    modification_table(design, ["c", "w"], cold_nodes, near=near)
    residual_table(design, ["c", "w"], ["c", "w"], near=near)
    # The base fit is paid once; the linear fit of the residual check, which
    # is the recommended model itself, is then not fitted again.
    assert passes[0] < cold


@pytest.mark.parametrize("family", ["logistic", "cox"])
def test_the_residual_checks_linear_model_is_the_recommended_fit_not_a_new_one(
    family: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    from covariscope.analysis import column_tables, splines

    design = _design(family)
    near = base_fit(design, ["c", "w"])
    assert near is not None
    fitted: list[list[str]] = []
    real = splines.fit_extra

    def counting(*args: Any, **kw: Any) -> Any:
        fitted.append(list(args[3]))
        return real(*args, **kw)

    # every fit of the check, whether it is made by the check or as a table's model
    monkeypatch.setattr(splines, "fit_extra", counting)
    monkeypatch.setattr(column_tables, "fit_extra", counting)
    warm = residual_confounding(design, ["c", "w"], "c", design.blocks["c"].values[:, 0], near=near)
    assert len(fitted) == 1  # only the spline model
    assert fitted[0][-1].startswith("c[spline")
    cold = residual_confounding(design, ["c", "w"], "c", design.blocks["c"].values[:, 0])
    assert len(fitted) == 3  # without a neighbour both models are fitted
    assert warm.linear == pytest.approx(cold.linear, rel=1e-8)
    assert warm.spline == pytest.approx(cold.spline, rel=1e-8)


def test_linear_checks_from_the_design_summary_equal_the_fits_of_the_stacked_rows() -> None:
    """A linear model's modification and residual checks, with the design's summary
    lending the cross-products, equal the fits of the whole model matrix; the
    interaction model also equals statsmodels OLS on the same columns."""
    import statsmodels.api as sm

    design = _design("linear")
    summary = linear_summary(design.values)
    for node in ("m", "c", "w"):
        plain = effect_modification(design, ["c", "w"], node)
        summed = effect_modification(design, ["c", "w"], node, summary=summary)
        for a, b in zip(plain.strata, summed.strata, strict=True):
            assert b.coef == pytest.approx(a.coef, rel=1e-10)
            assert b.se == pytest.approx(a.se, rel=1e-10)
        assert summed.interaction_p == pytest.approx(plain.interaction_p, rel=1e-8, abs=1e-14)
    for node in ("c", "w"):
        raw = design.blocks[node].values[:, 0]
        plain_r = residual_confounding(design, ["c", "w"], node, raw)
        summed_r = residual_confounding(design, ["c", "w"], node, raw, summary=summary)
        assert summed_r.linear == pytest.approx(plain_r.linear, rel=1e-10)
        assert summed_r.spline == pytest.approx(plain_r.spline, rel=1e-10)
    # statsmodels OLS of y on [1, x, c, w, m, x·m]: the stratum m = 1 is b_x + b_xm.
    frame = _cohort()
    X = sm.add_constant(frame[["x", "c", "w", "m"]].assign(xm=frame["x"] * frame["m"]))
    ref = sm.OLS(frame["yl"], X).fit()
    by_m = effect_modification(design, ["c", "w"], "m", summary=summary)
    assert by_m.strata[0].coef == pytest.approx(ref.params["x"], rel=1e-9)
    assert by_m.strata[0].se == pytest.approx(ref.bse["x"], rel=1e-9)
    assert by_m.strata[1].coef == pytest.approx(ref.params["x"] + ref.params["xm"], rel=1e-9)


def test_linear_checks_with_the_summary_build_no_model_matrix(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    design = _design("linear")
    summary = linear_summary(design.values)

    def refuse(*args: Any, **kw: Any) -> Any:
        raise AssertionError("the model's rows were copied")

    monkeypatch.setattr(column_fit, "model_matrix", refuse)
    table = modification_table(design, ["c", "w"], ["m", "c", "w"], summary=summary)
    assert set(table) == {"m", "c", "w"}
    assert residual_table(design, ["c", "w"], ["c", "w"], summary=summary)["c"].flagged


def test_models_fitted_in_one_rows_buffer_equal_those_fitted_in_fresh_memory() -> None:
    # Reference: the same fits, each model's matrix in memory of its own (the
    # plain path); the buffer's matrices are written over one another.
    rng = np.random.default_rng(21)
    n = 2000
    frame = pd.DataFrame(rng.normal(size=(n, 4)), columns=["x", "a", "b", "c"])
    frame["y"] = (rng.random(n) < 1 / (1 + np.exp(-(frame.x + frame.a)))).astype(float)
    design = make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={t: TermSpec(t, "continuous") for t in "abc"},
        outcome="y",
        family="logistic",
    )
    rows = RowsBuffer()
    extra = [rng.normal(size=n), rng.normal(size=(n, 2))]
    models = [([0, 1], [extra[0]]), ([0, 1, 2, 3], [extra[1]]), ([0, 2], [])]
    for cols, more in models:
        names = [design.column_names[c] for c in cols] + [
            f"e{j}" for j in range(sum(1 if e.ndim == 1 else e.shape[1] for e in more))
        ]
        plain = fit_extra(design, cols, more, names)
        reused = fit_extra(design, cols, more, names, rows=rows)
        assert not isinstance(plain, str)
        assert not isinstance(reused, str)
        np.testing.assert_array_equal(reused.coef, plain.coef)
        np.testing.assert_array_equal(reused.cov, plain.cov)


def test_a_consumed_extra_column_gives_the_same_linear_fit_to_the_last_bit() -> None:
    # Reference: the same model with the extra columns left as they are (centred
    # in a copy); consumed, they are centred where they lie.
    rng = np.random.default_rng(8)
    n = 3000
    frame = pd.DataFrame(rng.normal(size=(n, 3)), columns=["x", "a", "y"])
    design = make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={"a": TermSpec("a", "continuous")},
        outcome="y",
        family="linear",
    )
    summary = linear_summary(design.values)
    basis = np.ascontiguousarray(rng.normal(size=(n, 3)) + 5.0)
    names = ["x", "a", "s1", "s2", "s3"]
    kept = fit_extra(design, [0, 1], [basis.copy()], names, summary=summary)
    eaten = fit_extra(design, [0, 1], [basis], names, summary=summary, consume=True)
    assert not isinstance(kept, str)
    assert not isinstance(eaten, str)
    np.testing.assert_array_equal(eaten.coef, kept.coef)
    np.testing.assert_array_equal(eaten.cov, kept.cov)
    assert abs(basis.mean()) < 1e-9  # it was centred where it lay


@pytest.mark.parametrize("family", ["logistic", "risk_ratio", "cox"])
def test_the_evidence_tables_own_fit_is_the_checks_start(family: str) -> None:
    from covariscope.analysis.evidence import EvidenceEngine

    design = _design(family)
    engine = EvidenceEngine(design)
    assert engine.column_fit(["c", "w"]) is None  # not fitted yet
    engine.fit(["w", "c"])
    near = engine.column_fit(["c", "w"])
    base = base_fit(design, ["c", "w"])
    assert near is not None
    assert base is not None
    assert near.names == base.names
    np.testing.assert_allclose(near.coef, base.coef, rtol=1e-8)
    np.testing.assert_allclose(near.cov, base.cov, rtol=1e-7)
    assert near.params is not None
    assert base.params is not None
    np.testing.assert_allclose(near.params, base.params, rtol=1e-8, atol=1e-10)


def test_a_linear_evidence_table_lends_no_start() -> None:
    from covariscope.analysis.evidence import EvidenceEngine

    engine = EvidenceEngine(_design("linear"))
    engine.fit(["c", "w"])
    assert engine.column_fit(["c", "w"]) is None
