"""Tests of the diagram's claims against statsmodels and scipy, and by simulation.

Outside references: statsmodels ``OLS`` (t and F tests), ``GLM`` with the
binomial and Poisson families (deviance differences), ``MNLogit``
log-likelihoods, ``multipletests`` (Holm 1979; Benjamini & Hochberg 1995);
scipy ``pearsonr`` on residuals for the partial correlation.  The simulations
draw data from a known diagram with our own seeded generator.
"""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import pytest
import scipy.stats
import statsmodels.api as sm
from statsmodels.stats.multitest import multipletests

from covariscope.analysis.claim_tests import adjust_p, check_claims, claim_data
from covariscope.analysis.claims import Claim, ClaimSet, implied_claims


def one_claim(a: str, b: str, given: tuple[str, ...]) -> ClaimSet:
    return ClaimSet((Claim(a, b, given),), (), 0, 200)


def test_partial_correlation_and_p_equal_statsmodels_and_scipy() -> None:
    rng = np.random.default_rng(11)
    n = 300
    s1, s2 = rng.normal(size=n), rng.normal(size=n)
    a = s1 - 0.5 * s2 + rng.normal(size=n)
    b = 0.8 * s1 + 0.15 * a + rng.normal(size=n)
    v = np.column_stack([a, b, s1, s2])
    data = claim_data(
        v,
        {"a": [0], "b": [1], "s1": [2], "s2": [3]},
        dict.fromkeys(["a", "b", "s1", "s2"], "continuous"),
    )
    r = check_claims(one_claim("a", "b", ("s1", "s2")), data).results[0]
    S = sm.add_constant(v[:, 2:])
    ra = sm.OLS(a, S).fit().resid
    rb = sm.OLS(b, S).fit().resid
    assert r.strength.kind == "partial_correlation"
    assert r.strength.value == pytest.approx(scipy.stats.pearsonr(ra, rb)[0], rel=1e-9)
    ols = sm.OLS(a, sm.add_constant(np.column_stack([v[:, 2:], b]))).fit()
    assert r.statistic == pytest.approx(ols.tvalues[-1], rel=1e-9)
    assert r.p == pytest.approx(ols.pvalues[-1], rel=1e-8)
    assert r.df == int(ols.df_resid)
    # Fisher-z interval, n − |S| − 3 (Fisher 1924)
    z, half = math.atanh(r.strength.value), 1.959963984540054 / math.sqrt(n - 2 - 3)
    assert r.strength.low == pytest.approx(math.tanh(z - half))


def test_categorical_predictor_f_test_equals_statsmodels() -> None:
    rng = np.random.default_rng(5)
    n = 400
    s = rng.normal(size=n)
    g = rng.integers(0, 3, size=n)
    dummies = np.column_stack([(g == 1), (g == 2)]).astype(float)
    a = s + 0.3 * dummies[:, 1] + rng.normal(size=n)
    v = np.column_stack([a, dummies, s])
    data = claim_data(
        v,
        {"a": [0], "g": [1, 2], "s": [3]},
        {"a": "continuous", "g": "categorical", "s": "continuous"},
        names=["a", "g[1]", "g[2]", "s"],
    )
    r = check_claims(one_claim("a", "g", ("s",)), data).results[0]
    full = sm.OLS(a, sm.add_constant(np.column_stack([s, dummies]))).fit()
    null = sm.OLS(a, sm.add_constant(s)).fit()
    f, p, _df = full.compare_f_test(null)
    mnl = sm.MNLogit(g, sm.add_constant(np.column_stack([s, a]))).fit(disp=0)
    mnl0 = sm.MNLogit(g, sm.add_constant(s)).fit(disp=0)
    p_multinomial = scipy.stats.chi2.sf(2 * (mnl.llf - mnl0.llf), 2)
    # The more conservative direction is reported.
    if p >= p_multinomial:
        assert (r.test, r.statistic, r.p, r.df) == (
            "linear F",
            pytest.approx(f),
            pytest.approx(p),
            2,
        )
    else:
        assert r.test == "multinomial LR"
        assert r.p == pytest.approx(p_multinomial, rel=1e-5)
    assert r.strength.kind == "standardised_difference"
    assert r.strength.level == "g[2]"
    assert r.strength.value == pytest.approx(full.params[-1] / a.std(ddof=1))


def test_binary_and_count_directions_equal_statsmodels_glm() -> None:
    rng = np.random.default_rng(8)
    n = 600
    s = rng.normal(size=n)
    k = rng.poisson(np.exp(0.3 + 0.4 * s)).astype(float)
    b = (rng.random(n) < 1 / (1 + np.exp(-(0.5 * s + 0.2 * k - 0.3)))).astype(float)
    v = np.column_stack([b, k, s])
    data = claim_data(
        v, {"b": [0], "k": [1], "s": [2]}, {"b": "binary", "k": "count", "s": "continuous"}
    )
    r = check_claims(one_claim("b", "k", ("s",)), data).results[0]
    # Logistic direction: deviance difference of statsmodels' binomial GLM.
    X0, X1 = sm.add_constant(s), sm.add_constant(np.column_stack([s, k]))
    lr_b = (
        sm.GLM(b, X0, family=sm.families.Binomial()).fit().deviance
        - sm.GLM(b, X1, family=sm.families.Binomial()).fit().deviance
    )
    # Poisson direction, scaled by the Pearson dispersion when above 1.
    pois1 = sm.GLM(k, sm.add_constant(np.column_stack([s, b])), family=sm.families.Poisson()).fit()
    pois0 = sm.GLM(k, X0, family=sm.families.Poisson()).fit()
    lr_k = (pois0.deviance - pois1.deviance) / max(pois1.pearson_chi2 / pois1.df_resid, 1.0)
    p_b, p_k = scipy.stats.chi2.sf(lr_b, 1), scipy.stats.chi2.sf(lr_k, 1)
    expected = ("logistic LR", lr_b, p_b) if p_b >= p_k else ("Poisson LR", lr_k, p_k)
    assert r.test == expected[0]
    assert r.statistic == pytest.approx(expected[1], rel=1e-5)
    assert r.p == pytest.approx(expected[2], rel=1e-4)
    # Strength: odds ratio of b per SD of k, from the logistic fit.
    fit = sm.GLM(b, X1, family=sm.families.Binomial()).fit()
    assert r.strength.kind == "odds_ratio_per_sd"
    assert r.strength.value == pytest.approx(math.exp(fit.params[-1] * k.std(ddof=1)), rel=1e-5)
    lo = math.exp((fit.params[-1] - 1.959963984540054 * fit.bse[-1]) * k.std(ddof=1))
    assert r.strength.low == pytest.approx(lo, rel=1e-4)


