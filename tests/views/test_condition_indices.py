"""Condition indices and variance-decomposition proportions reach the
`check` JSON and text and the diagnostics dialog's full-model figures."""

from __future__ import annotations

import numpy as np
import statsmodels.api as sm

from covariscope.analysis.collinearity import collinearity_report
from covariscope.analysis.linear import linear_summary
from covariscope.views.check_json import collinearity_json
from covariscope.views.check_text import condition_index_line
from covariscope.views.diagnostics import condition_rows


def _report():
    # Longley's macroeconomic data: the textbook collinear design (Longley 1967,
    # shipped with statsmodels); its largest BKW index is in the tens of thousands
    x = sm.datasets.longley.load_pandas().exog.to_numpy(float)
    names = [f"c{j}" for j in range(x.shape[1])]
    return collinearity_report(linear_summary(x), range(x.shape[1]), names, names)


def test_json_lists_every_dimension_ascending_with_its_proportions():
    report = _report()
    out = collinearity_json(report)
    assert out is not None
    indices = out["condition_indices"]
    assert indices == sorted(indices)
    assert indices[0] == 1.0
    assert len(out["dimensions"]) == len(indices) == len(out["terms"])
    for dim in out["dimensions"]:
        assert set(dim["proportions"]) == set(out["terms"])
    flagged = [d for d in out["dimensions"] if d["flagged"]]
    assert flagged
    assert all(d["index"] >= 30 and len(d["nodes"]) >= 2 for d in flagged)
    # each term's proportions sum to 1 over the dimensions (BKW's definition)
    for term in out["terms"]:
        assert np.isclose(sum(d["proportions"][term] for d in out["dimensions"]), 1.0)


def test_text_and_dialog_name_the_flagged_dimensions():
    report = _report()
    line = condition_index_line(report)
    assert line.startswith("Condition indices (full model, ascending): 1.0, ")
    assert "flagged at the guide 30" in line
    top = report.flagged[-1]
    rows = dict(condition_rows(report, top.nodes[-1], "it"))
    assert any(k.startswith("Flagged dimension, index") for k in rows)
    assert rows["Largest condition index, full model"].endswith("(guide 30)")
    quiet = dict(condition_rows(report, "nobody", "X"))
    assert quiet["Flagged dimensions holding X"] == "none (guide 30)"
