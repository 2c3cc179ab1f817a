"""Effect modification through the whole study: a planted modifier is flagged
and shown (JSON, review table, page line), a planted pure confounder is not,
and no verdict changes because of it."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import numpy as np
import pandas as pd

from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import run_study
from covariscope.views.check_json import study_to_json
from covariscope.views.check_text import format_study_text
from covariscope.views.modification import NOT_CONFOUNDING, modification_view
from covariscope.views.report_content import build_content
from covariscope.views.review import review_rows

SCHEMA = Path(__file__).resolve().parents[2] / "src/covariscope/schemas/check.schema.json"


def _study(family: str = "logistic"):
    # Invented simulation: c confounds x → y; m (binary) triples the exposure's
    # log odds ratio in its upper level and does not confound (independent of x).
    rng = np.random.default_rng(7)
    n = 4000
    c = rng.normal(size=n)
    m = rng.integers(0, 2, n)
    x = (rng.random(n) < 1 / (1 + np.exp(-c))).astype(int)
    lin = -1.0 + 0.3 * x + 0.9 * x * m + 0.3 * m + 0.6 * c
    y = (rng.random(n) < 1 / (1 + np.exp(-lin))).astype(int)
    frame = pd.DataFrame({"x": x, "m": m, "c": c, "y": y})
    nodes = [
        {"id": k, "kind": {"x": "exposure", "y": "outcome"}.get(k, "covariate"), "column": k}
        for k in ("x", "y", "c", "m")
    ]
    project = project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": nodes,
                "arrows": [
                    {"from": a, "to": b}
                    for a, b in (("c", "x"), ("c", "y"), ("x", "y"), ("m", "y"))
                ],
            },
            "analysis": {
                "family": family,
                "proposed": ["c"],
                "column_types": {"x": "binary", "m": "binary", "y": "binary"},
            },
        }
    )
    table = LoadedTable(frame, Path("synthetic.csv"), "text", "0" * 64)
    return project, run_study(project, table=table), frame


def test_planted_modifier_is_flagged_and_the_confounder_is_not():
    project, result, frame = _study()
    assert result.recommended == ("c",)
    mod = result.modification
    assert mod["m"].flagged
    assert not mod["c"].flagged
    assert mod["m"].reri is not None  # binary exposure and modifier, odds ratios
    # modification changes no verdict
    assert result.verdicts["m"].code == "optional_precision"
    assert result.verdicts["c"].code == "adjust"

    js = study_to_json(result)
    jsonschema.validate(js, json.loads(SCHEMA.read_text()))
    m = js["modification"]["m"]
    assert m["form"] == "model"
    assert m["flagged"] is True
    assert [s["n"] for s in m["strata"]] == [int((frame.m == 0).sum()), int((frame.m == 1).sum())]
    assert m["interaction_df"] == 1
    assert m["reri_ci"][0] < m["reri"] < m["reri_ci"][1]

    rows = {r.node: r for r in review_rows(project, result)}
    assert rows["m"].modifier.startswith("yes")
    assert rows["c"].modifier == "no"

    text = format_study_text(result)
    assert "Effect modification (not confounding):\n  - m modifies" in text

    page = build_content(result, project)
    assert len(page.modification) == 1
    assert page.modification[0].startswith("m modifies the exposure's effect")
    assert "Not confounding" in page.modification[0]

    view = modification_view(mod["m"], "m", result.effect_measure, result.thresholds)
    assert view is not None
    assert NOT_CONFOUNDING in view.summary
    assert [p[4] for p in view.points] == [s.n for s in mod["m"].strata]


def test_the_checks_start_from_the_evidence_tables_fit_not_a_fit_of_their_own(monkeypatch):
    from covariscope.analysis import column_fit

    made: list[object] = []
    real = column_fit.base_fit

    def counting(*args, **kw):
        made.append(args)
        return real(*args, **kw)

    monkeypatch.setattr(column_fit, "base_fit", counting)
    _, result, _ = _study()
    assert result.modification["m"].flagged  # the checks ran
    assert made == []
