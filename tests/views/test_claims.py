"""Rows of the "Independence claims" panel, without a window."""

from __future__ import annotations

from pathlib import Path

from covariscope.model.project import load_project
from covariscope.study import run_study
from covariscope.views.claims import claims_view

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "demo_project.json"


def test_failed_claims_first_by_strength_then_untested() -> None:
    result = run_study(load_project(DEMO))
    view = claims_view(result)
    checks = result.diagram_checks
    assert len(view.rows) == checks.tested + len(checks.untestable)
    failed = [r for r in view.rows if r.failed]
    assert len(failed) == checks.failed
    assert view.rows[: len(failed)] == tuple(failed)
    sizes = [r.strength.size for r in checks.ranked() if r.failed]
    assert sizes == sorted(sizes, reverse=True)
    top = view.rows[0]
    assert top.pair.startswith("Leisure activity") or top.pair.endswith("Leisure activity")
    assert top.sentence.startswith("The diagram says")
    assert "the data disagree" in top.sentence
    assert top.suggestion.startswith("Perhaps a missing arrow")
    assert top.arrows
    assert all(not r.arrows for r in view.rows if not r.failed)
    assert "Holm's step-down correction" in view.summary
    assert "no proof" in view.caution


def test_without_data_the_panel_says_what_is_needed() -> None:
    project = load_project(DEMO)
    project.set_data(None)
    view = claims_view(run_study(project))
    assert view.rows == ()
    assert "once data are bound" in view.summary
