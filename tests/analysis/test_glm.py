"""Logistic and robust Poisson fits, checked against statsmodels."""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.analysis.glm import (
    detect_separation,
    fit_glm,
    fit_glm_path,
    information_and_score,
    newton_glm,
)


def _design(n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.column_stack(
        [np.ones(n), rng.integers(0, 2, n), rng.normal(size=n), rng.normal(size=n)]
    ).astype(float)


NAMES = ["(intercept)", "exposure", "age", "bmi"]


def _all_se(fit) -> np.ndarray:
    return np.array([fit.se] + [fit.term_coefs[k][1] for k in NAMES[2:]])


# ----------------------------------------------------------------- agreement


def test_logistic_matches_statsmodels_on_spector() -> None:
    # Reference: statsmodels Logit on the Spector & Mazzeo (1980) data shipped as
    # statsmodels.datasets.spector.
    data = sm.datasets.spector.load_pandas()
    X = sm.add_constant(data.exog, prepend=True).to_numpy(float)
    y = data.endog.to_numpy(float)
    ref = sm.Logit(y, X).fit(disp=0, tol=1e-12)
    names = ["const", "GPA", "TUCE", "PSI"]
    fit, params = fit_glm(X, y, "logistic", column_names=names, terms=("g", "t"), exposure_index=3)
    assert fit.ok
    assert fit.converged
    np.testing.assert_allclose(params, ref.params, rtol=1e-9)
    se = [fit.term_coefs["GPA"][1], fit.term_coefs["TUCE"][1], fit.se]
    np.testing.assert_allclose(se, ref.bse[1:], rtol=1e-7)
    lo, hi = ref.conf_int()[3]
    np.testing.assert_allclose(fit.ci, (lo, hi), rtol=1e-7)
    assert set(fit.term_coefs) == {"GPA", "TUCE"}
    assert fit.n == 32
    assert fit.n_params == 4


def test_risk_ratio_binary_matches_statsmodels_hc0() -> None:
    # Reference: statsmodels GLM(Poisson) with cov_type="HC0" (the modified Poisson
    # regression of Zou 2004).
    X = _design(600, 3)
    rng = np.random.default_rng(4)
    y = (rng.random(600) < np.exp(-1.5 + 0.4 * X[:, 1] + 0.2 * X[:, 2])).astype(float)
    ref = sm.GLM(y, X, family=sm.families.Poisson()).fit(cov_type="HC0", tol=1e-13)
    fit, params = fit_glm(X, y, "risk_ratio", column_names=NAMES, terms=("age", "bmi"))
    assert fit.ok
    assert fit.converged
    np.testing.assert_allclose(params, ref.params, rtol=1e-9)
    np.testing.assert_allclose(_all_se(fit), ref.bse[1:], rtol=1e-9)
    assert fit.ratio == pytest.approx(np.exp(ref.params[1]), rel=1e-9)


def test_rate_ratio_with_offset_matches_statsmodels_hc0() -> None:
    # Reference: statsmodels GLM(Poisson, offset=log time), cov_type="HC0".
    X = _design(500, 5)
    rng = np.random.default_rng(6)
    person_time = rng.uniform(0.5, 3.0, 500)
    counts = rng.poisson(person_time * np.exp(0.3 + 0.5 * X[:, 1] - 0.2 * X[:, 3])).astype(float)
    ref = sm.GLM(counts, X, family=sm.families.Poisson(), offset=np.log(person_time)).fit(
        cov_type="HC0", tol=1e-13
    )
    fit, params = fit_glm(
        X, counts, "risk_ratio", column_names=NAMES, terms=(), offset=np.log(person_time)
    )
    np.testing.assert_allclose(params, ref.params, rtol=1e-9)
    np.testing.assert_allclose(_all_se(fit), ref.bse[1:], rtol=1e-9)


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(60, 300))
def test_logistic_matches_statsmodels_on_random_designs(seed: int, n: int) -> None:
    # Reference: statsmodels Logit on the same rows.
    X = _design(n, seed)
    rng = np.random.default_rng(seed + 1)
    y = (rng.random(n) < 1 / (1 + np.exp(-(-0.3 + 0.7 * X[:, 1] + 0.5 * X[:, 2])))).astype(float)
    fit, params = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    if not fit.ok or (fit.warnings and "separation" in " ".join(fit.warnings)):
        return  # small samples may separate; the failure tests cover that path
    ref = sm.Logit(y, X).fit(disp=0, tol=1e-12)
    np.testing.assert_allclose(params, ref.params, rtol=1e-7, atol=1e-10)
    np.testing.assert_allclose(_all_se(fit), ref.bse[1:], rtol=1e-6)


