"""Undoable edits of the analysis settings and the data reference.

The diagram's own commands live in :mod:`covariscope.model.commands`; these
cover what the workbench panels change outside the diagram (column types,
reference levels, thresholds, family, the data file), so that every change
the user makes goes on the undo stack and marks the project modified.
"""

from __future__ import annotations

import copy
from typing import Any

from covariscope.model.commands import Command, Macro, UpdateNode
from covariscope.model.project import DataRef, Project

__all__ = ["BindColumn", "SetData", "SetSettings", "bind_column"]


class SetSettings(Command):
    """Change analysis settings (``family``, ``thresholds``, ``column_types``, ...)."""

    def __init__(
        self, project: Project, text: str = "Change analysis settings", **changes: Any
    ) -> None:
        self.project, self.changes, self.text = project, changes, text
        self._old: dict[str, Any] = {}

    def redo(self) -> None:
        self._old = {k: copy.deepcopy(getattr(self.project.analysis, k)) for k in self.changes}
        self.project.update_settings(**copy.deepcopy(self.changes))

    def undo(self) -> None:
        self.project.update_settings(**self._old)


class SetData(Command):
    """Point the project at a data file (or at none)."""

    def __init__(
        self, project: Project, data: DataRef | None, text: str = "Choose the data file"
    ) -> None:
        self.project, self.data, self.text = project, data, text
        self._old: DataRef | None = None

    def redo(self) -> None:
        self._old = self.project.data
        self.project.set_data(self.data)

    def undo(self) -> None:
        self.project.set_data(self._old)


class BindColumn(Macro):
    """Bind a column to a node, unbinding it from any other node first."""


def bind_column(project: Project, node_id: str, column: str | None) -> Command | None:
    """The command that binds ``column`` to ``node_id`` (None unbinds);
    None when nothing would change."""
    node = project.diagram.node(node_id)
    if node.column == column:
        return None
    steps: list[Command] = []
    if column is not None:
        steps += [
            UpdateNode(project, other.id, column=None)
            for other in project.diagram.nodes
            if other.column == column and other.id != node_id
        ]
    steps.append(UpdateNode(project, node_id, column=column))
    text = f"Bind {column} to {node_id}" if column else f"Unbind {node_id}"
    return BindColumn(text, steps)
