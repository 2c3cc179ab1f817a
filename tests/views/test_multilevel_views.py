"""A multi-level exposure in every rendering: strip, review table, dialog, page, check text."""

from __future__ import annotations

from pathlib import Path

import pytest

from covariscope.model.project import load_project
from covariscope.study import run_study
from covariscope.views.check_text import format_study_text
from covariscope.views.diagnostics import node_diagnostics
from covariscope.views.estimates import estimate_cells
from covariscope.views.report_content import build_content
from covariscope.views.review import review_rows

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "demo_levels_project.json"


@pytest.fixture(scope="module")
def study():
    project = load_project(DEMO)
    return project, run_study(project)


def test_strip_names_the_contrast_and_lists_every_one(study):
    _, result = study
    cells = {c.key: c for c in estimate_cells(result)}
    rec = result.estimates["recommended"]
    assert cells["recommended"].ci.startswith(f"{rec.contrast} vs low;")
    for level in ("high", "middle"):
        assert f"{level} vs low:" in cells["recommended"].tooltip


def test_review_row_names_the_contrast_that_moved_most(study):
    project, result = study
    rows = {r.node: r for r in review_rows(project, result)}
    joint = result.evidence.covariates["age"].joint
    assert rows["age"].added_change.endswith(f"({joint.moved_most})")
    assert "high vs low: added" in rows["age"].detail
    assert "middle vs low: added" in rows["age"].detail
    assert "joint Wald test" in rows["age"].detail


def test_dialog_shows_one_row_per_contrast(study):
    project, result = study
    view = node_diagnostics(project, result, "age")
    titles = [m.model for m in view.models]
    for level in ("high", "middle"):
        for model in ("Crude", "Crude + Age", "Full", "Full − Age"):
            assert f"{model}: {level} vs low" in titles
    figures = dict(view.figures)
    assert figures["Contrast that moved most"].startswith(
        result.evidence.covariates["age"].joint.moved_most
    )
    assert "(2 df)" in figures["Joint Wald test of the exposure in crude + Age"]


def test_page_lists_each_contrast(study):
    project, result = study
    content = build_content(result, project)
    names = [r.name for r in content.estimates]
    assert names == [
        f"{model}: {level}"
        for model in ("Crude", "Proposed set", "Recommended set")
        for level in ("high", "middle")
    ]
    assert content.estimates_caption.endswith("each level vs low")


def test_check_text_lists_each_contrast(study):
    _, result = study
    text = format_study_text(result)
    assert "recommended  each level against low:" in text
    assert "    high       mean difference" in text


def test_keep_one_reason_names_the_contrast_it_compares(study):
    _, result = study
    reason = result.verdicts[result.verdicts["income"].suggested].reason
    assert "gives an exposure estimate (high vs low) of" in reason
