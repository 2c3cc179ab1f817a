"""The study API: project + data → verdicts, estimates and messages."""

from __future__ import annotations

import itertools
from pathlib import Path

import networkx as nx
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import run_study
from covariscope.views.check_json import study_to_json
from covariscope.views.check_text import format_study_text


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


def _two_path_confounders():
    """a and b confound on backdoor paths of their own and share a cause u that
    the diagram leaves out, so they are highly correlated (seeded; true effect 1)."""
    rng = np.random.default_rng(23)
    n = 1500
    u = rng.normal(size=n)
    a = u + 0.2 * rng.normal(size=n)
    b = u + 0.2 * rng.normal(size=n)
    x = 0.5 * a + 0.5 * b + rng.normal(size=n)
    y = x + a - b + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "a": a, "b": b})
    p = _project(["x", "y", "a", "b"], [("a", "x"), ("a", "y"), ("b", "x"), ("b", "y"), ("x", "y")])
    return frame, run_study(p, table=_table(frame))


def test_collinear_confounders_on_different_paths_are_both_adjusted_for():
    # a and b each confound on a backdoor path of their own (x <- a -> y, x <- b -> y),
    # and share a common cause u, so they are highly correlated in the data. Neither
    # closes the other's path: keeping one of them would leave a path open.
    frame, r = _two_path_confounders()
    r2 = float(
        np.corrcoef(frame["a"], frame["b"])[0, 1] ** 2
    )  # outside reference: numpy's correlation
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


def _hub_project():
    # x ← a_i ← h → b_j → y for 23 a's and 23 b's: exactly 23² = 529 backdoor paths,
    # all open when nothing is adjusted, more than the 500 that are listed.
    a = [f"a{i:02d}" for i in range(23)]
    b = [f"b{i:02d}" for i in range(23)]
    arrows = [("x", "y"), *((v, "x") for v in a), *(("h", v) for v in a + b)]
    arrows += [(v, "y") for v in b]
    return _project(["x", "y", "h", *a, *b], arrows)


def _complete_project():
    # Every arrow of a twelve-node causal order: the open paths outrun the count's budget.
    order = ["n0", "n1", "n2", "n3", "x", "n5", "n6", "n7", "n8", "n9", "n10", "y"]
    return _project(order, list(itertools.combinations(order, 2)))


def test_capped_open_paths_carry_their_exact_total():
    project = _hub_project()
    r = run_study(project)
    # outside reference: networkx.all_simple_paths on the undirected skeleton, kept
    # when the first arrow points into x (none has a collider here, so all are open)
    G = project.diagram.to_networkx()
    ref = [p for p in nx.all_simple_paths(G.to_undirected(), "x", "y") if G.has_edge(p[1], "x")]
    assert len(ref) == 529
    js = study_to_json(r)
    assert len(js["open_paths"]) == 500
    assert js["open_paths_total"] == len(ref) == r.diagram.review.open_paths_total
    assert js["open_paths_total_exact"] is True
    keys = list(js)
    assert keys.index("open_paths_total") == keys.index("open_paths") + 1
    text = format_study_text(r)
    assert "not sufficient: it leaves 529 backdoor paths open" in text
    assert "    showing 5 of 529 open paths" in text
    assert text.count("    open: ") == 5
    # a proposed a00 closes the 23 paths through it: 506 left, still past the cap
    project.set_proposed(["a00"])
    r = run_study(project)
    js = study_to_json(r)
    assert (len(js["open_paths"]), js["open_paths_total"]) == (500, 506)
    assert any("it leaves 506 backdoor paths open" in m for m in r.messages)


def test_open_paths_past_the_count_budget_read_at_least():
    r = run_study(_complete_project())
    review = r.diagram.review
    assert not review.open_paths_total_exact
    js = study_to_json(r)
    assert len(js["open_paths"]) == 500
    assert js["open_paths_total"] == review.open_paths_total > 500
    assert js["open_paths_total_exact"] is False
    text = format_study_text(r)
    assert f"showing 5 of at least {review.open_paths_total:,} open paths" in text


