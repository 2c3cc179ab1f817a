"""The "Independence claims" panel and the suggested link it draws on the canvas."""

from __future__ import annotations

from covariscope.qt.canvas.items import ArrowItem, ProxyItem, SuggestionItem


def test_failed_claim_draws_a_suggested_link(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    panel = w.claims
    checks = w.result.diagram_checks
    assert panel.table.rowCount() == checks.tested + len(checks.untestable)
    first = panel.rows[0]
    assert first.failed
    assert "activity" in (first.a, first.b)
    assert str(checks.tested) in panel.summary.text()
    assert "read the strength" in panel.caution.text()
    panel.choose(0)
    hint = w.scene.suggestion
    assert isinstance(hint, SuggestionItem)
    assert not isinstance(hint, ArrowItem | ProxyItem)
    assert set(hint.pair) == {first.a, first.b}
    assert not hint.flags() & hint.GraphicsItemFlag.ItemIsSelectable
    assert "the data disagree" in panel.detail.toPlainText()
    assert "Perhaps a missing arrow" in panel.detail.toPlainText()
    # a claim the data do not contradict draws nothing
    passing = next(i for i, r in enumerate(panel.rows) if not r.failed)
    panel.choose(passing)
    assert w.scene.suggestion is None
    panel.choose(0)
    assert w.scene.suggestion is not None
    # a new result clears the suggestion; rearranging the diagram does not
    w.refresh_panels()
    assert w.scene.suggestion is not None
    w.claims.refresh(None)
    assert w.scene.suggestion is None
