"""Effect modification: stratum estimates are linear combinations of the
interaction model (checked against statsmodels fits of the same model), the
interaction test is statsmodels' Wald test, RERI follows Hosmer & Lemeshow
(1992), and a planted modifier is flagged while a planted pure confounder is not."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.duration.hazard_regression import PHReg

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.modification import effect_modification, reri


def _cohort(n: int = 3000, seed: int = 11) -> pd.DataFrame:
    """x binary; m modifies x's effect; c confounds only; g three-level; w continuous."""
    rng = np.random.default_rng(seed)
    c = rng.normal(size=n)
    m = rng.integers(0, 2, n)
    g = rng.choice(["a", "b", "c"], n)
    w = rng.normal(size=n)
    x = (rng.random(n) < 1 / (1 + np.exp(-0.8 * c))).astype(float)
    lin = -1.0 + 0.3 * x + 0.9 * x * m + 0.4 * m + 0.5 * c + 0.2 * w
    y = lin + rng.normal(size=n)
    yb = (rng.random(n) < 1 / (1 + np.exp(-lin))).astype(float)
    t = rng.exponential(1 / np.exp(0.6 * lin))
    cens = rng.exponential(3.0, n)
    return pd.DataFrame(
        {
            "x": x,
            "m": m,
            "c": c,
            "g": g,
            "w": w,
            "y": y,
            "yb": yb,
            "t": np.minimum(t, cens),
            "d": (t <= cens) * 1.0,
        }
    )


def _design(frame: pd.DataFrame, family: str):
    outcome = {"linear": "y", "logistic": "yb", "risk_ratio": "yb", "cox": None}[family]
    return make_design(
        frame,
        exposure=TermSpec("x", "binary"),
        covariates={
            "c": TermSpec("c", "continuous"),
            "m": TermSpec("m", "binary"),
            "g": TermSpec("g", "categorical"),
            "w": TermSpec("w", "continuous"),
        },
        outcome=outcome,
        family=family,
        time="t" if family == "cox" else None,
        event="d" if family == "cox" else None,
    )


def _reference(frame: pd.DataFrame, family: str, formula_rhs: str):
    if family == "cox":
        # Reference: statsmodels PHReg (Efron ties) from a formula.
        return PHReg.from_formula(f"t ~ {formula_rhs}", frame, status=frame["d"]).fit()
    if family == "linear":
        return smf.ols(f"y ~ {formula_rhs}", frame).fit()  # Reference: statsmodels OLS
    if family == "logistic":
        return smf.logit(f"yb ~ {formula_rhs}", frame).fit(disp=0)  # Reference: statsmodels Logit
    # Reference: statsmodels GLM(Poisson) with HC0 (modified Poisson, Zou 2004).
    return smf.glm(f"yb ~ {formula_rhs}", frame, family=sm.families.Poisson()).fit(cov_type="HC0")


@pytest.mark.parametrize("family", ["linear", "logistic", "risk_ratio", "cox"])
def test_binary_modifier_strata_match_the_interaction_model(family: str) -> None:
    frame = _cohort()
    mod = effect_modification(_design(frame, family), ["c"], "m")
    ref = _reference(frame, family, "c + x * m")
    names = list(ref.model.exog_names)
    ix, ixm = names.index("x"), names.index("x:m")
    V = np.asarray(ref.cov_params())
    b = np.asarray(ref.params)
    # stratum m = 0: b_x; m = 1: b_x + b_{x:m}
    assert mod.form == "model"
    assert mod.strata[0].coef == pytest.approx(b[ix], rel=1e-6)
    assert mod.strata[0].se == pytest.approx(math.sqrt(V[ix, ix]), rel=1e-5)
    assert mod.strata[1].coef == pytest.approx(b[ix] + b[ixm], rel=1e-6)
    se1 = math.sqrt(V[ix, ix] + V[ixm, ixm] + 2 * V[ix, ixm])
    assert mod.strata[1].se == pytest.approx(se1, rel=1e-5)
    assert [s.n for s in mod.strata] == [int((frame.m == 0).sum()), int((frame.m == 1).sum())]
    # the interaction test: statsmodels' Wald test of the product term
    wald = ref.wald_test("x:m = 0", scalar=True, use_f=family == "linear")
    assert mod.interaction_stat == pytest.approx(float(wald.statistic), rel=1e-5)
    assert mod.interaction_p == pytest.approx(float(wald.pvalue), rel=1e-4, abs=1e-12)
    assert mod.interaction_p < 0.05  # the planted modifier
    # planted on the logit scale: on the risk-ratio scale the strata differ by less than the guide
    assert mod.flagged == (family != "risk_ratio")
    if family == "linear":
        assert mod.reri is None
    else:
        im = names.index("m")
        idx = [ix, im, ixm]
        expected, _, ci = reri(b[idx], V[np.ix_(idx, idx)])
        assert mod.reri == pytest.approx(expected, rel=1e-5)
        assert mod.reri_ci == pytest.approx(ci, rel=1e-4)