def test_uncapped_open_paths_are_counted_without_a_showing_line():
    p = _project(["x", "y", "c", "d"], [("c", "x"), ("c", "y"), ("d", "x"), ("d", "y"), ("x", "y")])
    js = study_to_json(run_study(p))
    assert js["open_paths_total"] == len(js["open_paths"]) == 2
    assert js["open_paths_total_exact"] is True
    assert "showing" not in format_study_text(run_study(p))
    p.set_proposed(["c", "d"])
    js = study_to_json(run_study(p))
    assert (js["open_paths"], js["open_paths_total"], js["open_paths_total_exact"]) == ([], 0, True)


def _mixed_group_study(keep_choices=None):
    # a and b are interchangeable (x ← a → b → y: either closes that path); c confounds
    # on a path of its own (x ← c → y). All three share a cause in the data, so each
    # pair's R² passes 0.9 and they form one collinear group of three.
    rng = np.random.default_rng(11)
    n = 1500
    u = rng.normal(size=n)
    a = u + 0.15 * rng.normal(size=n)
    b = a + 0.15 * rng.normal(size=n)
    c = u + 0.15 * rng.normal(size=n)
    x = 0.4 * a + 0.4 * c + rng.normal(size=n)
    y = x + 0.5 * b + 0.5 * c + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "a": a, "b": b, "c": c})
    p = _project(
        ["x", "y", "a", "b", "c"],
        [("a", "x"), ("a", "b"), ("b", "y"), ("c", "x"), ("c", "y"), ("x", "y")],
        analysis={"keep_choices": dict(keep_choices or {})},
    )
    return p, frame, run_study(p, table=_table(frame))


def test_mixed_collinear_group_adjusts_the_needed_member_and_keeps_one_of_the_rest():
    _, frame, r = _mixed_group_study()
    # outside reference: numpy's correlation for every pair's R²
    r2 = np.corrcoef(frame[["a", "b", "c"]].to_numpy().T) ** 2
    assert r2[np.triu_indices(3, 1)].min() >= 0.9
    assert r.collinear_groups == (("a", "b", "c"),)
    assert r.keep_one_groups == (("a", "b"),)
    assert r.diagram.minimal_sets == (("a", "c"), ("b", "c"))
    c = r.verdicts["c"]
    assert c.code == "adjust"
    assert (c.group, c.suggested) == ((), None)
    assert "the diagram needs it whichever other member is kept" in c.reason
    assert f"its R² with a is {r2[0, 2]:.3g} against the guide 0.9" in c.reason
    for node in ("a", "b"):
        v = r.verdicts[node]
        assert v.code == "keep_one_of"
        assert v.group == ("a", "b")
        assert v.suggested in ("a", "b")
        assert "Keep one of {a, b}" in v.reason
        assert "each member alone gives a sufficient set with {c}" in v.reason
    assert r.verdicts["a"].suggested == r.verdicts["b"].suggested
    assert set(r.recommended) == {r.verdicts["a"].suggested, "c"}
    js = study_to_json(r)
    assert js["collinear_groups"] == [["a", "b", "c"]]
    assert js["keep_one_groups"] == [["a", "b"]]
    assert js["covariates"]["c"]["group"] is None
    assert js["covariates"]["a"]["group"] == ["a", "b"]
    text = format_study_text(r)
    assert "Collinear groups: {a, b, c} (keep one of {a, b}; the diagram needs c)" in text


