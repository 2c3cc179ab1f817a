"""The window never writes an export over a file the project reads."""

from __future__ import annotations

import pytest


@pytest.mark.parametrize(
    ("action", "name"),
    [
        ("pdf", "demo_cohort.csv"),
        ("pdf", "demo_project.json"),
        ("csv", "demo_cohort.csv"),
        ("graphml", "demo_project.json"),
    ],
)
def test_exports_refuse_the_projects_own_files(
    qtbot, window, demo, wait_for_analysis, action, name
):
    pytest.importorskip("covariscope.report.painter")
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    before = {p.name: p.read_bytes() for p in demo.iterdir()}
    target = str(demo / name)
    if action == "pdf":
        assert not w.save_rationale_pdf(target)
    elif action == "csv":
        w.prompts.answers["save_path"] = target
        w.actions_.export_csv.trigger()
    else:
        from covariscope.qt.output import export_diagram

        assert not export_diagram(w, "graphml", target)
    assert any("never overwrites" in text for _, text in w.prompts.said), w.prompts.said
    assert {p.name: p.read_bytes() for p in demo.iterdir()} == before
    assert w.isVisible()
