"""Comparison models and the evidence table, checked against direct statsmodels fits."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from statsmodels.stats.outliers_influence import variance_inflation_factor

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import (
    EvidenceCancelledError,
    EvidenceEngine,
    compare,
    compute_evidence,
)
from covariscope.analysis.fits import Fit

CONT = "continuous"


def _frame(seed, n=120, missing=0.0):
    rng = np.random.default_rng(seed)
    z1 = rng.normal(size=n)
    g = rng.choice(["a", "b", "c", "d"], size=n)
    x = 0.6 * z1 + (g == "b") + rng.normal(size=n)
    z2 = rng.normal(size=n) + 0.3 * x
    y = 1.0 + 0.5 * x + z1 - 0.7 * (g == "c") + 0.4 * z2 + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "z1": z1, "g": g, "z2": z2, "y": y})
    if missing:
        for col in ("z1", "z2", "y"):
            frame.loc[rng.random(n) < missing, col] = np.nan
    return frame


SPECS = {
    "z1": TermSpec("z1", CONT),
    "g": TermSpec("g", "categorical", reference="a"),
    "z2": TermSpec("z2", CONT),
}


def _engine(frame, family="linear", **kw):
    d = make_design(
        frame, exposure=TermSpec("x", CONT), covariates=SPECS, outcome="y", family=family, **kw
    )
    return EvidenceEngine(d, family)


def _formula(terms):
    parts = ["x"] + [("C(g, Treatment('a'))" if t == "g" else t) for t in terms]
    return "y ~ " + " + ".join(parts)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    seed=st.integers(0, 10_000),
    terms=st.lists(st.sampled_from(["z1", "g", "z2"]), unique=True),
)
def test_every_linear_fit_equals_direct_statsmodels_ols(seed, terms):
    # Outside source: statsmodels OLS fitted on the same complete-case rows.
    frame = _frame(seed, missing=0.05).dropna()
    engine = _engine(frame)
    fit = engine.fit(terms)
    ref = smf.ols(_formula(terms), data=frame).fit()
    assert fit.ok
    assert fit.coef == pytest.approx(ref.params["x"], rel=1e-9, abs=1e-12)
    assert fit.se == pytest.approx(ref.bse["x"], rel=1e-9)
    assert fit.ci == pytest.approx(tuple(ref.conf_int().loc["x"]), rel=1e-9, abs=1e-12)
    assert fit.resid_sd == pytest.approx(math.sqrt(ref.scale), rel=1e-9)
    assert fit.df_resid == ref.df_resid
    assert fit.n == ref.nobs
    for name, (b, se, _, _) in fit.term_coefs.items():
        ref_name = name.replace("g[", "C(g, Treatment('a'))[T.")
        assert b == pytest.approx(ref.params[ref_name], rel=1e-9, abs=1e-12)
        assert se == pytest.approx(ref.bse[ref_name], rel=1e-9)


def _table(seed=0, **kw):
    engine = _engine(_frame(seed))
    return engine, compute_evidence(engine, candidates=["z1", "g"], added=["z1", "g", "z2"], **kw)


def test_evidence_formulas_and_statsmodels_vifs():
    _, table = _table(sets={"proposed": ["z1"]})
    frame = _frame(0)
    crude = smf.ols("y ~ x", data=frame).fit()
    with_z1 = smf.ols("y ~ x + z1", data=frame).fit()
    ev = table.covariates["z1"]
    b_w, b_wo = with_z1.params["x"], crude.params["x"]
    assert ev.added.change_pct == pytest.approx(100 * (b_w - b_wo) / abs(b_wo), rel=1e-9)
    assert ev.added.se_inflation_pct == pytest.approx(
        100 * (with_z1.bse["x"] / crude.bse["x"] - 1), rel=1e-8
    )
    assert ev.added.change_pct_ratio is None
    # Outside source: statsmodels variance_inflation_factor with a constant column.
    exog = sm.add_constant(frame[["x", "z1"]].to_numpy())
    assert ev.vif_exposure_added == pytest.approx(variance_inflation_factor(exog, 1), rel=1e-9)
    assert ev.r2_exposure == pytest.approx(1 - 1 / ev.vif_exposure_added)
    full = pd.get_dummies(frame[["x", "z1", "g"]], columns=["g"], drop_first=True, dtype=float)
    full_exog = sm.add_constant(full.to_numpy())
    assert ev.vif == pytest.approx(variance_inflation_factor(full_exog, 2), rel=1e-9)
    assert ev.tolerance == pytest.approx(1 / ev.vif)
    assert ev.aux_r2 == pytest.approx(1 - 1 / ev.vif)
    assert ev.gvif == pytest.approx(ev.vif)
    assert ev.own_coef == pytest.approx(with_z1.params["z1"], rel=1e-9)
    assert ev.own_ci == pytest.approx(tuple(with_z1.conf_int().loc["z1"]), rel=1e-9)
    g = table.covariates["g"]
    assert g.df == 3
    assert g.gvif_root == pytest.approx(g.gvif ** (1 / 6))
    assert g.vif == pytest.approx(g.gvif ** (1 / 3))
    assert set(g.own_coef) == {"g[b]", "g[c]", "g[d]"}
    # z2 is not a candidate (say, a mediator): added comparison only.
    assert table.covariates["z2"].dropped is None
    assert table.covariates["z2"].vif is None
    assert table.sets["proposed"].coef == pytest.approx(b_w, rel=1e-12)
    assert table.full.terms == ("z1", "g")
    assert table.collinearity.columns[:2] == ("(intercept)", "x")


@pytest.mark.parametrize("node", ["z1", "g", "z2"])
def test_se_ratio_decomposition_multiplies_back(node):
    _, table = _table(seed=4)
    ev = table.covariates[node]
    for cmp in (ev.added, ev.dropped):
        if cmp is None:
            continue
        vif_part, resid_part, df_part = cmp.se_ratio_parts
        observed = cmp.with_fit.se / cmp.without_fit.se
        assert vif_part * resid_part * df_part == pytest.approx(observed, rel=1e-12)


def test_change_undefined_near_zero_reference():
    a = Fit("linear", ("z",), 0.3, 0.2, (0.0, 0.6), 100)
    b = Fit("linear", (), 0.001, 0.1, (-0.2, 0.2), 100)
    cmp = compare(a, b)
    assert not cmp.change_defined
    assert math.isnan(cmp.change_pct)
    assert "not defined" in cmp.note
    ratio = compare(
        Fit("logistic", ("z",), 0.3, 0.2, (0, 1), 9), Fit("logistic", (), 0.0, 0.1, (0, 1), 9)
    )
    assert ratio.change_pct_ratio == pytest.approx(100 * (math.exp(0.3) - 1))


def test_aliased_covariate_fails_its_models_and_the_rest_run():
    frame = _frame(1)
    frame["xcopy"] = frame["x"] * 2 + 1
    frame["zsum"] = frame["z1"] - frame["z2"]
    covs = {**SPECS, "xc": TermSpec("xcopy", CONT), "zs": TermSpec("zsum", CONT)}
    d = make_design(
        frame, exposure=TermSpec("x", CONT), covariates=covs, outcome="y", family="linear"
    )
    engine = EvidenceEngine(d)
    table = compute_evidence(
        engine, candidates=["z1", "g", "z2", "zs"], added=["z1", "g", "z2", "xc", "zs"]
    )
    messages = [f.message for f in table.aliased]
    assert "xc is an exact linear combination of x" in messages
    assert "zs is an exact linear combination of z1, z2" in messages
    xc = table.covariates["xc"].added
    assert not xc.with_fit.ok
    assert "xc is an exact linear combination of x" in xc.with_fit.message
    assert not table.full.ok
    dropped_zs = table.covariates["zs"].dropped
    assert dropped_zs.without_fit.ok  # full − zs is fine
    assert table.covariates["z1"].added.with_fit.ok
    assert table.crude.ok
    assert any("exact linear combination" in w for w in table.warnings)


def test_cache_progress_and_cancel():
    engine = _engine(_frame(2))
    assert engine.fit(["z1", "g"]) is engine.fit(["g", "z1"])
    seen = []
    compute_evidence(
        engine, candidates=["z1"], added=["z1"], progress=lambda d, t: seen.append((d, t))
    )
    assert seen == [(1, 4), (2, 4), (3, 4), (4, 4)]
    with pytest.raises(EvidenceCancelledError):
        compute_evidence(engine, candidates=["z1"], added=["z1"], cancel=lambda: True)
    assert not engine.fit(["nobody"]).ok


def test_logistic_path_matches_statsmodels_logit():
    # Outside source: statsmodels Logit on the same rows; exercises the warm-started GLM path.
    frame = _frame(5, n=400)
    frame["y"] = (frame["y"] > frame["y"].median()).astype(int)
    engine = _engine(frame, family="logistic")
    table = compute_evidence(engine, candidates=["z1", "g", "z2"], added=["z1", "g", "z2"])
    for terms, fit in [((), table.crude), (("z1", "g", "z2"), table.full)] + [
        (tuple(t for t in ("z1", "g", "z2") if t != c), table.dropped_fits[c])
        for c in ("z1", "g", "z2")
    ]:
        ref = smf.logit(_formula(terms), data=frame).fit(disp=0)
        assert fit.ok
        assert fit.coef == pytest.approx(ref.params["x"], rel=1e-6)
        assert fit.se == pytest.approx(ref.bse["x"], rel=1e-5)
    ev = table.covariates["z1"]
    diff = ev.added.with_fit.coef - ev.added.without_fit.coef
    assert ev.added.change_pct_ratio == pytest.approx(100 * math.expm1(diff))
    assert ev.se_ratio_parts is None
    assert any("non-collapsible" in w for w in table.warnings)


def test_risk_ratio_and_cox_paths_run():
    frame = _frame(6, n=300)
    frame["yb"] = (frame["y"] > 1.5).astype(int)
    frame["y"] = frame["yb"]
    rr = compute_evidence(_engine(frame, family="risk_ratio"), candidates=["z1", "g"], added=["z1"])
    ref = smf.glm(_formula(["z1", "g"]), data=frame, family=sm.families.Poisson()).fit(
        cov_type="HC0"
    )
    assert rr.full.coef == pytest.approx(ref.params["x"], rel=1e-6)
    rng = np.random.default_rng(6)
    frame["t"] = rng.exponential(size=len(frame)) * np.exp(-0.3 * frame["x"])
    frame["e"] = (rng.random(len(frame)) < 0.8).astype(int)
    d = make_design(
        frame,
        exposure=TermSpec("x", CONT),
        covariates=SPECS,
        outcome=None,
        family="cox",
        time="t",
        event="e",
    )
    table = compute_evidence(EvidenceEngine(d), candidates=["z1", "g"], added=["z1", "g"])
    assert table.crude.ok
    assert table.full.ok
    assert table.covariates["g"].added.with_fit.ok
    assert any("Efron" in w for w in table.warnings)


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_one_step_starts_reach_the_statsmodels_fit_of_every_model(family):
    # Outside source: statsmodels Logit (tol 1e-12) and GLM Poisson with HC0 SEs,
    # fitted on the same rows.  Added models start from one shared Newton step at
    # the crude fit, dropped models from the full fit's one-step update: both must
    # still end at the maximum likelihood fit.
    frame = _frame(11, n=3000)
    frame["y"] = (frame["y"] > frame["y"].quantile(0.6)).astype(int)
    engine = _engine(frame, family=family)
    nodes = ["z1", "g", "z2"]
    table = compute_evidence(engine, candidates=nodes, added=nodes)
    models = [((), table.crude), (tuple(nodes), table.full)]
    models += [((c,), table.covariates[c].added.with_fit) for c in nodes]
    models += [(tuple(t for t in nodes if t != c), table.dropped_fits[c]) for c in nodes]
    for terms, fit in models:
        if family == "logistic":
            ref = smf.logit(_formula(terms), data=frame).fit(disp=0, tol=1e-12)
        else:
            ref = smf.glm(_formula(terms), data=frame, family=sm.families.Poisson()).fit(
                cov_type="HC0", tol=1e-13
            )
        assert fit.ok, fit.message
        assert fit.converged
        assert fit.coef == pytest.approx(ref.params["x"], rel=1e-9)
        assert fit.se == pytest.approx(ref.bse["x"], rel=1e-7)
        if "z1" in terms:
            assert fit.term_coefs["z1"][0] == pytest.approx(ref.params["z1"], rel=1e-9)
            assert fit.term_coefs["z1"][1] == pytest.approx(ref.bse["z1"], rel=1e-7)


def test_change_is_relative_to_the_size_of_a_negative_reference():
    # DESIGN §2: 100 × (b_with − b_without) / |b_without|: moving −2.0 to −1.5 is +25 %.
    cmp = compare(
        Fit("linear", ("z",), -1.5, 0.2, (-1.9, -1.1), 100),
        Fit("linear", (), -2.0, 0.1, (-2.2, -1.8), 100),
    )
    assert cmp.change_defined
    assert cmp.change_pct == pytest.approx(25.0)


def test_near_zero_is_judged_against_the_standard_error_not_the_units():
    # A small coefficient with a smaller SE is a real reference (defined); a large one
    # swamped by its SE is not: the cut-off is a fraction of SE_without, not an absolute value.
    small = Fit("linear", (), 0.05, 0.01, (0.03, 0.07), 100)
    assert compare(Fit("linear", ("z",), 0.06, 0.01, (0.04, 0.08), 100), small).change_defined
    noisy = Fit("linear", (), 5.0, 100.0, (-195.0, 205.0), 100)
    cmp = compare(Fit("linear", ("z",), 6.0, 100.0, (-194.0, 206.0), 100), noisy)
    assert not cmp.change_defined
    assert math.isnan(cmp.change_pct)


@pytest.mark.parametrize("family", ["linear", "logistic"])
def test_constant_covariate_fails_its_models_and_the_rest_run(family):
    frame = _frame(3, n=300)
    if family == "logistic":
        frame["y"] = (frame["y"] > frame["y"].median()).astype(int)
    frame["k"] = 2.5
    covs = {**SPECS, "k": TermSpec("k", CONT)}
    d = make_design(
        frame, exposure=TermSpec("x", CONT), covariates=covs, outcome="y", family=family
    )
    table = compute_evidence(EvidenceEngine(d), candidates=["z1", "g", "k"], added=["z1", "k"])
    k = table.covariates["k"]
    assert not k.added.with_fit.ok
    assert "has the same value in every row" in k.added.with_fit.message
    assert not table.full.ok
    assert k.vif is None
    assert k.vif_exposure_added == 1.0
    assert table.crude.ok
    assert table.covariates["z1"].added.with_fit.ok
    assert table.covariates["k"].dropped.without_fit.ok  # full − k runs
    # The full model's collinearity is read without the constant: finite, as for z1 and g alone.
    # Outside source: statsmodels variance_inflation_factor with a constant column.
    full = pd.get_dummies(frame[["x", "z1", "g"]], columns=["g"], drop_first=True, dtype=float)
    exog = sm.add_constant(full.to_numpy())
    assert table.covariates["z1"].vif == pytest.approx(variance_inflation_factor(exog, 2), rel=1e-9)
    assert "(intercept)" in table.collinearity.columns
    assert "k" not in table.collinearity.columns
    assert any("same value in every row" in w for w in table.warnings)


def test_too_few_rows_for_the_full_model_are_reported_per_model():
    """Issue 3 item 9: n ≤ parameters is said per model; the crude and small
    models still run, and no aliasing is claimed for what is a lack of rows."""
    import pandas as pd

    from covariscope.analysis.design import TermSpec, make_design
    from covariscope.analysis.evidence import EvidenceEngine, compute_evidence

    rng = np.random.default_rng(1)
    frame = pd.DataFrame({f"c{i}": rng.normal(size=6) for i in range(6)})
    frame["x"] = rng.normal(size=6)
    frame["y"] = frame["x"] + rng.normal(size=6)
    covs = {f"c{i}": TermSpec(f"c{i}", "continuous") for i in range(6)}
    design = make_design(
        frame, exposure=TermSpec("x", "continuous"), covariates=covs, outcome="y", family="linear"
    )
    table = compute_evidence(
        EvidenceEngine(design, "linear"), candidates=list(covs), added=list(covs)
    )
    assert table.crude.ok
    assert table.covariates["c0"].added.with_fit.ok
    assert not table.full.ok
    assert "8 parameters but only 6 rows" in table.full.message
    assert table.covariates["c0"].vif is None
    assert table.aliased == ()
    assert any("no more than the 8 parameters" in w for w in table.warnings)
