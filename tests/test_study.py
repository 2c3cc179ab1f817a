"""The study API: project + data → verdicts, estimates and messages."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import format_study_text, run_study, study_to_json


def _project(nodes, arrows, proposed=(), *, analysis=None, proxies=()):
    kinds = {"x": "exposure", "y": "outcome"}
    raw_nodes = []
    for n in nodes:
        node_id, measured = (n, True) if isinstance(n, str) else n
        raw_nodes.append(
            {
                "id": node_id,
                "kind": kinds.get(node_id, "covariate"),
                "measured": measured,
                "column": node_id if measured else None,
            }
        )
    settings = {"family": "linear", "proposed": list(proposed)}
    settings.update(analysis or {})
    return project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": raw_nodes,
                "arrows": [{"from": a, "to": b} for a, b in arrows],
                "proxies": [{"a": a, "b": b} for a, b in proxies],
            },
            "analysis": settings,
        }
    )


def _table(frame: pd.DataFrame) -> LoadedTable:
    return LoadedTable(frame, Path("synthetic.csv"), "text", "0" * 64)


def test_graph_only_study_says_there_are_no_data():
    p = _project(
        ["x", "y", "c", "m", ("u", False)],
        [("c", "x"), ("c", "y"), ("x", "m"), ("m", "y"), ("u", "y")],
    )
    r = run_study(p)
    assert r.evidence is None
    assert r.sample is None
    assert r.evalue is None
    assert all(v is None for v in r.estimates.values())
    assert r.verdicts["c"].code == "adjust"
    assert "no data" in r.verdicts["c"].reason
    assert r.verdicts["m"].code == "exclude_pathway"
    assert r.verdicts["u"].code == "unmeasured"
    assert r.recommended == ("c",)
    assert any("No data" in m for m in r.messages)
    out = study_to_json(r)
    assert out["sample"] is None
    assert out["covariates"]["c"]["added"] is None
    assert "no data" in format_study_text(r).lower()


def _linear_frame(seed=1, n=1500):
    rng = np.random.default_rng(seed)
    c = rng.normal(size=n)
    h = rng.normal(size=n)  # the diagram omits h → x
    p = rng.normal(size=n)
    x = 0.8 * c + 0.6 * h + rng.normal(size=n)
    y = 1.0 * x + 1.5 * c + 1.2 * h + 1.0 * p + rng.normal(size=n)
    return pd.DataFrame({"x": x, "y": y, "c": c, "h": h, "p": p})


def test_linear_study_matches_statsmodels_and_flags_the_missing_arrow():
    frame = _linear_frame()
    p = _project(
        ["x", "y", "c", "h", "p"],
        [("c", "x"), ("c", "y"), ("h", "y"), ("p", "y"), ("x", "y")],
        proposed=["c"],
    )
    r = run_study(p, table=_table(frame))
    assert r.verdicts["c"].code == "adjust"
    assert r.verdicts["p"].code == "optional_precision"
    review = r.verdicts["h"]
    assert review.code == "review"
    assert "full model" in review.reason or "crude model" in review.reason
    assert "10% guide" in review.reason
    assert any(d.startswith("h:") for d in r.disagreements)
    # Outside reference: statsmodels OLS on the same rows.
    ref = sm.OLS(frame["y"], sm.add_constant(frame[["x", "c"]])).fit()
    rec = r.estimates["recommended"]
    assert r.recommended == ("c",)
    assert rec is not None
    assert rec.coef == pytest.approx(ref.params["x"], rel=1e-9)
    assert rec.se == pytest.approx(ref.bse["x"], rel=1e-7)
    assert r.evalue is not None
    assert "exp(0.91" in r.evalue.conversion


def test_thresholds_come_from_the_project():
    frame = _linear_frame()
    p = _project(
        ["x", "y", "c", "h", "p"],
        [("c", "x"), ("c", "y"), ("h", "y"), ("p", "y"), ("x", "y")],
        analysis={"thresholds": {"change_pct": 90.0}},
    )
    r = run_study(p, table=_table(frame))
    assert r.thresholds["change_pct"] == 90.0
    assert r.verdicts["h"].code == "optional_precision"
    assert "90%" in r.verdicts["h"].reason


def test_non_collapsible_odds_ratio_is_not_called_confounding():
    # Greenland, Robins & Pearl (1999): with z independent of a randomised x, the
    # conditional odds ratio differs from the marginal one although z confounds nothing.
    rng = np.random.default_rng(11)
    n = 4000
    x = rng.binomial(1, 0.5, n)
    z = rng.binomial(1, 0.5, n)
    eta = -1.5 + 1.0 * x + 3.0 * z
    y = rng.binomial(1, 1 / (1 + np.exp(-eta)))
    frame = pd.DataFrame({"x": x, "z": z, "y": y})
    p = _project(["x", "y", "z"], [("x", "y"), ("z", "y")], analysis={"family": "logistic"})
    r = run_study(p, table=_table(frame))
    ev = r.evidence
    assert ev is not None
    shift = ev.covariates["z"].added.change_pct_ratio
    assert abs(shift) >= 10.0  # the odds ratio does move
    assert ev.covariates["z"].r2_exposure < 0.01
    v = r.verdicts["z"]
    assert v.code not in ("adjust", "review")
    assert "non-collapsib" in v.reason


def test_cox_without_time_columns_falls_back_to_the_diagram():
    frame = _linear_frame()
    p = _project(["x", "y", "c"], [("c", "x"), ("c", "y"), ("x", "y")])
    r = run_study(p, table=_table(frame), family="cox")
    assert r.evidence is None
    assert any("time and an event column" in m for m in r.messages)
    assert r.verdicts["c"].code == "adjust"


def test_collinear_confounders_on_different_paths_are_both_adjusted_for():
    # a and b each confound on a backdoor path of their own (x <- a -> y, x <- b -> y),
    # and share a common cause u, so they are highly correlated in the data. Neither
    # closes the other's path: keeping one of them would leave a path open.
    rng = np.random.default_rng(23)
    n = 1500
    u = rng.normal(size=n)
    a = u + 0.2 * rng.normal(size=n)
    b = u + 0.2 * rng.normal(size=n)
    x = 0.5 * a + 0.5 * b + rng.normal(size=n)
    y = x + a - b + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "a": a, "b": b})
    p = _project(["x", "y", "a", "b"], [("a", "x"), ("a", "y"), ("b", "x"), ("b", "y"), ("x", "y")])
    r = run_study(p, table=_table(frame))
    r2 = float(np.corrcoef(a, b)[0, 1] ** 2)  # outside reference: numpy's correlation
    assert r2 >= 0.9
    assert r.collinear_groups == (("a", "b"),)
    assert r.recommended == ("a", "b")  # the recommended set keeps both
    # outside reference: statsmodels' auxiliary regression of a on the full model's
    # other terms gives the VIF of a
    ols = sm.OLS(frame["a"], sm.add_constant(frame[["x", "b"]])).fit()
    vif_a = 1.0 / (1.0 - ols.rsquared)
    for node in ("a", "b"):
        v = r.verdicts[node]
        assert v.code == "adjust"
        assert v.group == ()
        assert v.suggested is None
        assert "the diagram needs both" in v.reason
        assert "wider confidence interval" in v.reason
        assert "distinct constructs" in v.reason
        assert f"their R² is {r2:.3g} against the guide 0.9" in v.reason
        assert "against 10" in v.reason
        assert v.reason.count(". ") == 0
    assert f"VIF {vif_a:.3g} against 10" in r.verdicts["a"].reason
    assert r.estimates["recommended"] is not None
    assert abs(r.estimates["recommended"].coef - 1.0) < 0.2


def test_progress_is_reported():
    seen = []
    frame = _linear_frame(n=300)
    p = _project(["x", "y", "c"], [("c", "x"), ("c", "y"), ("x", "y")])
    run_study(p, table=_table(frame), progress=lambda f, text: seen.append(f))
    assert seen[0] == 0.0
    assert seen[-1] == 1.0
    assert seen == sorted(seen)


def test_collinear_group_from_the_data_names_the_member_that_alone_suffices():
    # a confounds on two paths (x ← a → y and x ← b ← a → y); b, nearly a copy of a
    # in the data, closes only the second, so only a alone gives a sufficient set.
    rng = np.random.default_rng(5)
    n = 1500
    a = rng.normal(size=n)
    b = a + 0.2 * rng.normal(size=n)
    x = 0.5 * a + 0.5 * b + rng.normal(size=n)
    y = x + a + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "a": a, "b": b})
    p = _project(["x", "y", "a", "b"], [("a", "x"), ("a", "y"), ("a", "b"), ("b", "x"), ("x", "y")])
    r = run_study(p, table=_table(frame))
    assert r.collinear_groups == (("a", "b"),)
    assert r.recommended == ("a",)
    v = r.verdicts["b"]
    assert v.code == "keep_one_of"
    assert v.suggested == "a"
    assert "only a alone gives a sufficient set (b alone does not)" in v.reason
    r2 = float(np.corrcoef(a, b)[0, 1] ** 2)  # outside reference: numpy's correlation
    assert f"their R² is {r2:.3g} against the guide 0.9" in v.reason
