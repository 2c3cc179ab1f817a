"""Logistic and Poisson models fitted in lockstep from rows in memory, their
passes sharing each read: every sum equals the one-model pass, every model ends
where it ends when fitted alone (which is itself checked against statsmodels,
here and in tests/analysis/test_glm.py), and a model that cannot be fitted
fails alone."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.analysis import evidence as evidence_module
from covariscope.analysis import glm_batch, glm_newton
from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine, compute_evidence
from covariscope.analysis.families import family_of
from covariscope.analysis.glm_batch import batch_pass
from covariscope.analysis.glm_newton import PassRequest
from covariscope.analysis.passes import glm_pass


def _cohort(family: str, n: int = 4000, seed: int = 11) -> pd.DataFrame:
    """Invented: an exposure confounded by five correlated covariates, a binary outcome."""
    rng = np.random.default_rng(seed)
    z = rng.normal(size=(n, 5))
    z[:, 1:] += 0.4 * z[:, :-1]
    x = 0.3 * z[:, :3].sum(axis=1) + rng.normal(size=n)
    eta = 0.4 * x + z @ np.array([0.5, -0.3, 0.2, 0.4, -0.1])
    p = 1 / (1 + np.exp(-(eta - 1.0))) if family == "logistic" else 0.15 * np.exp(0.3 * eta)
    frame = pd.DataFrame(z, columns=[f"z{j}" for j in range(5)])
    frame["x"] = x
    frame["y"] = (rng.random(n) < np.clip(p, 0, 1)).astype(float)
    return frame


@pytest.mark.parametrize("offset", [False, True])
@pytest.mark.parametrize("shared_by", [1, 2, 99])
def test_batch_sums_equal_the_one_model_pass(
    offset: bool, shared_by: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    # every way of forming the informations: all pairs shared, some, none
    monkeypatch.setattr(glm_batch, "SHARED_BY", shared_by)
    frame = _cohort("risk_ratio")
    rng = np.random.default_rng(3)
    X = np.asfortranarray(
        np.column_stack([np.ones(len(frame)), frame[["x", "z0", "z1", "z2", "z3", "z4"]]])
    )
    y = frame["y"].to_numpy()
    off = rng.normal(scale=0.1, size=len(y)) if offset else None
    link = family_of("risk_ratio").glm
    # wide, narrow, non-contiguous and out-of-order columns; score-only, info and meat requests
    models = [
        np.array([0, 1, 2, 3, 4, 5, 6]),
        np.array([0, 1, 4]),
        np.array([0, 1, 3, 6]),
        np.array([0, 1, 6, 2]),
    ]
    asks = [(True, True), (True, False), (False, False), (False, True)]
    requests = [
        (cols, PassRequest(rng.normal(scale=0.1, size=len(cols)), info, meat))
        for cols, (info, meat) in zip(models, asks, strict=True)
    ]
    got = batch_pass(X, y, link, requests, offset=off, ylogy=link.saturated(y))
    for (cols, req), res in zip(requests, got, strict=True):
        ref = glm_pass(
            X,
            y,
            "risk_ratio",
            req.beta,
            cols=cols,
            offset=off,
            info=req.info,
            meat=req.meat,
            ylogy=link.saturated(y),
        )
        assert res.deviance == pytest.approx(ref.deviance, rel=1e-13)
        np.testing.assert_allclose(res.score, ref.score, rtol=1e-10, atol=1e-9)
        assert (res.info is None) == (ref.info is None)
        assert (res.meat is None) == (ref.meat is None)
        if ref.info is not None:
            np.testing.assert_allclose(res.info, ref.info, rtol=1e-12)
        if ref.meat is not None:
            np.testing.assert_allclose(res.meat, ref.meat, rtol=1e-12)
        assert res.mu_low == pytest.approx(ref.mu_low, rel=1e-14)
        assert res.mu_high == pytest.approx(ref.mu_high, rel=1e-14)


def _nodes(frame: pd.DataFrame) -> list[str]:
    return [c for c in frame.columns if c.startswith("z") or c == "sep"]


def _engine(frame: pd.DataFrame, family: str) -> EvidenceEngine:
    nodes = _nodes(frame)
    covs = {c: TermSpec(c, "continuous") for c in nodes}
    design = make_design(
        frame, exposure=TermSpec("x", "continuous"), covariates=covs, family=family, outcome="y"
    )
    engine = EvidenceEngine(design)
    compute_evidence(engine, candidates=nodes, added=nodes)
    return engine


def _tables(
    frame: pd.DataFrame, family: str, monkeypatch: pytest.MonkeyPatch
) -> tuple[list[str], EvidenceEngine, EvidenceEngine]:
    nodes = _nodes(frame)

    def run() -> EvidenceEngine:
        return _engine(frame, family)

    single = {"passes": 0}
    real = glm_newton.glm_pass

    def counting(*args: object, **kw: object) -> object:
        single["passes"] += 1
        return real(*args, **kw)  # type: ignore[arg-type]

    monkeypatch.setattr(glm_newton, "glm_pass", counting)
    together = run()
    passes_together = single["passes"]
    monkeypatch.setattr(evidence_module.EvidenceEngine, "_fit_many_memory", lambda *a: None)
    single["passes"] = 0
    alone = run()
    # Only the crude and full models (and the first step of the models that
    # add to the crude one) are fitted one pass at a time.
    assert passes_together < single["passes"] / 3
    return nodes, together, alone


@pytest.mark.parametrize("family", ["logistic", "risk_ratio"])
def test_models_fitted_together_equal_the_models_fitted_alone(
    family: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    nodes, together, alone = _tables(_cohort(family), family, monkeypatch)
    models = [(), *[(c,) for c in nodes], tuple(nodes)]
    models += [tuple(t for t in nodes if t != c) for c in nodes]
    for terms in models:
        a, b = together.fit(terms), alone.fit(terms)
        assert a.ok, terms
        assert b.ok, terms
        assert a.coef == pytest.approx(b.coef, rel=1e-10)
        assert a.se == pytest.approx(b.se, rel=1e-10)
        assert a.term_coefs.keys() == b.term_coefs.keys()
        for name, coef in a.term_coefs.items():
            np.testing.assert_allclose(coef, b.term_coefs[name], rtol=1e-9, atol=1e-12)


def test_a_full_minus_one_model_equals_statsmodels() -> None:
    frame = _cohort("logistic")
    nodes = _nodes(frame)
    rest = tuple(t for t in nodes if t != "z2")
    fit = _engine(frame, "logistic").fit(rest)
    X = sm.add_constant(frame[["x", *rest]].to_numpy())
    # Reference: statsmodels Logit (Newton, its own convergence rule).
    ref = sm.Logit(frame["y"].to_numpy(), X).fit(disp=0, tol=1e-12)
    assert fit.coef == pytest.approx(ref.params[1], rel=1e-8)
    assert fit.se == pytest.approx(ref.bse[1], rel=1e-7)
    frame_rr = _cohort("risk_ratio")
    robust = _engine(frame_rr, "risk_ratio").fit(rest)
    X = sm.add_constant(frame_rr[["x", *rest]].to_numpy())
    # Reference: statsmodels GLM Poisson with HC0 (the modified Poisson model, Zou 2004).
    ref_rr = sm.GLM(frame_rr["y"].to_numpy(), X, family=sm.families.Poisson()).fit(
        cov_type="HC0", tol=1e-12
    )
    assert robust.coef == pytest.approx(ref_rr.params[1], rel=1e-8)
    assert robust.se == pytest.approx(ref_rr.bse[1], rel=1e-7)


def test_a_model_that_cannot_be_fitted_fails_alone(monkeypatch: pytest.MonkeyPatch) -> None:
    frame = _cohort("logistic")
    rng = np.random.default_rng(2)
    frame["sep"] = np.where(frame["y"] == 1, 1.0, -1.0) + 0.01 * rng.normal(size=len(frame))
    nodes, together, alone = _tables(frame, "logistic", monkeypatch)
    with_sep = together.fit(("sep",))
    assert not with_sep.ok
    assert with_sep.message == alone.fit(("sep",)).message
    assert "separat" in with_sep.message.lower() or "perfect" in with_sep.message.lower()
    for c in nodes:
        if c == "sep":
            continue
        a, b = together.fit((c,)), alone.fit((c,))
        assert a.ok
        assert a.coef == pytest.approx(b.coef, rel=1e-10)
        assert a.se == pytest.approx(b.se, rel=1e-10)