# ----------------------------------------------------------------- warm starts


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_warm_start_reaches_the_same_answer_in_fewer_iterations(family: str) -> None:
    X = _design(2000, 8)
    rng = np.random.default_rng(9)
    eta = -1.2 + 0.5 * X[:, 1] + 0.4 * X[:, 2] - 0.3 * X[:, 3]
    y = (rng.random(2000) < 1 / (1 + np.exp(-eta))).astype(float)
    # The model without bmi, started from the full fit's one-step update
    # (b_K − V_KD V_DD⁻¹ b_D, V the full model's inverse information), as the
    # evidence engine starts every "full − C" model.
    full = newton_glm(X, y, family)
    assert full.cov is not None
    V, b = full.cov, full.params
    start = b[:3] - V[:3, 3] / V[3, 3] * b[3]
    cold = newton_glm(X[:, :3], y, family)
    warm = newton_glm(X[:, :3], y, family, start=start)
    assert cold.converged
    assert warm.converged
    assert warm.iterations < cold.iterations
    np.testing.assert_allclose(warm.params, cold.params, rtol=1e-9)
    names = NAMES[:3]
    fit_cold, _ = fit_glm(X[:, :3], y, family, column_names=names, terms=())
    fit_warm, _ = fit_glm(X[:, :3], y, family, column_names=names, terms=(), start=start)
    assert fit_warm.coef == pytest.approx(fit_cold.coef, rel=1e-9)
    assert fit_warm.se == pytest.approx(fit_cold.se, rel=1e-8)


def test_a_start_of_the_wrong_length_is_ignored() -> None:
    X = _design(300, 10)
    y = (np.random.default_rng(11).random(300) < 0.3).astype(float)
    fit, _ = fit_glm(X, y, "logistic", column_names=NAMES, terms=(), start=np.zeros(2))
    assert fit.ok
    assert fit.converged


# ----------------------------------------------------------------- failures


def test_complete_separation_names_the_column() -> None:
    X = _design(200, 12)
    y = (X[:, 2] > 0.1).astype(float)  # age predicts the outcome perfectly
    fit, params = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    assert not fit.ok
    assert params is None
    assert fit.message.startswith("Complete separation")
    assert "age" in fit.message
    assert "bmi" not in fit.message


def test_quasi_complete_separation_by_the_exposure_fails() -> None:
    X = _design(300, 13)
    rng = np.random.default_rng(14)
    y = np.where(X[:, 1] == 1, 1.0, (rng.random(300) < 0.3).astype(float))
    fit, params = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    assert not fit.ok
    assert params is None
    assert fit.message.startswith("Quasi-complete separation: exposure")


def test_quasi_complete_separation_by_a_covariate_leaves_it_blank() -> None:
    rng = np.random.default_rng(15)
    n = 400
    rare = (rng.random(n) < 0.1).astype(float)
    X = np.column_stack([np.ones(n), rng.integers(0, 2, n), rng.normal(size=n), rare])
    y = np.where(rare == 1, 0.0, (rng.random(n) < 0.4).astype(float))
    names = [*NAMES[:3], "smoker"]
    fit, params = fit_glm(X, y, "logistic", column_names=names, terms=())
    assert fit.ok
    assert params is not None
    assert any(w.startswith("Quasi-complete separation: smoker") for w in fit.warnings)
    assert np.isnan(fit.term_coefs["smoker"][0])
    # The exposure's estimate is the fit on the rows that are not predicted perfectly.
    keep = rare == 0
    ref = sm.Logit(y[keep], X[keep][:, :3]).fit(disp=0, tol=1e-12)
    assert fit.coef == pytest.approx(ref.params[1], rel=1e-5)
    assert fit.se == pytest.approx(ref.bse[1], rel=1e-4)


