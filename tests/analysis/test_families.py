"""The GLM links of the model families against statsmodels' own families.

Reference: statsmodels.genmod.families (Binomial with the logit link, Poisson
with the log link): their deviance, mean and IRLS weight at the same linear
predictor.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm

from covariscope.analysis.families import FAMILIES, Fitter, family_of


def _eta_y(binary: bool) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(11)
    eta = rng.normal(scale=2.0, size=200) + (0.0 if binary else 0.5)
    y = (rng.random(200) < 0.4).astype(float) if binary else rng.poisson(2.0, 200).astype(float)
    return eta, y


def test_logit_link_matches_the_binomial_family():
    eta, y = _eta_y(binary=True)
    link = family_of("logistic").glm
    ref = sm.families.Binomial()
    mu = ref.link.inverse(eta)
    dev, resid, w, low, high = link.block_sums(y, eta)
    assert dev == pytest.approx(ref.deviance(y, mu), rel=1e-10)
    np.testing.assert_allclose(resid, y - mu, rtol=1e-12)
    np.testing.assert_allclose(w, mu * (1 - mu), rtol=1e-10)
    assert low == pytest.approx(min(mu.min(), (1 - mu).min()), rel=1e-10)
    assert high == pytest.approx(mu.max(), rel=1e-12)
    batch_dev, batch_mu, batch_w, _ = link.batch_sums(y, eta, False)
    assert batch_dev == pytest.approx(dev, rel=1e-12)
    np.testing.assert_allclose(batch_mu, mu, rtol=1e-12)
    np.testing.assert_allclose(batch_w, w, rtol=1e-12)
    # the null model's intercept is the log odds of the mean
    assert link.start_intercept(0.25, 50.0, 200.0) == pytest.approx(math.log(1 / 3))


def test_poisson_link_matches_the_poisson_family():
    eta, y = _eta_y(binary=False)
    link = family_of("risk_ratio").glm
    ref = sm.families.Poisson()
    mu = ref.link.inverse(eta)
    dev, resid, w, _, _ = link.block_sums(y, eta)
    # the pass leaves the outcome-only part Σ y log y − y to be added once
    assert dev + 2.0 * link.saturated(y) == pytest.approx(ref.deviance(y, mu), rel=1e-10)
    np.testing.assert_allclose(resid, y - mu, rtol=1e-12)
    np.testing.assert_allclose(w, mu, rtol=1e-12)
    batch_dev, _, _, _ = link.batch_sums(y, eta, True)
    assert batch_dev == pytest.approx(ref.deviance(y, mu), rel=1e-10)
    assert link.start_intercept(2.0, 400.0, 100.0) == pytest.approx(math.log(4.0))


def test_only_glm_families_have_a_link():
    for f in FAMILIES:
        if f.fitter is Fitter.GLM:
            assert f.glm is f.link
        else:
            with pytest.raises(ValueError, match="not a generalised linear model"):
                _ = f.glm
