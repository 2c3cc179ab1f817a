"""What the outcome-columns dialog shows and what a blocked analysis lacks, per family.

The rows and the requirements come from the family objects
(:mod:`covariscope.analysis.families`); these tests pin what each of the four
families asks for, so a family's module can change only on purpose.
"""

from __future__ import annotations

import pandas as pd
import pytest

from covariscope.data.profile import profile_column
from covariscope.model.diagram import Diagram, Node
from covariscope.model.project import AnalysisSettings, Project
from covariscope.views.outcome_settings import (
    FIX_BIND,
    FIX_OUTCOME_COLUMNS,
    OUTCOME_FIELDS,
    blockers,
    family_columns_after,
    outcome_column_in_use,
)


def _project(
    family: str, columns: dict[str, dict[str, str]] | None = None, outcome: str | None = "fev"
) -> Project:
    d = Diagram()
    d.add_node(Node("x", "Dust", kind="exposure", column="dust"))
    d.add_node(Node("y", "Lung function", kind="outcome", column=outcome))
    d.add_arrow("x", "y")
    return Project(d, analysis=AnalysisSettings(family=family, family_columns=columns or {}))


def test_each_family_lists_the_columns_it_reads():
    assert [k for k, _, _ in OUTCOME_FIELDS["linear"]] == ["outcome"]
    assert [k for k, _, _ in OUTCOME_FIELDS["logistic"]] == ["outcome"]
    assert [k for k, _, _ in OUTCOME_FIELDS["risk_ratio"]] == ["outcome", "offset"]
    assert [k for k, _, _ in OUTCOME_FIELDS["cox"]] == ["time", "event"]
    assert OUTCOME_FIELDS["logistic"][0][1] == "Binary outcome column"


def test_the_outcome_in_use_is_the_event_for_cox_and_the_node_column_otherwise():
    assert outcome_column_in_use(_project("linear")) == "fev"
    chosen = {"logistic": {"outcome": "low_fev"}, "cox": {"time": "t", "event": "dx"}}
    assert outcome_column_in_use(_project("logistic", chosen)) == "low_fev"
    assert outcome_column_in_use(_project("cox", chosen)) == "dx"
    assert outcome_column_in_use(_project("cox")) is None


def test_cox_without_time_and_event_is_blocked_with_the_columns_fix():
    (b,) = blockers(_project("cox"), None, data_loaded=True)
    assert b.text == (
        "The Cox proportional hazards regression needs a time and an event column, so only "
        "the diagram is analysed."
    )
    assert b.fix == FIX_OUTCOME_COLUMNS
    (b,) = blockers(_project("cox", {"cox": {"time": "t"}}), None, data_loaded=True)
    assert "needs a event column" in b.text
    assert (
        blockers(_project("cox", {"cox": {"time": "t", "event": "dx"}}), None, data_loaded=True)
        == []
    )


@pytest.mark.parametrize(
    ("family", "kind", "need"),
    [
        ("logistic", "continuous", "a yes/no (binary)"),
        ("risk_ratio", "continuous", "a yes/no or count"),
        ("logistic", "count", "a yes/no (binary)"),
    ],
)
def test_an_outcome_of_the_wrong_type_is_blocked(family, kind, need):
    project = _project(family)
    project.analysis.column_types["fev"] = kind
    (b,) = blockers(project, None, data_loaded=True)
    assert f"needs {need} outcome, but the column fev is {kind}" in b.text
    assert b.fix == FIX_OUTCOME_COLUMNS


@pytest.mark.parametrize(
    ("family", "kind"),
    [("linear", "continuous"), ("logistic", "binary"), ("risk_ratio", "count")],
)
def test_an_outcome_the_family_models_is_not_blocked(family, kind):
    project = _project(family)
    project.analysis.column_types["fev"] = kind
    assert blockers(project, None, data_loaded=True) == []


def test_the_profile_gives_the_type_when_the_project_sets_none():
    profiles = {"fev": profile_column(pd.Series([1.5, 2.25, 3.0, 2.75, 1.0] * 4))}
    (b,) = blockers(_project("logistic"), profiles, data_loaded=True)
    assert "the column fev is continuous" in b.text


def test_an_unbound_outcome_asks_for_a_column():
    project = _project("linear", outcome=None)
    (b,) = blockers(project, None, data_loaded=True)
    assert b.fix == FIX_BIND
    assert blockers(project, None, data_loaded=False) == []


def test_family_columns_after_a_choice():
    project = _project("cox", {"logistic": {"outcome": "low_fev"}})
    after = family_columns_after(project, "cox", {"time": "t", "event": "dx"})
    assert after == {"logistic": {"outcome": "low_fev"}, "cox": {"time": "t", "event": "dx"}}
    assert family_columns_after(project, "logistic", {"outcome": None}) == {}
