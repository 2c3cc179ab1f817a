"""Diagnostics state: the dialog's numbers are those of ``check --json``."""

from __future__ import annotations

import pytest

from covariscope.views.diagnostics import (
    checklist,
    endpoint_diagnostics,
    node_diagnostics,
    node_labels,
)
from covariscope.views.format import number, percent


@pytest.mark.parametrize("node", ["age", "income", "screen"])
def test_numbers_match_json(demo_study, node):
    project, result, js = demo_study
    c = js["covariates"][node]
    s = node_diagnostics(project, result, node)
    name = project.diagram.node(node).label
    assert s.verdict == c["label"]
    assert s.reason == c["reason"]
    models = {m.model: m for m in s.models}
    assert models[f"Crude + {name}"].change == percent(c["added"]["change_pct"])
    assert models[f"Crude + {name}"].se_inflation == percent(c["added"]["se_inflation_pct"])
    assert models["Crude"].estimate == number(js["estimates"]["crude"]["coef"])
    if c.get("dropped"):
        assert models["Full"].change == percent(c["dropped"]["change_pct"])
    figures = dict(s.figures)
    if c.get("vif") is not None:
        assert figures[f"VIF of {name} in the full model"] == number(c["vif"])
        assert figures["Tolerance (1 / VIF)"] == number(c["tolerance"], 3)
        assert figures["Auxiliary R² (1 − 1 / VIF)"] == number(c["aux_r2"], 3)


def test_linear_se_ratio_parts_multiply_back(demo_study):
    project, result, _ = demo_study
    s = node_diagnostics(project, result, "age")
    figures = dict(s.figures)
    ev = result.evidence.covariates["age"]
    ratio = ev.added.with_fit.se / ev.added.without_fit.se
    assert figures["SE ratio on adding (product of the parts)"] == number(ratio, 3)


def test_checklist_names_paths_and_pathway(demo_study):
    _, result, _ = demo_study
    lines = checklist("inflam", result)
    assert any("causal pathway" in line and "yes" in line for line in lines)
    lines = checklist("age", result)
    assert lines[0].startswith(f"Associated with {result.exposure}: yes")
    lines = checklist("screen", result)
    assert any(line.startswith("Collider: yes") for line in lines)


def test_checklist_names_variables_by_label(demo_study):
    project, result, _ = demo_study
    labels = node_labels(project)
    lines = checklist("age", result, labels)
    exposure, outcome = labels[result.exposure], labels[result.outcome]
    assert lines[0].startswith(f"Associated with {exposure}: yes, through the backdoor path")
    assert f"{exposure} – {labels['age']} – {outcome}" in lines[0]
    assert result.exposure not in lines[0].split(":")[0]
    state = node_diagnostics(project, result, "age")
    assert state.checklist == lines
    assert state.exposure_label == exposure


def test_endpoint(demo_study):
    project, result, js = demo_study
    s = endpoint_diagnostics(project, result, js["exposure"])
    assert s.kind == "exposure"
    assert s.family == "linear"
    used, rows = js["sample"]["used"], js["sample"]["rows"]
    assert any(f"{used:,} of {rows:,}" in line for line in s.lines)


def test_dialog_names_levels_and_shared_dimensions_by_label(demo_study):
    project, result, _ = demo_study
    figures = dict(node_diagnostics(project, result, "smoke").figures)
    # a multi-level covariate's own coefficients: "Smoking [former]", not the column id
    own = [k for k in figures if k.startswith("Coefficient of ")]
    assert own
    assert all(k.startswith("Coefficient of Smoking [") for k in own), own
    # the flagged dimension that holds Income names its partners by label
    shared = [v for k, v in node_diagnostics(project, result, "income").figures if "Flagged" in k]
    assert shared
    assert "Area deprivation" in shared[0]
    assert "area" not in shared[0].replace("Area deprivation", "")
