"""Cox proportional hazards fits, checked against statsmodels PHReg."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.duration.hazard_regression import PHReg

from covariscope.analysis.risk_sets import CoxSample
from covariscope.analysis.survival import fit_cox, newton_cox

NAMES = ["exposure", "age", "bmi"]


def _cohort(n: int, seed: int, *, tie_grid: float = 5.0, beta=(0.5, 0.3, -0.2)):
    """Invented cohort; times rounded up to a grid so that many event times tie."""
    rng = np.random.default_rng(seed)
    X = np.column_stack([rng.integers(0, 2, n), rng.normal(size=n), rng.normal(size=n)]).astype(
        float
    )
    t = rng.exponential(1 / np.exp(X @ np.asarray(beta)))
    c = rng.exponential(2.0, n)
    if tie_grid:
        t, c = np.ceil(t * tie_grid), np.ceil(c * tie_grid)
    return X, np.minimum(t, c), (t <= c).astype(float)


def _all_se(fit) -> np.ndarray:
    return np.array([fit.se] + [fit.term_coefs[k][1] for k in NAMES[1:]])


# ----------------------------------------------------------------- agreement


@pytest.mark.parametrize("ties", ["efron", "breslow"])
def test_matches_statsmodels_phreg_with_ties(ties: str) -> None:
    # Reference: statsmodels PHReg(ties="efron" / "breslow") on the same rows.
    X, time, event = _cohort(400, 5)
    ref = PHReg(time, X, status=event, ties=ties).fit()
    fit, params = fit_cox(X, time, event, column_names=NAMES, terms=("age", "bmi"), ties=ties)
    assert fit.ok
    assert fit.converged
    np.testing.assert_allclose(params, ref.params, rtol=1e-9)
    np.testing.assert_allclose(_all_se(fit), ref.bse, rtol=1e-8)
    assert fit.ratio == pytest.approx(np.exp(ref.params[0]), rel=1e-9)
    assert any(ties.capitalize() in w for w in fit.warnings)
    assert CoxSample(X, time, event, ties).loglik(params) == pytest.approx(ref.llf, rel=1e-12)


@settings(max_examples=8, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(40, 250), grid=st.sampled_from([0.0, 2.0]))
def test_matches_statsmodels_phreg_on_random_cohorts(seed: int, n: int, grid: float) -> None:
    # Reference: statsmodels PHReg(ties="efron").
    X, time, event = _cohort(n, seed, tie_grid=grid)
    fit, params = fit_cox(X, time, event, column_names=NAMES, terms=())
    if not fit.ok or (fit.term_coefs and any(np.isnan(v[0]) for v in fit.term_coefs.values())):
        return  # tiny cohorts may have no events in a group; the failure tests cover that
    ref = PHReg(time, X, status=event, ties="efron").fit()
    np.testing.assert_allclose(params, ref.params, rtol=1e-7, atol=1e-10)
    np.testing.assert_allclose(_all_se(fit), ref.bse, rtol=1e-6)


def test_no_tie_note_without_ties() -> None:
    X, time, event = _cohort(200, 6, tie_grid=0.0)
    fit, _ = fit_cox(X, time, event, column_names=NAMES, terms=())
    assert not any("tied" in w for w in fit.warnings)


# ----------------------------------------------------------------- warm starts


def test_warm_start_reaches_the_same_answer_in_fewer_iterations() -> None:
    # The model without bmi, started from the full fit's one-step update
    # (b_K − V_KD V_DD⁻¹ b_D, V the full model's inverse information), as the
    # evidence engine starts every "full − C" model.
    X, time, event = _cohort(1500, 7, beta=(1.2, 1.0, -0.1))
    full = newton_cox(X, time, event)
    assert full.cov is not None
    V, b = full.cov, full.params
    start = b[:2] - V[:2, 2] / V[2, 2] * b[2]
    cold = newton_cox(X[:, :2], time, event)
    warm = newton_cox(X[:, :2], time, event, start=start)
    assert cold.converged
    assert warm.converged
    assert warm.iterations < cold.iterations
    np.testing.assert_allclose(warm.params, cold.params, rtol=1e-9)
    names = NAMES[:2]
    fit_cold, _ = fit_cox(X[:, :2], time, event, column_names=names, terms=())
    fit_warm, _ = fit_cox(X[:, :2], time, event, column_names=names, terms=(), start=start)
    assert fit_warm.coef == pytest.approx(fit_cold.coef, rel=1e-9)
    assert fit_warm.se == pytest.approx(fit_cold.se, rel=1e-8)


# ----------------------------------------------------------------- failures


def test_no_events() -> None:
    X, time, _ = _cohort(50, 8)
    fit, params = fit_cox(X, time, np.zeros(50), column_names=NAMES, terms=())
    assert not fit.ok
    assert params is None
    assert fit.message.startswith("No events")


def test_event_codes_must_be_zero_one() -> None:
    X, time, _ = _cohort(50, 9)
    fit, _ = fit_cox(X, time, np.full(50, 2.0), column_names=NAMES, terms=())
    assert "coded 1 (event) or 0 (censored)" in fit.message


def test_constant_column() -> None:
    X, time, event = _cohort(80, 10)
    X[:, 2] = 1.0
    fit, _ = fit_cox(X, time, event, column_names=NAMES, terms=())
    assert fit.message.startswith("Constant column: bmi (always 1)")


def test_fewer_rows_than_parameters() -> None:
    X, time, event = _cohort(3, 11)
    event[:] = 1.0
    fit, _ = fit_cox(X, time, event, column_names=NAMES, terms=())
    assert fit.message.startswith("Only 3 rows for 3 parameters")


def test_rank_deficiency_names_the_columns() -> None:
    X, time, event = _cohort(150, 12)
    X = np.column_stack([X, X[:, 1] + 3 * X[:, 2] + 1.0])
    fit, params = fit_cox(X, time, event, column_names=[*NAMES, "index"], terms=())
    assert not fit.ok
    assert params is None
    assert "index is an exact linear combination of age, bmi" in fit.message


def test_non_convergence_is_flagged() -> None:
    X, time, event = _cohort(300, 13)
    fit, params = fit_cox(X, time, event, column_names=NAMES, terms=(), max_iter=1)
    assert fit.ok
    assert not fit.converged
    assert params is not None
    assert fit.message.startswith("The fit did not converge after 1 iterations")


def test_no_events_in_the_exposed_group_fails() -> None:
    X, time, event = _cohort(200, 14)
    event[X[:, 0] == 1] = 0.0
    fit, params = fit_cox(X, time, event, column_names=NAMES, terms=())
    assert not fit.ok
    assert params is None
    assert fit.message.startswith("Monotone likelihood: the hazard ratio of exposure")


def test_no_events_in_a_covariate_group_leaves_it_blank() -> None:
    X, time, event = _cohort(300, 15)
    rng = np.random.default_rng(16)
    rare = (rng.random(300) < 0.1).astype(float)
    event[rare == 1] = 0.0
    X = np.column_stack([X, rare])
    fit, params = fit_cox(X, time, event, column_names=[*NAMES, "smoker"], terms=())
    assert fit.ok
    assert params is not None
    assert any("Monotone likelihood: the hazard ratio of smoker" in w for w in fit.warnings)
    assert np.isnan(fit.term_coefs["smoker"][0])
    assert np.isfinite(fit.coef)
