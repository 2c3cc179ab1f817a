"""Settings and data commands undo exactly (saved form compared)."""

from __future__ import annotations

from covariscope.model.commands import History
from covariscope.model.diagram import Node
from covariscope.model.project import DataRef, Project, project_to_dict
from covariscope.views.commands import SetData, SetSettings, bind_column


def _round_trip(project, command):
    before = project_to_dict(project)
    h = History()
    h.push(command)
    after = project_to_dict(project)
    assert after != before
    h.undo()
    assert project_to_dict(project) == before
    h.redo()
    assert project_to_dict(project) == after


def test_settings_round_trip():
    p = Project()
    _round_trip(
        p, SetSettings(p, family="logistic", thresholds={**p.analysis.thresholds, "vif": 5.0})
    )
    _round_trip(p, SetSettings(p, column_types={"smoke": "categorical"}))


def test_data_round_trip():
    p = Project()
    _round_trip(p, SetData(p, DataRef("/tmp/x.csv", "abc")))


def test_bind_moves_a_column_between_nodes():
    p = Project()
    p.diagram.add_node(Node("a", column="c"))
    p.diagram.add_node(Node("b"))
    command = bind_column(p, "b", "c")
    _round_trip(p, command)
    assert p.diagram.node("a").column is None
    assert p.diagram.node("b").column == "c"
    assert bind_column(p, "b", "c") is None