def test_pure_confounder_is_not_flagged() -> None:
    frame = _cohort()
    mod = effect_modification(_design(frame, "linear"), ["c", "m"], "c")
    assert mod.kind == "quartiles"
    assert len(mod.strata) == 3
    assert not mod.flagged
    # continuous modifier: the effect at each quartile is b_x + b_{x:c}·q
    ref = _reference(frame, "linear", "m + x * c")
    q = np.quantile(frame["c"], [0.25, 0.5, 0.75])
    for s, v in zip(mod.strata, q, strict=True):
        assert s.coef == pytest.approx(ref.params["x"] + ref.params["x:c"] * v, rel=1e-6)
    assert sum(s.n for s in mod.strata) == len(frame)


def test_categorical_modifier_has_one_stratum_per_level_and_a_joint_test() -> None:
    frame = _cohort()
    mod = effect_modification(_design(frame, "logistic"), ["c"], "g")
    ref = _reference(frame, "logistic", "c + x * C(g)")
    assert [s.level for s in mod.strata] == ["a (reference)", "b", "c"]
    assert mod.strata[2].coef == pytest.approx(
        ref.params["x"] + ref.params["x:C(g)[T.c]"], rel=1e-6
    )
    wald = ref.wald_test("x:C(g)[T.b] = 0, x:C(g)[T.c] = 0", scalar=True)
    assert mod.interaction_df == 2
    assert mod.interaction_stat == pytest.approx(float(wald.statistic), rel=1e-5)
    assert mod.reri is None  # RERI needs a binary modifier


def test_reri_on_a_saturated_model_equals_the_cross_product_ratios() -> None:
    # Reference: with a saturated logistic model of two binary factors, RERI is
    # OR11 − OR10 − OR01 + 1 with each OR the cross-product ratio of the 2 × 2
    # table against the doubly unexposed cell (Rothman, Modern Epidemiology,
    # 3rd ed., ch. 5); the delta-method SE is Hosmer & Lemeshow's (1992)
    # formula, computed here from the gradient written out by hand.
    counts = {(0, 0): (20, 80), (1, 0): (30, 70), (0, 1): (25, 75), (1, 1): (60, 40)}
    rows = [
        {"x": a, "m": b, "yb": 1.0 if k < cases else 0.0}
        for (a, b), (cases, controls) in counts.items()
        for k in range(cases + controls)
    ]
    frame = pd.DataFrame(rows)
    design = make_design(
        frame,
        exposure=TermSpec("x", "binary"),
        covariates={"m": TermSpec("m", "binary")},
        outcome="yb",
        family="logistic",
    )
    mod = effect_modification(design, [], "m")

    def odds(cell):
        cases, controls = counts[cell]
        return cases / controls

    or10, or01, or11 = (odds(c) / odds((0, 0)) for c in ((1, 0), (0, 1), (1, 1)))
    assert mod.reri == pytest.approx(or11 - or10 - or01 + 1, rel=1e-8)
    # Var(log OR) terms from the cell counts (Woolf): the saturated model's covariance
    inv = {cell: 1 / a + 1 / b for cell, (a, b) in counts.items()}
    # b1 = L10 − L00, b2 = L01 − L00, b3 = L11 − L10 − L01 + L00 (cell log odds, independent)
    i00, i10, i01, i11 = inv[(0, 0)], inv[(1, 0)], inv[(0, 1)], inv[(1, 1)]
    V = np.array(
        [
            [i00 + i10, i00, -i00 - i10],
            [i00, i00 + i01, -i00 - i01],
            [-i00 - i10, -i00 - i01, i00 + i10 + i01 + i11],
        ]
    )
    b1, b2 = math.log(or10), math.log(or01)
    b3 = math.log(or11) - b1 - b2
    g = np.array([or11 - or10, or11 - or01, or11])
    se = math.sqrt(g @ V @ g)
    assert (mod.reri_ci[1] - mod.reri_ci[0]) / (2 * 1.959963984540054) == pytest.approx(
        se, rel=1e-6
    )
    assert mod.strata[1].coef == pytest.approx(b1 + b3, rel=1e-8)


