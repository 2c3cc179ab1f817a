"""Review table rows: the same numbers and verdicts as ``check --json``."""

from __future__ import annotations

import csv
import io

from covariscope.model.diagram import Node
from covariscope.model.project import Project
from covariscope.views.format import DASH, number, percent
from covariscope.views.review import (
    REVIEW_COLUMNS,
    open_paths,
    paths_summary,
    proposed_after_toggle,
    review_rows,
    role_words,
    rows_to_csv,
)


def test_rows_match_check_json(demo_study):
    project, result, js = demo_study
    rows = {r.node: r for r in review_rows(project, result)}
    assert set(rows) == {n.id for n in project.diagram.covariates}
    for node_id, c in js["covariates"].items():
        row = rows[node_id]
        assert row.verdict == c["label"]
        assert row.reason == c["reason"]
        assert row.role == role_words(c["role"])
        if c.get("added"):
            assert row.added_change == percent(c["added"]["change_pct"])
            assert row.se_inflation == percent(c["added"]["se_inflation_pct"])
        if c.get("dropped"):
            assert row.dropped_change == percent(c["dropped"]["change_pct"])
        if c.get("vif") is not None:
            assert row.vif == number(c["vif"])
        assert row.proposed == (node_id in js["proposed"])


def test_rows_before_analysis_are_pending():
    p = Project()
    p.diagram.add_node(Node("x", kind="exposure"))
    p.diagram.add_node(Node("c"))
    p.diagram.add_node(Node("u", measured=False))
    rows = review_rows(p, None)
    assert [r.verdict for r in rows] == ["Pending", "Unmeasured"]
    assert rows[0].added_change == DASH


def test_proposed_toggle_keeps_order():
    p = Project()
    for n in ("a", "b", "c"):
        p.diagram.add_node(Node(n))
    p.set_proposed(["b"])
    assert proposed_after_toggle(p, "a", True) == ["b", "a"]
    assert proposed_after_toggle(p, "b", False) == []
    assert proposed_after_toggle(p, "b", True) is None


def test_csv_has_a_row_per_covariate(demo_study):
    project, result, js = demo_study
    text = rows_to_csv(review_rows(project, result))
    table = list(csv.reader(io.StringIO(text)))
    assert table[0][1 : 1 + len(REVIEW_COLUMNS)] == list(REVIEW_COLUMNS)
    assert {r[0] for r in table[1:]} == set(js["covariates"])


def _labels(project):
    return {n.id: n.label for n in project.diagram.nodes}


def test_paths_summary_says_why_a_set_falls_short(make):
    project = make.project(3)  # covariate 1, a confounder, is not proposed
    result = make.result(project, data=False)
    assert open_paths(result) == [("shift", "c1", "sbp")]
    text = paths_summary(result, _labels(project))
    assert text.startswith("The proposed set is not sufficient")
    assert text.endswith(" Choose a path to see it on the diagram.")


def test_paths_summary_names_what_a_sufficient_set_can_do_without(make):
    project = make.project(3)
    project.analysis.proposed = ["c0", "c1", "c2"]  # covariate 0 closes covariate 2's path
    result = make.result(project, data=False)
    assert open_paths(result) == []
    assert paths_summary(result, _labels(project)) == (
        "The proposed set is sufficient: it closes every backdoor path. "
        "Unnecessary in it: Covariate number 2."
    )


def test_paths_before_an_analysis():
    assert open_paths(None) == []
    assert paths_summary(None, {}) == "No analysis yet."
