"""Point 1 as the window shows it: with two measures of one confounder of
known reliability, the review table keeps the better measure by default and
the recommended estimate lands near the true effect; the user's choice wins."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd

VERDICT = 7  # the review table's verdict column (REVIEW_COLUMNS order)


def _write_study(folder):
    # reliabilities 0.95 ("good") and 0.6 ("noisy"); true effect 1.6 by construction
    rng = np.random.default_rng(11)
    n = 4000
    u = rng.normal(size=n)
    good = u + rng.normal(scale=np.sqrt(1 / 0.95 - 1), size=n)
    noisy = u + rng.normal(scale=np.sqrt(1 / 0.6 - 1), size=n)
    x = 1.5 * u + rng.normal(size=n)
    y = 1.6 * x + 0.5 * u + rng.normal(size=n)
    pd.DataFrame({"x": x, "y": y, "good": good, "noisy": noisy}).to_csv(
        folder / "measures.csv", index=False
    )
    nodes = [
        {"id": "x", "label": "Exposure X", "kind": "exposure", "column": "x", "x": 0, "y": 0},
        {"id": "y", "label": "Outcome Y", "kind": "outcome", "column": "y", "x": 300, "y": 0},
        {"id": "good", "label": "Good measure", "column": "good", "x": 150, "y": -150},
        {"id": "noisy", "label": "Noisy measure", "column": "noisy", "x": 150, "y": 150},
    ]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": nodes,
            "arrows": [
                {"from": "good", "to": "x"},
                {"from": "good", "to": "y"},
                {"from": "x", "to": "y"},
            ],
            "proxies": [{"a": "good", "b": "noisy"}],
        },
        "data": {"path": "measures.csv"},
        "analysis": {"family": "linear", "proposed": []},
    }
    path = folder / "measures.json"
    path.write_text(json.dumps(project), "utf-8")
    return path


def _verdict_cell(w, node):
    row = next(i for i, r in enumerate(w.review.rows) if r.node == node)
    return w.review.table.item(row, VERDICT).text()


def test_keep_one_default_keeps_the_better_measure_in_the_window(
    qtbot, window, tmp_path, wait_for_analysis
):
    w = window
    assert w.io.open(str(_write_study(tmp_path)))
    wait_for_analysis(qtbot, w)
    assert w.result.recommended == ("good",)
    assert _verdict_cell(w, "noisy") == "Keep one of: Good measure kept"
    assert _verdict_cell(w, "good") == "Keep one of: this one kept"
    assert abs(w.result.estimates["recommended"].coef - 1.6) < 0.1
    w.review.select_node("noisy")
    assert "carries the most of the confounding" in w.review.detail.text()
    # the user's choice wins and is saved with the project
    w.keep_member("good|noisy", "noisy")
    wait_for_analysis(qtbot, w)
    assert w.result.recommended == ("noisy",)
    assert _verdict_cell(w, "good") == "Keep one of: Noisy measure kept (your choice)"
    assert w.project.analysis.keep_choices == {"good|noisy": "noisy"}
