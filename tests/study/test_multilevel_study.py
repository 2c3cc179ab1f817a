"""A multi-level exposure through the study: the reference level is the project's
choice (as for covariates), and changing it re-expresses every contrast."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import run_study


def _frame(n: int = 1200, seed: int = 5) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    c = rng.normal(size=n)
    x = np.where(
        c + rng.normal(size=n) > 0.5, "heavy", np.where(rng.random(n) < 0.5, "light", "none")
    )
    y = np.select([x == "light", x == "heavy"], [0.5, 1.5], 0.0) + c + rng.normal(size=n)
    return pd.DataFrame({"x": x, "c": c, "y": y})


def _project(reference: str):
    nodes = [
        {"id": "x", "kind": "exposure", "column": "x"},
        {"id": "y", "kind": "outcome", "column": "y"},
        {"id": "c", "kind": "covariate", "column": "c"},
    ]
    return project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": nodes,
                "arrows": [{"from": a, "to": b} for a, b in (("c", "x"), ("c", "y"), ("x", "y"))],
            },
            "analysis": {
                "family": "linear",
                "proposed": ["c"],
                "column_types": {"x": "categorical"},
                "reference_levels": {"x": reference},
            },
        }
    )


@pytest.mark.parametrize("reference", ["none", "heavy"])
def test_the_chosen_reference_sets_the_contrasts(reference):
    frame = _frame()
    table = LoadedTable(frame, Path("synthetic.csv"), "text", "0" * 64)
    result = run_study(_project(reference), table=table)
    assert result.exposure_levels[0] == reference
    fit = result.estimates["recommended"]
    others = [v for v in sorted(frame["x"].unique()) if v != reference]
    assert [c.level for c in fit.contrasts] == others
    # Reference: statsmodels OLS with the same treatment coding
    X = sm.add_constant(
        np.column_stack([*(frame["x"] == v for v in others), frame["c"]]).astype(float)
    )
    ref = sm.OLS(frame["y"].to_numpy(), X).fit()
    for j, c in enumerate(fit.contrasts):
        assert c.coef == pytest.approx(ref.params[1 + j], rel=1e-8)
        assert c.se == pytest.approx(ref.bse[1 + j], rel=1e-8)
    assert result.verdicts["c"].code == "adjust"
    assert result.evidence.covariates["c"].joint.moved_most in others
