"""E-values (VanderWeele & Ding 2017) and the conversions to a risk ratio."""

from __future__ import annotations

import math

import pytest

from covariscope.analysis.evalue import as_risk_ratio, evalue, evalue_for_estimate


def _formula(rr: float) -> float:
    # E = RR + sqrt(RR × (RR − 1)), written out here independently of the module.
    rr = max(rr, 1 / rr)
    return rr + math.sqrt(rr * (rr - 1))


def test_worked_example_of_vanderweele_and_ding_2017():
    # VanderWeele & Ding (2017), Annals of Internal Medicine 167:268: RR 3.9 (CI lower
    # limit 1.8) gives E-values 7.26 and 3.00 — from memory, and checked by the formula.
    e = evalue_for_estimate(3.9, (1.8, 8.7), "risk ratio")
    assert e.estimate == pytest.approx(7.26, abs=0.005)
    assert e.ci == pytest.approx(3.00, abs=0.005)
    assert e.estimate == pytest.approx(_formula(3.9))
    assert e.ci == pytest.approx(_formula(1.8))
    assert "as it is" in e.conversion


def test_protective_estimate_is_inverted_and_uses_the_upper_limit():
    e = evalue_for_estimate(1 / 3.9, (1 / 8.7, 1 / 1.8), "risk ratio")
    assert e.estimate == pytest.approx(_formula(3.9))
    assert e.ci == pytest.approx(_formula(1.8))


def test_interval_covering_the_null_gives_one():
    e = evalue_for_estimate(1.3, (0.9, 1.8), "risk ratio")
    assert e.ci == 1.0
    assert e.estimate == pytest.approx(_formula(1.3))
    assert evalue(1.0) == 1.0


def test_odds_ratio_common_outcome_uses_the_square_root():
    # VanderWeele (2017), Epidemiology 28:e58: RR ≈ √OR for a common outcome.
    rr, how = as_risk_ratio(2.25, "odds ratio", common_outcome=True)
    assert rr == pytest.approx(1.5)
    assert "square root" in how
    rr, how = as_risk_ratio(2.25, "odds ratio", common_outcome=False)
    assert rr == 2.25
    assert "rare" in how


def test_hazard_ratio_common_outcome_conversion():
    hr = 2.0
    expected = (1 - 0.5 ** math.sqrt(hr)) / (1 - 0.5 ** math.sqrt(1 / hr))
    rr, _how = as_risk_ratio(hr, "hazard ratio", common_outcome=True)
    assert rr == pytest.approx(expected)
    assert rr == pytest.approx(1.613, abs=0.001)  # worked by hand from the formula
    assert as_risk_ratio(1.0, "hazard ratio", common_outcome=True)[0] == pytest.approx(1.0)
    assert as_risk_ratio(hr, "hazard ratio")[0] == hr


def test_mean_difference_via_standardised_difference():
    # VanderWeele & Ding (2017): RR ≈ exp(0.91 × d), d = difference / SD of the outcome.
    e = evalue_for_estimate(-2.0, (-3.0, -1.0), "mean difference", outcome_sd=4.0)
    assert e.rr == pytest.approx(math.exp(0.91 * -0.5))
    assert e.estimate == pytest.approx(_formula(math.exp(0.91 * 0.5)))
    assert e.ci == pytest.approx(_formula(math.exp(0.91 * 0.25)))
    assert "0.91" in e.conversion
    with pytest.raises(ValueError, match="standard deviation"):
        as_risk_ratio(1.0, "mean difference")


def test_bad_input():
    with pytest.raises(ValueError, match="positive"):
        evalue(0.0)
    with pytest.raises(ValueError, match="unknown"):
        as_risk_ratio(1.2, "odds")


def test_evalue_for_fit_reads_the_conversion_from_the_sample():
    """Common outcome (half the rows have the event): the odds ratio goes
    through its square root (VanderWeele & Ding 2017); the same fit on a rare
    outcome is used as is."""
    import numpy as np
    import pandas as pd

    from covariscope.analysis.design import TermSpec, make_design
    from covariscope.analysis.evalue import evalue, evalue_for_fit
    from covariscope.analysis.fits import Fit

    x = np.tile([0.0, 1.0], 50)
    fit = Fit("logistic", (), math.log(4.0), 0.1, (math.log(3.0), math.log(5.0)), 100)
    for events, expected in ((50, evalue(2.0)), (5, evalue(4.0))):
        y = np.zeros(100)
        y[:events] = 1.0
        design = make_design(
            pd.DataFrame({"x": x, "y": y}),
            exposure=TermSpec("x", "binary"),
            covariates={},
            outcome="y",
            family="logistic",
        )
        value, problem = evalue_for_fit(fit, design, "odds ratio")
        assert problem is None
        assert value is not None
        assert value.estimate == pytest.approx(expected)
