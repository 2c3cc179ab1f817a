"""Progress through the tables that fit one model per covariate after the
evidence: effect modification and the residual-confounding check (issue 12,
point 6).  Every fit is announced, in order, and the run's cancel stops the
table between two fits.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.analysis.evidence import EvidenceCancelledError
from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import run_study
from covariscope.study.cache import StudyCache

COVARIATES = ("c1", "c2", "c3", "m")


def _kind(node: str) -> str:
    return {"x": "exposure", "y": "outcome"}.get(node, "covariate")


def _study() -> tuple[object, LoadedTable]:
    """Three continuous confounders and a binary one (invented data)."""
    rng = np.random.default_rng(12)
    n = 1500
    c1, c2, c3 = (rng.normal(size=n) for _ in range(3))
    m = rng.integers(0, 2, size=n)
    x = 0.5 * c1 + 0.4 * c2 + 0.3 * c3 + 0.3 * m + rng.normal(size=n)
    y = x + c1 + c2 + c3 + 0.5 * m + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "c1": c1, "c2": c2, "c3": c3, "m": m})
    nodes = ["x", "y", *COVARIATES]
    arrows = [("x", "y"), *((c, "x") for c in COVARIATES), *((c, "y") for c in COVARIATES)]
    project = project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": [{"id": v, "kind": _kind(v), "column": v} for v in nodes],
                "arrows": [{"from": a, "to": b} for a, b in arrows],
            },
            "analysis": {"family": "linear", "column_types": {"m": "binary"}},
        }
    )
    return project, LoadedTable(frame, Path("progress.csv"), "text", "2" * 64)


def _models(
    said: list[tuple[float, str]], words: str, unit: str = "model"
) -> list[tuple[int, int]]:
    pattern = re.compile(rf"{words}: {unit} (\d+) of (\d+)$")
    return [
        (int(m.group(1)), int(m.group(2))) for _, t in said if (m := pattern.match(t)) is not None
    ]


def test_each_fit_of_both_tables_is_announced_in_order():
    project, table = _study()
    said: list[tuple[float, str]] = []
    result = run_study(project, table=table, progress=lambda f, t: said.append((f, t)))
    modification = _models(said, "Checking effect modification")
    residual = _models(said, "Checking residual confounding")
    # one model per examined candidate, after the model they extend (fitted first)
    n_mod = len(result.modification) + 1
    assert len(result.modification) == len(COVARIATES)
    assert modification == [(k, n_mod) for k in range(1, n_mod + 1)]
    # two models (linear, spline) per continuous confounder, after the same first model
    n_res = 2 * len(result.residual_confounding) + 1
    assert sorted(result.residual_confounding) == ["c1", "c2", "c3"]
    assert residual == [(k, n_res) for k in range(1, n_res + 1)]
    fractions = [f for f, _ in said]
    assert fractions == sorted(fractions)  # the bar never goes back
    first = next(i for i, (_, t) in enumerate(said) if t.startswith("Checking effect"))
    assert all(not t.startswith("Fitting model") for _, t in said[first:])


def test_a_warm_cache_announces_no_fit():
    project, table = _study()
    cache = StudyCache()
    run_study(project, table=table, cache=cache)
    said: list[tuple[float, str]] = []
    run_study(project, table=table, cache=cache, progress=lambda f, t: said.append((f, t)))
    assert not [t for _, t in said if ": model " in t]


@pytest.mark.parametrize("words", ["Checking effect modification", "Checking residual confounding"])
def test_cancel_stops_the_table_between_two_fits(words):
    project, table = _study()
    cache = StudyCache()
    said: list[str] = []
    stop = [False]

    def progress(fraction: float, text: str) -> None:
        said.append(text)
        if text == f"{words}: model 2 of {text.rsplit(' ', 1)[-1]}":
            stop[0] = True  # a newer edit arrives while model 2 is being fitted

    with pytest.raises(EvidenceCancelledError):
        run_study(project, table=table, cache=cache, progress=progress, cancel=lambda: stop[0])
    assert said[-1].startswith(f"{words}: model 2 of")  # model 3 never started
    stage = "modification" if "modification" in words else "residual"
    assert not cache.entries(stage)  # nothing half-done is kept


def test_diagram_checks_announce_each_claim_and_a_cancel_keeps_no_partial_checks():
    # c1..c3 and m each cause x and y and nothing else: every pair of them is a
    # claim of independence the data are asked about
    project, table = _study()
    said: list[tuple[float, str]] = []
    fresh = run_study(project, table=table, progress=lambda f, t: said.append((f, t)))
    assert fresh.diagram_checks is not None
    claims = _models(said, "Checking the diagram against the data", unit="claim")
    n = fresh.diagram_checks.tested
    assert n >= 6
    assert claims == [(k, n) for k in range(1, n + 1)]
    cache = StudyCache()
    stop = [False]

    def progress(fraction: float, text: str) -> None:
        if text.endswith(f"claim 2 of {n}"):
            stop[0] = True  # a newer edit arrives while claim 2 is tested

    with pytest.raises(EvidenceCancelledError):
        run_study(project, table=table, cache=cache, progress=progress, cancel=lambda: stop[0])
    again = run_study(project, table=table, cache=cache)  # the same diagram, not cancelled
    assert again.diagram_checks is not None
    assert again.diagram_checks.tested == n
    assert not again.diagram_checks.warnings