def test_reri_of_a_published_rate_table() -> None:
    # Reference: a published table used to teach additive interaction. Gordis,
    # *Epidemiology*, Table 15.15 (edition not checked), lung-cancer deaths per
    # 100,000 by cigarette smoking and asbestos exposure, modified from Hammond,
    # Selikoff & Seidman (1979): neither 11.3, asbestos only 58.4, smoking only
    # 122.6, both 601.6. Additivity would give 11.3 + 47.1 + 111.3 = 169.7 for
    # both (computed here). The source gives rates, not counts, so it checks the
    # point estimate only: RERI = RR11 − RR10 − RR01 + 1 = (601.6 − 169.7) / 11.3.
    # The person-time (1,000,000 per cell, in ten rows) is ours; a saturated
    # Poisson rate model reproduces the cell rates whatever it is.
    rates = {(0, 0): 11.3, (0, 1): 58.4, (1, 0): 122.6, (1, 1): 601.6}  # (smoking, asbestos)
    rows = []
    for (smoke, asbestos), rate in rates.items():
        deaths = round(rate * 10)  # per 1,000,000 person-years
        share = [deaths // 10 + (1 if k < deaths % 10 else 0) for k in range(10)]
        rows += [
            {"smoke": smoke, "asbestos": asbestos, "deaths": d, "log_py": math.log(1e5)}
            for d in share
        ]
    design = make_design(
        pd.DataFrame(rows),
        exposure=TermSpec("smoke", "binary"),
        covariates={"asbestos": TermSpec("asbestos", "binary")},
        outcome="deaths",
        family="risk_ratio",
        offset="log_py",
    )
    mod = effect_modification(design, [], "asbestos")
    expected_under_additivity = 11.3 + (58.4 - 11.3) + (122.6 - 11.3)
    assert expected_under_additivity == pytest.approx(169.7)
    assert mod.reri == pytest.approx((601.6 - expected_under_additivity) / 11.3, rel=1e-8)
    # the stratum rate ratios of smoking: 122.6 / 11.3 without asbestos, 601.6 / 58.4 with it
    assert [s.ratio for s in mod.strata] == pytest.approx([122.6 / 11.3, 601.6 / 58.4], rel=1e-8)


@pytest.mark.parametrize("values", ["whole numbers", "continuous"])
def test_quartile_strata_count_rows_nearest_each_quartile_lower_on_a_tie(values: str) -> None:
    # Reference: the direct count, argmin of the n × 3 distances (numpy takes the
    # first of equal minima); whole numbers put many rows exactly between two quartiles.
    rng = np.random.default_rng(3)
    n = 3000
    m = rng.integers(0, 9, n).astype(float) if values == "whole numbers" else rng.normal(size=n)
    x = rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "m": m, "y": x + m + rng.normal(size=n)})
    design = make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={"m": TermSpec("m", "continuous")},
        outcome="y",
        family="linear",
    )
    q = np.quantile(m, [0.25, 0.5, 0.75])
    nearest = np.argmin(np.abs(m[:, None] - q[None, :]), axis=1)
    expected = [int((nearest == k).sum()) for k in range(3)]
    assert [s.n for s in effect_modification(design, [], "m").strata] == expected