@pytest.mark.parametrize("kept", ["a", "b"])
def test_saved_choice_in_a_mixed_group_is_kept_beside_the_needed_member(kept, tmp_path):
    from covariscope.model.project import load_project, save_project

    p, frame, _ = _mixed_group_study({"a|b": kept})
    # the choice survives the project file
    loaded = load_project(save_project(p, tmp_path / "mixed.json"))
    assert loaded.analysis.keep_choices == {"a|b": kept}
    r = run_study(loaded, table=_table(frame))
    assert r.recommended == tuple(sorted((kept, "c")))
    assert "the saved choice standing in for its collinear group" in r.recommended_reason
    for node in ("a", "b"):
        v = r.verdicts[node]
        assert (v.code, v.suggested) == ("keep_one_of", kept)
        assert "because it is the saved choice" in v.reason
    assert r.verdicts["c"].code == "adjust"
    assert r.estimates["recommended"] is not None
    # outside reference: statsmodels OLS of y on x and the recommended set, same rows
    ols = sm.OLS(frame["y"], sm.add_constant(frame[["x", *r.recommended]])).fit()
    assert r.estimates["recommended"].coef == pytest.approx(ols.params["x"], rel=1e-9)


def test_groups_the_diagram_needs_whole_are_no_keep_one_group():
    _, r = _two_path_confounders()
    js = study_to_json(r)
    assert js["collinear_groups"] == [["a", "b"]]
    assert js["keep_one_groups"] == []
    assert "Collinear groups: {a, b} (the diagram needs every member)" in format_study_text(r)


def test_keep_one_default_keeps_the_measure_that_carries_the_confounding():
    # Two measures of one confounder U, reliabilities 0.95 ("good") and 0.6
    # ("noisy"), joined by a proxy link; true effect 1.6 by construction.
    rng = np.random.default_rng(11)
    n = 4000
    u = rng.normal(size=n)
    good = u + rng.normal(scale=np.sqrt(1 / 0.95 - 1), size=n)
    noisy = u + rng.normal(scale=np.sqrt(1 / 0.6 - 1), size=n)
    x = 1.5 * u + rng.normal(size=n)
    y = 1.6 * x + 0.5 * u + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "good": good, "noisy": noisy})
    p = _project(
        ["x", "y", "good", "noisy"],
        [("good", "x"), ("good", "y"), ("x", "y")],
        proxies=[("good", "noisy")],
    )
    r = run_study(p, table=_table(frame))
    assert r.verdicts["noisy"].code == "keep_one_of"
    assert r.verdicts["noisy"].suggested == "good"
    assert "carries the most of the confounding" in r.verdicts["noisy"].reason
    assert r.recommended == ("good",)
    assert abs(r.estimates["recommended"].coef - 1.6) < 0.1
    # The analyst's saved choice still wins.
    p.analysis.keep_choices["good|noisy"] = "noisy"
    r = run_study(p, table=_table(frame))
    assert r.recommended == ("noisy",)
    assert r.verdicts["good"].suggested == "noisy"


def test_a_graph_search_that_stops_at_its_budget_is_said_in_the_messages() -> None:
    from covariscope.model import Diagram, Node, Project

    d = Diagram()
    rungs = 12  # 4,096 open backdoor paths: more than a search's budget
    names = ["x", "y", "p", *(f"{a}{i}" for a in "ab" for i in range(rungs))]
    for n in names:
        d.add_node(Node(n, kind={"x": "exposure", "y": "outcome"}.get(n, "covariate")))
    arrows = [("x", "y"), ("p", "y"), ("a0", "x"), ("b0", "x")]
    arrows += [(f"{a}{rungs - 1}", "y") for a in "ab"]
    arrows += [(f"{b}{i + 1}", f"{a}{i}") for i in range(rungs - 1) for a in "ab" for b in "ab"]
    for a, b in arrows:
        d.add_arrow(a, b)
    project = Project(d)
    project.analysis.proposed = ["p"]
    result = run_study(project)
    stopped = [m for m in result.messages if "work budget" in m]
    assert len(stopped) == 1  # the proposal review's search
    assert result.diagram.review.unsearched == ("p",)