def test_detect_separation_finds_a_combination_of_continuous_columns() -> None:
    rng = np.random.default_rng(16)
    X = np.column_stack([np.ones(100), rng.normal(size=100), rng.normal(size=100)])
    y = (X[:, 1] + X[:, 2] > 0).astype(float)
    sep = detect_separation(X, y)
    assert sep.kind == "complete"
    assert {1, 2} <= set(sep.columns)
    y_noisy = (X[:, 1] + X[:, 2] + rng.normal(size=100) > 0).astype(float)
    assert detect_separation(X, y_noisy).kind == "none"


def test_detect_separation_quasi_complete_by_linear_program() -> None:
    # Two tied rows at the boundary with opposite outcomes: no two-valued column,
    # so the linear program must find it.
    x = np.array([-3, -2, -1, 0, 0, 1, 2, 3.0])
    y = np.array([0, 0, 0, 0, 1, 1, 1, 1.0])
    sep = detect_separation(np.column_stack([np.ones(8), x]), y)
    assert sep.kind == "quasi-complete"
    assert 1 in sep.columns
    assert sep.rows == 6


@pytest.mark.parametrize(
    ("family", "y_value", "start"),
    [
        ("logistic", 0.0, "No events"),
        ("logistic", 1.0, "Every row is an event"),
        ("risk_ratio", 0.0, "No events"),
        ("risk_ratio", 2.0, "All outcomes are the same"),
    ],
)
def test_outcomes_all_the_same(family: str, y_value: float, start: str) -> None:
    X = _design(50, 17)
    fit, params = fit_glm(X, np.full(50, y_value), family, column_names=NAMES, terms=())
    assert not fit.ok
    assert params is None
    assert fit.message.startswith(start)


def test_outcome_not_zero_one_for_logistic() -> None:
    X = _design(50, 18)
    y = np.arange(50) % 3.0
    fit, _ = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    assert "coded 0/1" in fit.message
    assert "2" in fit.message


def test_constant_column() -> None:
    X = _design(80, 19)
    X[:, 3] = 27.5
    y = (np.random.default_rng(20).random(80) < 0.4).astype(float)
    fit, _ = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    assert not fit.ok
    assert fit.message.startswith("Constant column: bmi (always 27.5)")


def test_fewer_rows_than_parameters() -> None:
    X = _design(4, 21)
    fit, _ = fit_glm(X, np.array([0, 1, 0, 1.0]), "logistic", column_names=NAMES, terms=())
    assert not fit.ok
    assert fit.message.startswith("Only 4 rows for 4 parameters")


def test_non_convergence_is_flagged() -> None:
    X = _design(500, 22)
    y = (np.random.default_rng(23).random(500) < 0.3).astype(float)
    fit, params = fit_glm(X, y, "logistic", column_names=NAMES, terms=(), max_iter=1)
    assert fit.ok
    assert not fit.converged
    assert params is not None
    assert fit.message.startswith("The fit did not converge after 1 iterations")
    assert fit.message in fit.warnings


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_rank_deficiency_names_the_columns(family: str) -> None:
    X = _design(120, 24)
    X = np.column_stack([X, 2 * X[:, 2] - X[:, 3]])
    names = [*NAMES, "score"]
    y = (np.random.default_rng(25).random(120) < 0.4).astype(float)
    fit, params = fit_glm(X, y, family, column_names=names, terms=())
    assert not fit.ok
    assert params is None
    assert "score is an exact linear combination of age, bmi" in fit.message


def test_dummies_that_sum_to_the_intercept() -> None:
    rng = np.random.default_rng(26)
    group = rng.integers(0, 2, 100).astype(float)
    X = np.column_stack([np.ones(100), rng.normal(size=100), group, 1 - group])
    y = (rng.random(100) < 0.5).astype(float)
    names = ["(intercept)", "exposure", "sex_f", "sex_m"]
    fit, _ = fit_glm(X, y, "logistic", column_names=names, terms=())
    assert "sex_m is an exact linear combination of (intercept), sex_f" in fit.message


def test_bad_offset() -> None:
    X = _design(50, 27)
    y = np.random.default_rng(28).poisson(2.0, 50).astype(float)
    offset = np.r_[-np.inf, np.zeros(49)]  # the log of a zero person-time
    fit, _ = fit_glm(X, y, "risk_ratio", column_names=NAMES, terms=(), offset=offset)
    assert "offset must be a finite log person-time" in fit.message
    fit, _ = fit_glm(X, (y > 1) * 1.0, "logistic", column_names=NAMES, terms=(), offset=y)
    assert "offset is only used" in fit.message


