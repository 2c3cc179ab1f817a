"""A multi-level categorical exposure: every contrast in every comparison model.

References: each contrast's estimate and SE against statsmodels (OLS, Logit,
GLM Poisson with HC0 robust SEs, PHReg with Efron ties); the exposure
block's GVIF against the determinant formula of Fox & Monette (1992,
JASA 87:178), GVIF = det(R11) det(R22) / det(R), computed here from numpy's
correlation matrix; the block's Wald test against statsmodels' ``wald_test``.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine, compute_evidence

LEVELS = ("never", "former", "current")
#: true contrasts against "never" (linear scale), planted in :func:`_frame`
TRUE = {"former": 0.5, "current": 1.5}


def _frame(n: int = 1500, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    z = rng.normal(size=n)
    w = rng.normal(size=n)
    # z raises the chance of the higher levels: a confounder of every contrast
    score = z + rng.normal(size=n)
    x = np.where(score > 0.7, "current", np.where(score > -0.3, "former", "never"))
    effect = np.select([x == "former", x == "current"], [TRUE["former"], 1.5], 0.0)
    lin = effect + 1.0 * z + 0.4 * w
    y = lin + rng.normal(size=n)
    yb = (rng.random(n) < 1.0 / (1.0 + np.exp(-(lin - 1.0)))).astype(float)
    t = rng.exponential(1.0 / np.exp(0.5 * lin))
    e = (rng.random(n) < 0.8).astype(float)
    return pd.DataFrame({"x": x, "z": z, "w": w, "y": y, "yb": yb, "t": t, "e": e})


def _design(frame: pd.DataFrame, family: str):
    outcome = {"linear": "y", "logistic": "yb", "risk_ratio": "yb", "cox": None}[family]
    extra = {"time": "t", "event": "e"} if family == "cox" else {}
    return make_design(
        frame,
        exposure=TermSpec("x", "categorical", "never"),
        covariates={"z": TermSpec("z", "continuous"), "w": TermSpec("w", "continuous")},
        outcome=outcome,
        family=family,
        **extra,
    )


def _statsmodels(frame: pd.DataFrame, family: str, covariates: list[str]):
    X = np.column_stack(
        [(frame["x"] == "current"), (frame["x"] == "former"), *(frame[c] for c in covariates)]
    ).astype(float)
    if family == "cox":
        return sm.PHReg(frame["t"], X, status=frame["e"], ties="efron").fit()
    X = sm.add_constant(X)
    if family == "linear":
        return sm.OLS(frame["y"], X).fit()
    if family == "logistic":
        return sm.Logit(frame["yb"], X).fit(disp=0)
    return sm.GLM(frame["yb"], X, family=sm.families.Poisson()).fit(cov_type="HC0")


@pytest.fixture(scope="module")
def frame() -> pd.DataFrame:
    return _frame()


@pytest.mark.parametrize("family", ["linear", "logistic", "risk_ratio", "cox"])
@pytest.mark.parametrize("terms", [(), ("z",), ("z", "w")])
def test_every_contrast_equals_statsmodels(frame, family, terms):
    design = _design(frame, family)
    assert design.exposure_levels == ("never", "current", "former")
    fit = EvidenceEngine(design).fit(terms)
    ref = _statsmodels(frame, family, list(terms))
    offset = 0 if family == "cox" else 1
    params, bse = np.asarray(ref.params), np.asarray(ref.bse)
    got = {c.level: c for c in fit.contrasts}
    assert list(got) == ["current", "former"]
    for j, level in enumerate(got):
        assert got[level].coef == pytest.approx(params[offset + j], rel=1e-5, abs=1e-7)
        assert got[level].se == pytest.approx(bse[offset + j], rel=1e-4)
        if family != "linear":
            assert got[level].ratio == pytest.approx(math.exp(params[offset + j]), rel=1e-5)


def _gvif(frame: pd.DataFrame, covariates: list[str]) -> float:
    """Fox & Monette (1992): det(R11) det(R22) / det(R) of the correlation matrix."""
    X = np.column_stack(
        [(frame["x"] == "current"), (frame["x"] == "former"), *(frame[c] for c in covariates)]
    ).astype(float)
    R = np.corrcoef(X, rowvar=False)
    return float(np.linalg.det(R[:2, :2]) * np.linalg.det(R[2:, 2:]) / np.linalg.det(R))


def test_joint_summary_reads_the_block(frame):
    design = _design(frame, "logistic")
    table = compute_evidence(EvidenceEngine(design), candidates=["z", "w"], added=["z", "w"])
    joint = table.covariates["z"].joint
    assert joint is not None
    # GVIF^(1/(2·df)) of the exposure block, in crude + z and in the full model
    assert joint.gvif_root_added == pytest.approx(_gvif(frame, ["z"]) ** (1 / 4), rel=1e-8)
    assert joint.gvif_root_full == pytest.approx(_gvif(frame, ["z", "w"]) ** (1 / 4), rel=1e-8)
    assert table.covariates["z"].vif_exposure_added == pytest.approx(
        _gvif(frame, ["z"]) ** (1 / 2), rel=1e-8
    )
    # the Wald test of the block in crude + z, against statsmodels
    ref = _statsmodels(frame, "logistic", ["z"])
    wald = ref.wald_test(np.array([[0, 1, 0, 0], [0, 0, 1, 0]]), scalar=True)
    assert joint.wald is not None
    assert joint.wald.df == 2
    assert joint.wald.stat == pytest.approx(float(wald.statistic), rel=1e-5)
    assert joint.wald.p == pytest.approx(float(wald.pvalue), rel=1e-4, abs=1e-300)


def test_change_per_contrast_and_the_one_that_moved_most(frame):
    design = _design(frame, "linear")
    table = compute_evidence(EvidenceEngine(design), candidates=["z", "w"], added=["z", "w"])
    crude = np.asarray(_statsmodels(frame, "linear", []).params)
    with_z = np.asarray(_statsmodels(frame, "linear", ["z"]).params)
    joint = table.covariates["z"].joint
    changes = {}
    for j, shift in enumerate(joint.contrasts):
        expected = 100 * (with_z[1 + j] - crude[1 + j]) / abs(crude[1 + j])
        assert shift.added.change_pct == pytest.approx(expected, rel=1e-6)
        changes[shift.level] = expected
    for shift in joint.contrasts:
        dropped = shift.dropped
        assert dropped is not None
        changes[shift.level + " dropped"] = dropped.change_pct
    top = max(changes, key=lambda k: abs(changes[k]))
    assert top.startswith(joint.moved_most)
    assert abs(joint.largest_change_pct) == pytest.approx(abs(changes[top]))
    # the covariate's headline comparisons are the contrast that moved most
    ev = table.covariates["z"]
    assert ev.added.with_fit.contrast == joint.moved_most
    assert ev.dropped is not None
    assert ev.dropped.with_fit.contrast == joint.moved_most


def test_simulated_contrasts_are_recovered_after_adjustment():
    """Known contrasts planted in the generator: the crude estimates are confounded by z,
    the adjusted ones cover the truth."""
    frame = _frame(n=6000, seed=11)
    design = _design(frame, "linear")
    engine = EvidenceEngine(design)
    crude = {c.level: c for c in engine.fit(()).contrasts}
    adjusted = {c.level: c for c in engine.fit(("z", "w")).contrasts}
    for level, truth in TRUE.items():
        assert not crude[level].ci[0] <= truth <= crude[level].ci[1]
        assert adjusted[level].ci[0] <= truth <= adjusted[level].ci[1]
    table = compute_evidence(engine, candidates=["z", "w"], added=["z", "w"])
    assert abs(table.covariates["z"].joint.largest_change_pct) > 10
    assert abs(table.covariates["w"].joint.largest_change_pct) < 10


def test_a_binary_exposure_has_no_contrasts(frame):
    two = frame[frame["x"] != "former"]
    design = make_design(
        two,
        exposure=TermSpec("x", "categorical", "never"),
        covariates={"z": TermSpec("z", "continuous")},
        outcome="y",
        family="linear",
    )
    assert design.exposure_width == 1
    assert design.exposure_levels == ()
    table = compute_evidence(EvidenceEngine(design), candidates=["z"], added=["z"])
    assert table.crude.contrasts == ()
    assert table.crude.contrast == ""
    assert table.covariates["z"].joint is None
