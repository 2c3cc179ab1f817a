"""The collinearity picture's numbers: every fit keeps its coefficient
covariance (checked against statsmodels for each family), the joint region's
axes are the eigen-decomposition of the 2 × 2 covariance block, and the sum's
standard error is √(a'Va)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import scipy.stats
import statsmodels.api as sm
from statsmodels.duration.hazard_regression import PHReg

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine
from covariscope.analysis.joint_region import collinearity_picture, collinearity_pictures


def _cohort(n: int = 1500, seed: int = 3) -> pd.DataFrame:
    """Two near-duplicate measures of one confounder (z1, z2 = −2·z1 + noise)."""
    rng = np.random.default_rng(seed)
    z1 = rng.normal(size=n)
    z2 = -2.0 * z1 + 0.3 * rng.normal(size=n)
    x = 0.5 * z1 + rng.normal(size=n)
    lin = 0.4 * x + 0.3 * z1 - 0.1 * z2
    y = lin + rng.normal(size=n)
    yb = (rng.random(n) < 1 / (1 + np.exp(-(lin - 0.5)))).astype(float)
    t = rng.exponential(1 / np.exp(0.5 * lin))
    c = rng.exponential(2.0, n)
    return pd.DataFrame(
        {"x": x, "z1": z1, "z2": z2, "y": y, "yb": yb, "t": np.minimum(t, c), "d": (t <= c) * 1.0}
    )


def _engine(frame: pd.DataFrame, family: str) -> EvidenceEngine:
    outcome = {"linear": "y", "logistic": "yb", "risk_ratio": "yb", "cox": None}[family]
    design = make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={"z1": TermSpec("z1", "continuous"), "z2": TermSpec("z2", "continuous")},
        outcome=outcome,
        family=family,
        time="t" if family == "cox" else None,
        event="d" if family == "cox" else None,
    )
    return EvidenceEngine(design)


def _reference_cov(frame: pd.DataFrame, family: str) -> np.ndarray:
    X = frame[["x", "z1", "z2"]]
    if family == "cox":
        # Reference: statsmodels PHReg, Efron ties (no intercept in a Cox model).
        return np.asarray(PHReg(frame["t"], X, status=frame["d"], ties="efron").fit().cov_params())
    Xc = sm.add_constant(X)
    if family == "linear":
        ref = sm.OLS(frame["y"], Xc).fit()  # Reference: statsmodels OLS
    elif family == "logistic":
        ref = sm.Logit(frame["yb"], Xc).fit(disp=0)  # Reference: statsmodels Logit
    else:
        # Reference: statsmodels GLM(Poisson) with cov_type="HC0" (Zou 2004's modified Poisson).
        ref = sm.GLM(frame["yb"], Xc, family=sm.families.Poisson()).fit(cov_type="HC0")
    return np.asarray(ref.cov_params())[1:, 1:]


@pytest.mark.parametrize("family", ["linear", "logistic", "risk_ratio", "cox"])
def test_fit_keeps_the_coefficient_covariance(family: str) -> None:
    frame = _cohort()
    fit = _engine(frame, family).fit(["z1", "z2"])
    assert fit.cov_columns == ("x", "z1", "z2")
    np.testing.assert_allclose(fit.cov, _reference_cov(frame, family), rtol=1e-6, atol=1e-12)
    block = fit.covariance(("z2", "z1"))
    assert block is not None
    assert block[0, 1] == pytest.approx(fit.cov[1, 2])
    assert fit.coefficient("x") == fit.coef


@pytest.mark.parametrize("family", ["linear", "cox"])
def test_ellipse_axes_are_the_eigen_decomposition_of_the_block(family: str) -> None:
    frame = _cohort()
    fit = _engine(frame, family).fit(["z1", "z2"])
    pic = collinearity_picture(fit, [("z1", "z1"), ("z2", "z2")])
    assert pic is not None
    region = pic.pairs[0]
    V = _reference_cov(frame, family)[1:, 1:]
    values, vectors = np.linalg.eigh(V)
    # 2·F(2, df) for a linear model, χ²(2) otherwise (Draper & Smith 1998, §5.5)
    crit = (
        2 * scipy.stats.f.ppf(0.95, 2, fit.df_resid)
        if family == "linear"
        else scipy.stats.chi2.ppf(0.95, 2)
    )
    assert region.critical == pytest.approx(crit)
    np.testing.assert_allclose(region.axes, np.sqrt(crit * values[::-1]), rtol=1e-6)
    for k, col in enumerate((1, 0)):  # major axis first
        # an eigenvector is defined up to its sign
        assert abs(np.dot(region.directions[k], vectors[:, col])) == pytest.approx(1.0, abs=1e-9)
    # every outline point lies on the ellipse (b − b̂)' V⁻¹ (b − b̂) = crit
    diff = np.asarray(region.outline) - np.asarray(region.center)
    q = np.einsum("ij,jk,ik->i", diff, np.linalg.inv(V), diff)
    np.testing.assert_allclose(q, crit, rtol=1e-6)
    assert region.correlation == pytest.approx(V[0, 1] / math.sqrt(V[0, 0] * V[1, 1]))
    # collinear measures: a long, thin ellipse
    assert region.axes[0] > 5 * region.axes[1]


def test_sum_standard_error_is_the_linear_combination_formula() -> None:
    frame = _cohort()
    engine = _engine(frame, "linear")
    fit = engine.fit(["z1", "z2"])
    (pic,) = collinearity_pictures(fit, engine.design, [("z1", "z2")])
    # a = (SD of z1, −SD of z2): z2 falls as z1 rises, so they move together with opposite signs
    sd = frame[["z1", "z2"]].std(ddof=0).to_numpy()
    a = np.array([sd[0], -sd[1]])
    np.testing.assert_allclose(pic.scale, a, rtol=1e-12)
    ref = sm.OLS(frame["y"], sm.add_constant(frame[["x", "z1", "z2"]])).fit()
    V = np.asarray(ref.cov_params())[2:, 2:]
    b = np.asarray(ref.params)[2:]
    assert pic.total.estimate == pytest.approx(a @ b, rel=1e-9)
    assert pic.total.se == pytest.approx(math.sqrt(a @ V @ a), rel=1e-7)
    t = scipy.stats.t.ppf(0.975, ref.df_resid)
    assert pic.total.ci[0] == pytest.approx(a @ b - t * math.sqrt(a @ V @ a), rel=1e-7)
    # what they carry together is far better determined than either share
    assert pic.total.width_ratio > 3
    own_se = [o[1] for o in pic.total.own]
    np.testing.assert_allclose(own_se, np.abs(a) * np.sqrt(np.diag(V)), rtol=1e-7)


def test_raw_scale_sum_is_the_plain_sum() -> None:
    frame = _cohort()
    fit = _engine(frame, "logistic").fit(["z1", "z2"])
    pic = collinearity_picture(fit, [("z1", "z1"), ("z2", "z2")])
    assert pic is not None
    assert not pic.per_sd
    V = fit.covariance(("z1", "z2"))
    assert pic.total.se == pytest.approx(math.sqrt(np.ones(2) @ V @ np.ones(2)))


def test_exposure_alias_and_unusable_members() -> None:
    frame = _cohort()
    engine = _engine(frame, "linear")
    fit = engine.fit(["z1", "z2"])
    pics = collinearity_pictures(fit, engine.design, [], exposure_aliases=["z1"])
    assert [p.members for p in pics] == [("x", "z1")]
    # a model without the members, or a failed one, gives no picture
    assert collinearity_picture(engine.fit(["z1"]), [("z1", "z1"), ("z2", "z2")]) is None
    assert collinearity_picture(fit, [("z1", "z1")]) is None
