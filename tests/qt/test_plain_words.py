"""The window's words about the proposed set: why it falls short, which
members may go "either one, not both", one name for the set, and a definition
behind every review-table header."""

from __future__ import annotations

from covariscope.model.commands import SetProposed
from covariscope.vocabulary import REVIEW_COLUMN_TERMS, ReviewColumn


def _propose(qtbot, w, ids, wait_for_analysis):
    w.push(SetProposed(w.project, ids))
    wait_for_analysis(qtbot, w)


def test_a_set_holding_a_mediator_says_why_it_falls_short(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    _propose(qtbot, w, ["age", "income", "inflam"], wait_for_analysis)
    text = w.paths.summary.text()
    # every backdoor path is closed, yet the set is not sufficient: say which and why
    assert w.paths.paths == []
    assert "not sufficient" in text
    assert "Airway inflammation, a mediator" in text
    assert "No open backdoor paths" not in text
    assert "0 open" not in text


def test_two_measures_of_one_confounder_read_either_one_not_both(
    qtbot, window, demo, wait_for_analysis
):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    _propose(qtbot, w, ["age", "income", "area"], wait_for_analysis)
    text = w.paths.summary.text()
    assert "either Area deprivation or Income, not both" in text
    assert "income" not in text  # labels, not column ids


def test_the_proposed_set_has_one_name_on_every_screen(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    strip = " ".join(label.text() for label in w.strip.findChildren(type(w.review.detail)))
    assert "Proposed set" in strip
    assert "Set chosen" not in strip
    headers = [
        w.review.table.horizontalHeaderItem(i).text() for i in range(w.review.table.columnCount())
    ]
    assert REVIEW_COLUMN_TERMS[ReviewColumn.PROPOSED].label in headers


def test_every_review_header_has_its_definition(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    table = w.review.table
    for i, column in enumerate(ReviewColumn):
        tip = table.horizontalHeaderItem(i).toolTip()
        assert tip.startswith(REVIEW_COLUMN_TERMS[column].explanation), column
    change = table.horizontalHeaderItem(list(ReviewColumn).index(ReviewColumn.CHANGE_ADDED))
    assert "100 × (b_with − b_without) / |b_without|" in change.toolTip()
    assert "positive change means" in change.toolTip()
    # a ratio measure: the header gives the ratio-scale formula and its sign convention
    w.set_family("logistic")
    wait_for_analysis(qtbot, w)
    tip = change.toolTip()
    assert "exp(b_with − b_without) − 1" in tip
    assert "a ratio below 1 moves toward 1" in tip
