"""The QUndoStack adapter: applied edits enter the stack, refused ones do not."""

from __future__ import annotations

import pytest
from PySide6.QtGui import QUndoStack

from covariscope.errors import CycleError
from covariscope.model.commands import AddArrow, AddNode, Macro
from covariscope.model.diagram import Node
from covariscope.model.project import Project, project_to_dict
from covariscope.qt.undo import push


@pytest.fixture
def project():
    p = Project()
    for node_id in ("a", "b", "c"):
        p.diagram.add_node(Node(node_id))
    p.diagram.add_arrow("a", "b")
    p.diagram.add_arrow("b", "c")
    return p


def test_push_applies_once_and_undoes(qapp, project):
    stack = QUndoStack()
    before = project_to_dict(project)
    assert push(stack, AddNode(project, Node("d")))
    assert stack.count() == 1
    assert stack.undoText() == "Add d"
    assert project.diagram.node_ids == ["a", "b", "c", "d"]  # applied once, not twice
    stack.undo()
    assert project_to_dict(project) == before
    stack.redo()
    assert "d" in project.diagram


def test_refused_edit_reports_and_stays_off_the_stack(qapp, project):
    stack = QUndoStack()
    messages = []
    before = project_to_dict(project)
    assert not push(stack, AddArrow(project, "c", "a"), messages.append)
    assert stack.count() == 0
    assert messages == [
        "The arrow c → a would close the cycle c → a → b → c; a causal diagram cannot have cycles."
    ]
    assert project_to_dict(project) == before


def test_refused_edit_without_handler_raises(qapp, project):
    with pytest.raises(CycleError):
        push(QUndoStack(), AddArrow(project, "c", "a"))


def test_macro_refused_midway_is_rolled_back(qapp, project):
    stack = QUndoStack()
    before = project_to_dict(project)
    macro = Macro("two", [AddNode(project, Node("d")), AddArrow(project, "c", "a")])
    assert not push(stack, macro, lambda _m: None)
    assert project_to_dict(project) == before
    assert stack.count() == 0
