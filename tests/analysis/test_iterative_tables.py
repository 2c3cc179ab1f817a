"""Evidence tables of the iterative families (logistic, risk ratio, Cox) on hard
data, every model checked against statsmodels fitted one by one on the same
rows: statsmodels Logit, GLM Poisson with HC0 standard errors, and PHReg
(Efron's ties)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from statsmodels.duration.hazard_regression import PHReg

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import (
    EvidenceCancelledError,
    EvidenceEngine,
    compute_evidence,
)
from covariscope.analysis.glm import fit_glm

CONT = "continuous"
NODES = ["z1", "b", "z2"]


def _frame(seed: int, n: int, kind: str) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    z1 = rng.normal(size=n)
    b = (rng.random(n) < 0.3).astype(float)
    z2 = rng.normal(size=n) + 0.5 * z1
    x = 0.5 * z1 + 0.4 * b + rng.normal(size=n)
    base = -5.3 if kind == "rare" else -0.8  # about 1 % events when rare
    eta = base + 0.4 * x + 0.5 * z1 - 0.3 * b + 0.2 * z2
    y = (rng.random(n) < 1 / (1 + np.exp(-eta))).astype(float)
    t = rng.exponential(1 / np.exp(eta - base))
    if kind == "ties":
        t = np.ceil(t * 4) / 4
    e = (rng.random(n) < 0.8).astype(float)
    if kind == "separated":
        y[b == 1] = 0.0  # no events at one level of b
        e[b == 1] = 0.0
    if kind == "constant":
        z2 = np.full(n, 3.0)
    frame = pd.DataFrame({"x": x, "z1": z1, "b": b, "z2": z2, "y": y, "t": t, "e": e})
    if kind == "missing":
        for col in ("z1", "z2"):
            frame.loc[rng.random(n) < 0.1, col] = np.nan
        frame = frame.dropna().reset_index(drop=True)  # the analytic sample: complete cases
    return frame


def _engine(frame: pd.DataFrame, family: str, nodes: list[str] = NODES) -> EvidenceEngine:
    specs = {c: TermSpec(c, "binary" if c == "b" else CONT) for c in nodes}
    kw = {"outcome": None, "time": "t", "event": "e"} if family == "cox" else {"outcome": "y"}
    design = make_design(frame, exposure=TermSpec("x", CONT), covariates=specs, family=family, **kw)
    return EvidenceEngine(design, family)


def _reference(frame: pd.DataFrame, family: str, terms: tuple[str, ...]) -> tuple[float, float]:
    cols = ["x", *terms]
    if family == "cox":
        res = PHReg(frame["t"], frame[cols], status=frame["e"], ties="efron").fit()
        return float(res.params[0]), float(res.bse[0])
    X = sm.add_constant(frame[cols].to_numpy(), has_constant="add")
    if family == "logistic":
        res = sm.Logit(frame["y"].to_numpy(), X).fit(disp=0, method="newton", tol=1e-12)
    else:
        res = sm.GLM(frame["y"].to_numpy(), X, family=sm.families.Poisson()).fit(
            cov_type="HC0", tol=1e-13
        )
    return float(res.params[1]), float(res.bse[1])


def _models(table) -> list:
    fits = [table.crude, table.full]
    fits += [table.covariates[c].added.with_fit for c in table.covariates]
    fits += list(table.dropped_fits.values())
    return fits


@settings(max_examples=14, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    seed=st.integers(0, 10_000),
    family=st.sampled_from(["logistic", "risk_ratio", "cox"]),
    kind=st.sampled_from(["plain", "rare", "separated", "constant", "missing", "ties"]),
)
def test_every_model_of_a_hard_table_matches_statsmodels(seed: int, family: str, kind: str) -> None:
    n = 3000 if kind == "rare" else 400
    frame = _frame(seed, n, kind)
    table = compute_evidence(_engine(frame, family), candidates=NODES, added=NODES)
    for fit in _models(table):
        if not fit.ok:
            # Only the data problems of that model itself may fail it.
            assert ("b" in fit.terms and kind in ("separated", "rare")) or (
                "z2" in fit.terms and kind == "constant"
            ), fit.message
            continue
        if any(np.isnan(v[0]) for v in fit.term_coefs.values()) or not fit.converged:
            assert "b" in fit.terms, fit.warnings  # a blanked, runaway coefficient
            continue
        coef, se = _reference(frame, family, fit.terms)
        assert fit.coef == pytest.approx(coef, rel=1e-6, abs=1e-9), (fit.terms, kind)
        assert fit.se == pytest.approx(se, rel=1e-6), (fit.terms, kind)


def test_a_separated_model_fails_alone_and_leaves_the_others_unchanged() -> None:
    # The crude + C models start together from one shared pass at the crude
    # fit; one of them whose own fit fails (complete separation) must fail
    # with its own message while the others equal the table without it.
    frame = _frame(3, 600, "plain")
    frame["sep"] = np.where(frame["y"] > 0, 1.0, -1.0) * (1.0 + np.abs(frame["z1"]))
    with_sep = compute_evidence(
        _engine(frame, "logistic", [*NODES, "sep"]), candidates=NODES, added=[*NODES, "sep"]
    )
    without = compute_evidence(_engine(frame, "logistic"), candidates=NODES, added=NODES)
    failed = with_sep.covariates["sep"].added.with_fit
    assert not failed.ok
    assert failed.message.startswith("Complete separation: sep predict the outcome")
    for c in NODES:
        a = with_sep.covariates[c].added.with_fit
        b = without.covariates[c].added.with_fit
        assert a.ok
        assert a.message == b.message
        assert a.coef == pytest.approx(b.coef, rel=1e-10)
        assert a.se == pytest.approx(b.se, rel=1e-10)
        coef, se = _reference(frame, "logistic", (c,))
        assert a.coef == pytest.approx(coef, rel=1e-8)
        assert a.se == pytest.approx(se, rel=1e-7)


def test_missing_values_given_to_a_fit_are_named() -> None:
    X = np.column_stack([np.ones(50), np.arange(50.0), np.r_[np.nan, np.ones(49)]])
    y = (np.arange(50) % 3 == 0).astype(float)
    fit, _ = fit_glm(X, y, "logistic", column_names=["(intercept)", "x", "z"], terms=("z",))
    assert not fit.ok
    assert fit.message.startswith("Missing or infinite values in z")


@pytest.mark.parametrize("family", ["logistic", "cox"])
def test_progress_by_pass_and_cancel_between_passes(family: str) -> None:
    frame = _frame(5, 500, "ties")
    seen: list[tuple[int, int, int]] = []
    compute_evidence(
        _engine(frame, family),
        candidates=NODES,
        added=NODES,
        pass_progress=lambda m, t, k: seen.append((m, t, k)),
    )
    total = 1 + 3 + 1 + 3
    assert {m for m, _, _ in seen} == set(range(1, total + 1))
    assert all(t == total and k >= 1 for _, t, k in seen)
    passes: list[tuple[int, int, int]] = []
    engine = _engine(_frame(6, 500, "ties"), family)  # fresh data: nothing cached
    with pytest.raises(EvidenceCancelledError):
        compute_evidence(
            engine,
            candidates=NODES,
            added=NODES,
            pass_progress=lambda m, t, k: passes.append((m, t, k)),
            cancel=lambda: bool(passes),  # stop as soon as one pass is made
        )
    assert passes == [(1, total, 1)]  # stopped between passes, inside the crude model's fit
    assert engine.fit(()).ok  # the cancelled model was not cached half-fitted
