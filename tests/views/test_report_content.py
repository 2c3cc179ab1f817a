"""The rationale's words and numbers, built without Qt."""

from __future__ import annotations

import datetime
import hashlib
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope import __version__
from covariscope.analysis.fits import Fit
from covariscope.views.report_content import (
    build_content,
    estimate_decimals,
    format_interval,
    format_number,
    format_percent,
    name_nodes,
)
from covariscope.vocabulary import CAUTIONS


def test_content_module_does_not_load_qt():
    code = (
        "import sys; import covariscope.views.report_content; "
        "print(any(m.startswith('PySide6') for m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


@pytest.mark.parametrize(
    ("value", "decimals", "text"),
    [(1.23456, 2, "1.23"), (-0.004, 2, "0.00"), (-1.5, 3, "-1.500"), (float("nan"), 2, "n/a")],
)
def test_format_number(value, decimals, text):
    assert format_number(value, decimals) == text


def test_formats_match_python_rounding():
    assert format_percent(12.345) == f"{12.345:.1f}%"
    assert format_interval(-1.97286, -1.59488, 2) == "-1.97 to -1.59"


def test_decimals_follow_the_narrowest_interval():
    assert estimate_decimals([0.84], ratio=False) == 2
    assert estimate_decimals([0.04], ratio=True) == 3
    assert estimate_decimals([120.0], ratio=False) == 2
    assert estimate_decimals([], ratio=False) == 2


def _crude_by_least_squares(project, result) -> float:
    """The crude mean difference straight from the file on the analytic
    sample, by numpy least squares (an outside reference for the page's number)."""
    frame = pd.read_csv(project.data.path)
    columns = [n.column for n in project.diagram.nodes if n.column]
    frame = frame[columns].dropna()
    assert len(frame) == result.sample.used
    design = np.column_stack([np.ones(len(frame)), frame["shift"]])
    coefs, *_ = np.linalg.lstsq(design, frame["sbp"].to_numpy(), rcond=None)
    return float(coefs[1])


def test_build_content_holds_every_section(make):
    project = make.project(8, 50)
    result = make.result(project)
    c = build_content(result, project, today=datetime.date(2024, 5, 1))
    assert c.question == "Effect of Night-shift work on Systolic blood pressure"
    assert "mean difference" in c.measure
    assert "linear regression" in c.measure
    sha = hashlib.sha256(Path(project.data.path).read_bytes()).hexdigest()
    assert c.data[0] == f"File: cohort.csv  (SHA-256 {sha[:12]})"
    assert "2,310 of 2,500" in c.data[1]
    # rows lost name the bound column by its node's label
    assert "Covariate number 1 120" in c.data[2]
    assert "Cov 3 70" in c.data[2]
    assert "NOT sufficient" in c.adjustment[0]
    assert any(line.startswith("Open path: Night-shift work") for line in c.adjustment)
    assert [r.name for r in c.estimates] == ["Crude", "Proposed set", "Recommended set"]
    assert c.adjustment[0].startswith("Proposed set: ")
    assert c.estimates[0].estimate == format_number(
        _crude_by_least_squares(project, result), c.decimals
    )
    assert len(c.covariates) == 8
    assert c.covariates[0].verdict == result.verdicts["c0"].label
    assert c.covariates[6].verdict == "Adjust"
    assert c.covariates[0].sets == "P R"
    assert c.covariates[6].sets == "P R"
    assert c.covariates[1].sets == "R"  # the confounder the proposed set left out
    assert c.covariates[4].change == "—"  # unmeasured: no data evidence
    assert c.collinearity == ("Cov 0, Covariate number 2: kept Cov 0.",)
    assert f"E-value: {format_number(result.evalue.estimate, 2)}" in c.evalue
    assert "change in estimate 10%" in c.thresholds
    assert "as guides" in c.thresholds
    assert c.cautions == CAUTIONS
    assert (
        c.footer == f"2024-05-01 · Covariscope {__version__} · project night_shift.covariscope.json"
    )
    assert sum(n.adjusted for n in c.diagram.nodes) == len(project.proposed)


def test_ratio_family_shows_ratios(make):
    project = make.project(4)
    result = make.result(project, "logistic")
    c = build_content(result, project)
    crude = result.estimates["crude"]
    assert c.ratio
    assert c.estimates[0].estimate == format_number(crude.ratio, c.decimals)
    lo, hi = crude.ratio_ci
    assert c.estimates[0].interval == format_interval(lo, hi, c.decimals)
    added = result.evidence.covariates["c0"].added
    # the change is read on the ratio scale, not as the change of the log odds ratio
    assert c.covariates[0].change == format_percent(added.change_pct_ratio)
    assert format_percent(added.change_pct_ratio) != format_percent(added.change_pct)
    assert "odds ratio" in c.measure


def test_graph_only_result_says_what_is_missing(make):
    project = make.project(3)
    result = make.result(project, data=False)
    c = build_content(result, project)
    assert c.data == ("No data bound: the page shows what the diagram says only.",)
    assert all(r.estimate == "n/a" for r in c.estimates)
    assert "not available" in c.evalue


def test_a_model_that_failed_says_why(make):
    project = make.project(4)
    result = make.result(project)
    failed = Fit.failed("linear", ("c0",), 2310, "The model could not be fitted:\n singular.")
    result = replace(result, estimates={**result.estimates, "proposed": failed})
    c = build_content(result, project)
    row = c.estimates[1]
    assert (row.name, row.estimate, row.interval, row.n) == (
        "Proposed set",
        "n/a",
        "The model could not be fitted: singular.",
        "",
    )


def test_findings_and_messages_use_labels(make):
    project = make.project(8)
    result = make.result(project)
    result = replace(
        result,
        disagreements=("c1: Review: the diagram calls it unrelated.",),
        sample=replace(result.sample, message="2,310 of 2,500 rows used."),
        messages=(
            "2,310 of 2,500 rows used.",  # the Data section says it
            "The proposed set {c0, c2} is not sufficient: it leaves 1 backdoor path open.",
            "Ties in {c0, c1} follow shift – c0|c2 – sbp.",
        ),
    )
    c = build_content(result, project)
    assert c.disagreements == ("Covariate number 1: the diagram calls it unrelated.",)
    result = replace(result, disagreements=("Covariate number 1: Review: it moves the estimate.",))
    c = build_content(result, project)
    assert c.disagreements == ("Covariate number 1: it moves the estimate.",)
    # the adjustment section already says the set does not suffice
    assert c.messages == (
        "Ties in {Cov 0, Covariate number 1} follow "
        "Night-shift work – Cov 0 | Covariate number 2 – Systolic blood pressure.",
    )


def test_real_disagreement_names_the_covariate_by_label(make):
    # covariate 7 moves the outcome in the data, which the diagram does not say
    project = make.project(8)
    result = make.result(project)
    c = build_content(result, project)
    assert result.disagreements
    assert c.disagreements
    assert all(line.startswith("Covariate number 7: ") for line in c.disagreements)


def test_name_nodes_leaves_words_that_are_not_ids():
    labels = {"age": "Age", "x": "Dust"}
    assert name_nodes("{age, smoking}", labels) == "{age, smoking}"
    assert name_nodes("age – x and well-known", labels) == "Age – Dust and well-known"