def test_few_events_per_parameter_is_a_caution() -> None:
    X = _design(200, 29)
    y = np.zeros(200)
    y[[3, 50, 90, 120, 160, 199, 11, 77]] = 1.0
    fit, _ = fit_glm(X, y, "logistic", column_names=NAMES, terms=())
    assert fit.ok
    assert any("Peduzzi" in w for w in fit.warnings)


def test_risk_ratio_with_no_events_at_one_level_of_a_covariate() -> None:
    rng = np.random.default_rng(30)
    n = 400
    rare = (rng.random(n) < 0.1).astype(float)
    X = np.column_stack([np.ones(n), rng.integers(0, 2, n), rng.normal(size=n), rare])
    y = np.where(rare == 1, 0.0, (rng.random(n) < 0.3).astype(float))
    fit, params = fit_glm(X, y, "risk_ratio", column_names=[*NAMES[:3], "smoker"], terms=())
    assert fit.ok
    assert params is not None
    assert any(w.startswith("Quasi-complete separation: smoker") for w in fit.warnings)
    assert any("risk ratios run off to infinity" in w for w in fit.warnings)
    assert np.isnan(fit.term_coefs["smoker"][1])
    assert np.isfinite(fit.se)


# ------------------------------------------------------------- the fast path


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_information_and_score_match_statsmodels(family: str) -> None:
    # Reference: statsmodels Logit / Poisson .score and .hessian (= −information).
    X = _design(700, 22)
    rng = np.random.default_rng(23)
    y = (rng.random(700) < 0.3 + 0.2 * X[:, 1]).astype(float)
    b = np.array([-0.8, 0.3, 0.1, -0.2])
    model = sm.Logit(y, X) if family == "logistic" else sm.Poisson(y, X)
    H, g = information_and_score(X, y, family, b)
    np.testing.assert_allclose(H, -model.hessian(b), rtol=1e-12)
    np.testing.assert_allclose(g, model.score(b), rtol=1e-10, atol=1e-12)


def test_checked_fortran_path_matches_statsmodels_at_larger_n() -> None:
    # Reference: statsmodels Logit (tol 1e-12).  Warm-started from the model
    # without bmi, the deviance test alone stops while the last step still moves
    # the standard errors by 3e-8 to 6e-8 at this n; the SE_TOL test takes one
    # more step, so they must agree far better than that.
    n = 20_000
    X = _design(n, 24)
    rng = np.random.default_rng(25)
    eta = -0.4 + 0.8 * X[:, 1] + 0.6 * X[:, 2] - 0.5 * X[:, 3]
    y = (rng.random(n) < 1 / (1 + np.exp(-eta))).astype(float)
    ref = sm.Logit(y, X).fit(disp=0, tol=1e-12)
    start = np.append(newton_glm(X[:, :3], y, "logistic").params, 0.0)
    XF = np.asfortranarray(X)
    fit, params = fit_glm(
        XF,
        y,
        "logistic",
        column_names=NAMES,
        terms=(),
        start=start,
        checked=True,
        scale=X.std(axis=0),
    )
    assert fit.ok
    assert fit.converged
    np.testing.assert_allclose(params, ref.params, rtol=1e-9)
    np.testing.assert_allclose(_all_se(fit), ref.bse[1:], rtol=1e-9)
    plain, plain_params = fit_glm(X, y, "logistic", column_names=NAMES, terms=(), start=start)
    assert plain_params is not None
    np.testing.assert_allclose(plain_params, params, rtol=1e-12)
    assert plain.se == pytest.approx(fit.se, rel=1e-12)


def test_fit_glm_path_returns_the_covariance() -> None:
    # Reference: statsmodels Logit.cov_params on the Spector & Mazzeo data.
    data = sm.datasets.spector.load_pandas()
    X = sm.add_constant(data.exog, prepend=True).to_numpy(float)
    y = data.endog.to_numpy(float)
    ref = sm.Logit(y, X).fit(disp=0, tol=1e-12)
    fit, path = fit_glm_path(
        X, y, "logistic", column_names=["const", "GPA", "TUCE", "PSI"], terms=(), exposure_index=3
    )
    assert path is not None
    assert path.cov is not None
    np.testing.assert_allclose(path.cov, ref.cov_params(), rtol=1e-7)
    assert fit.se == pytest.approx(math.sqrt(path.cov[3, 3]))