@pytest.mark.parametrize("method", ["holm", "bh"])
def test_adjustment_equals_multipletests(method: str) -> None:
    p = np.random.default_rng(2).uniform(size=40) ** 3
    p[[3, 9]] = p[5]  # ties
    name = {"holm": "holm", "bh": "fdr_bh"}[method]
    assert np.allclose(adjust_p(p, method), multipletests(p, method=name)[1], rtol=0, atol=1e-15)


def test_failed_flag_and_ranking_follow_the_adjusted_p() -> None:
    rng = np.random.default_rng(12)
    n = 500
    cols = rng.normal(size=(n, 4))
    cols[:, 1] += 0.5 * cols[:, 0]  # a and b related, though the diagram draws no arrow
    names = ["a", "b", "c", "d"]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    G.add_edge("c", "d")
    data = claim_data(
        cols, {k: [i] for i, k in enumerate(names)}, dict.fromkeys(names, "continuous")
    )
    checks = check_claims(implied_claims(G, "c", "d", names), data, method="bh")
    assert checks.method == "bh"
    ranked = checks.ranked()
    assert (ranked[0].claim.a, ranked[0].claim.b) == ("a", "b")
    assert checks.failed == 1
    assert ranked[0].failed
    assert [r.failed for r in checks.results] == [
        q < 0.05 for q in (r.p_adjusted for r in checks.results)
    ]
    assert checks.failures_involving("b")[0] is ranked[0]
    assert checks.failures_involving("c") == ()


# -- simulation with known truth ----------------------------------------------------------------

TYPES = {
    "a": "continuous",
    "g": "categorical",
    "x": "binary",
    "k": "count",
    "b": "binary",
    "y": "continuous",
}
TRUE_ARROWS = [
    ("a", "x"),
    ("g", "x"),
    ("a", "k"),
    ("g", "k"),
    ("x", "y"),
    ("k", "y"),
    ("g", "b"),
    ("b", "y"),
]


def simulate(rng: np.random.Generator, n: int) -> tuple[np.ndarray, dict[str, list[int]]]:
    """Each variable drawn given its parents by the model of its type."""
    expit = lambda t: 1 / (1 + np.exp(-t))  # noqa: E731
    a = rng.normal(size=n)
    g = rng.integers(0, 3, size=n)
    g1, g2 = (g == 1).astype(float), (g == 2).astype(float)
    x = (rng.random(n) < expit(0.5 * a + 0.6 * g1 - 0.4 * g2)).astype(float)
    k = rng.poisson(np.exp(0.2 + 0.3 * a + 0.25 * g1 + 0.35 * g2)).astype(float)
    b = (rng.random(n) < expit(-0.3 + 0.8 * g2)).astype(float)
    y = 0.5 * x + 0.3 * k + 0.4 * b + rng.normal(size=n)
    v = np.column_stack([a, g1, g2, x, k, b, y])
    return v, {"a": [0], "g": [1, 2], "x": [3], "k": [4], "b": [5], "y": [6]}


def diagram(arrows: list[tuple[str, str]]) -> nx.DiGraph:
    G = nx.DiGraph(arrows)
    G.add_nodes_from(TYPES)
    return G


@pytest.mark.slow
def test_true_diagram_fails_at_the_nominal_rate() -> None:
    rng = np.random.default_rng(20260)
    claims = implied_claims(diagram(TRUE_ARROWS), "x", "y", list(TYPES))
    assert len(claims.claims) >= 6
    kinds = {(TYPES[c.a], TYPES[c.b]) for c in claims.claims}
    assert len(kinds) >= 4  # mixed types: binary, categorical, count, continuous
    reps, rejected, total = 60, 0, 0
    for _ in range(reps):
        v, cols = simulate(rng, 400)
        checks = check_claims(claims, claim_data(v, cols, TYPES))
        assert not checks.untestable
        rejected += sum(r.p < 0.05 for r in checks.results)
        total += checks.tested
    lo, hi = scipy.stats.binom.interval(0.999, total, 0.05)
    assert lo <= rejected <= hi, (rejected, total)


@pytest.mark.slow
def test_a_removed_true_arrow_is_flagged() -> None:
    rng = np.random.default_rng(7)
    drawn = [e for e in TRUE_ARROWS if e != ("g", "k")]
    claims = implied_claims(diagram(drawn), "x", "y", list(TYPES))
    assert any((c.a, c.b) == ("g", "k") for c in claims.claims)
    reps, flagged = 30, 0
    for _ in range(reps):
        v, cols = simulate(rng, 2000)
        checks = check_claims(claims, claim_data(v, cols, TYPES))
        flagged += any(r.failed for r in checks.results if (r.claim.a, r.claim.b) == ("g", "k"))
    assert flagged >= 0.8 * reps
