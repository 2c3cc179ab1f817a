"""The "Independence claims" panel and the suggested link it draws on the canvas.

A small study (five continuous variables, 400 rows) keeps the analysis quick:
the diagram draws no arrow between ``a`` and ``b``, but the data link them.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import QPointF

from covariscope.qt.canvas.items import ArrowItem, ProxyItem, SuggestionItem


@pytest.fixture
def small_study(tmp_path):
    rng = np.random.default_rng(5)
    n = 400
    a = rng.normal(size=n)
    b = 0.6 * a + rng.normal(size=n)  # the link the diagram lacks
    c = rng.normal(size=n)
    x = a + c + rng.normal(size=n)
    y = x + b + c + rng.normal(size=n)
    pd.DataFrame({"a": a, "b": b, "c": c, "x": x, "y": y}).to_csv(tmp_path / "s.csv", index=False)
    kinds = {"x": "exposure", "y": "outcome"}
    nodes = [
        {
            "id": k,
            "label": k.upper(),
            "kind": kinds.get(k, "covariate"),
            "column": k,
            "x": 120.0 * i,
            "y": 60.0 * (i % 2),
        }
        for i, k in enumerate("abcxy")
    ]
    arrows = [("a", "x"), ("c", "x"), ("c", "y"), ("x", "y"), ("b", "y")]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": [{"from": u, "to": v} for u, v in arrows]},
        "data": {"path": "s.csv"},
        "analysis": {"family": "linear", "proposed": ["c"]},
    }
    path = tmp_path / "s.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    return path


def test_failed_claim_draws_a_suggested_link(qtbot, window, small_study, wait_for_analysis):
    w = window
    w.io.open(str(small_study))
    wait_for_analysis(qtbot, w)
    panel = w.claims
    dock = w.docks["claims"]
    # closed at first; the View menu opens it as a tab beside the covariate review
    assert not dock.isVisible()
    assert dock.toggleViewAction() in w.actions_.view_menu.actions()
    dock.toggleViewAction().trigger()
    assert dock.isVisible()
    assert dock in w.tabifiedDockWidgets(w.docks["review"])
    checks = w.result.diagram_checks
    assert panel.table.rowCount() == checks.tested + len(checks.untestable)
    first = panel.rows[0]
    assert first.failed
    assert (first.a, first.b) == ("a", "b")
    assert str(checks.tested) in panel.summary.text()
    assert "read the strength" in panel.caution.text()
    panel.choose(0)
    hint = w.scene.suggestion
    assert isinstance(hint, SuggestionItem)
    assert not isinstance(hint, ArrowItem | ProxyItem)
    assert set(hint.pair) == {"a", "b"}
    assert not hint.flags() & hint.GraphicsItemFlag.ItemIsSelectable
    # the bow bends to the side away from the other nodes (so its "?" stays clear)
    centres = [w.scene.nodes[n].pos() for n in w.scene.nodes if n not in ("a", "b")]

    def clearance(side: float) -> float:
        d = hint.p2 - hint.p1
        length = (d.x() ** 2 + d.y() ** 2) ** 0.5
        bow = min(0.18 * length, 40.0) * side / length
        mid = (hint.p1 + hint.p2) * 0.5 + QPointF(-d.y() * bow, d.x() * bow) * 0.5
        return min(((mid - c).x() ** 2 + (mid - c).y() ** 2) ** 0.5 for c in centres)

    assert clearance(hint.side) == max(clearance(1.0), clearance(-1.0))
    assert "the data disagree" in panel.detail.toPlainText()
    assert "Perhaps a missing arrow" in panel.detail.toPlainText()
    # a claim the data do not contradict draws nothing
    passing = next(i for i, r in enumerate(panel.rows) if not r.failed)
    panel.choose(passing)
    assert w.scene.suggestion is None
    panel.choose(0)
    assert w.scene.suggestion is not None
    # the same result again keeps the suggestion; a new one clears it
    w.refresh_panels()
    assert w.scene.suggestion is not None
    w.claims.refresh(None)
    assert w.scene.suggestion is None


def test_correction_and_limit_are_set_from_the_panel(qtbot, window, small_study, wait_for_analysis):
    w = window
    w.io.open(str(small_study))
    wait_for_analysis(qtbot, w)
    panel = w.claims
    assert panel.correction.currentData() == "holm"
    panel.correction.setCurrentIndex(panel.correction.findData("bh"))
    panel.correction.activated.emit(panel.correction.currentIndex())
    assert w.project.analysis.claim_correction == "bh"
    wait_for_analysis(qtbot, w)
    assert w.result.diagram_checks.method == "bh"
    panel.limit.setValue(2)
    panel.limit.editingFinished.emit()
    assert w.project.analysis.claim_limit == 2
    wait_for_analysis(qtbot, w)
    assert w.result.diagram_checks.tested == 2
    assert "more not tested" in panel.summary.text()
