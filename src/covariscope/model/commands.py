"""Undoable edits of a project, as small command objects.

Each command calls model methods only, remembers what it needs to undo
exactly (positions of removed arrows and links included), and has a short
``text`` for the Edit menu.  The Qt layer wraps them in QUndoCommand; tests
drive them directly.  A refused edit raises in :meth:`Command.redo` and
changes nothing.
"""

from __future__ import annotations

from typing import Any

from covariscope.model.diagram import Node
from covariscope.model.project import Project

__all__ = [
    "AddArrow",
    "AddNode",
    "AddProxy",
    "Command",
    "History",
    "Macro",
    "MoveNodes",
    "RemoveArrow",
    "RemoveNode",
    "RemoveProxy",
    "ReverseArrow",
    "SetKind",
    "SetProposed",
    "UpdateNode",
]


class Command:
    """One reversible edit of a project: ``redo`` applies it, ``undo`` takes it back exactly;
    ``text`` names it in the Edit menu.
    """

    text = "Edit"

    def redo(self) -> None:
        raise NotImplementedError

    def undo(self) -> None:
        raise NotImplementedError


class AddNode(Command):
    """Add a node to the diagram (undo removes it)."""

    def __init__(self, project: Project, node: Node) -> None:
        self.project, self.node = project, node
        self.text = f"Add {node.label}"

    def redo(self) -> None:
        self.project.diagram.add_node(self.node)

    def undo(self) -> None:
        self.project.diagram.remove_node(self.node.id)


class RemoveNode(Command):
    """Remove a node with its arrows and proxy links, and drop it from the
    proposed set; undo puts everything back where it was."""

    def __init__(self, project: Project, node_id: str) -> None:
        self.project, self.node_id = project, node_id
        self.text = f"Delete {node_id}"
        self._node: Node | None = None
        self._arrows: list[tuple[int, tuple[str, str]]] = []
        self._proxies: list[tuple[int, tuple[str, str]]] = []
        self._proposed: list[str] = []
        self._node_index = 0

    def redo(self) -> None:
        d = self.project.diagram
        self._node = d.node(self.node_id)
        self._node_index = d.node_ids.index(self.node_id)
        self._arrows = d.arrows_of(self.node_id)
        self._proxies = d.proxies_of(self.node_id)
        self._proposed = self.project.proposed
        for _, (a, b) in reversed(self._arrows):
            d.remove_arrow(a, b)
        for _, (a, b) in reversed(self._proxies):
            d.remove_proxy(a, b)
        if self.node_id in self._proposed:
            self.project.set_proposed([p for p in self._proposed if p != self.node_id])
        d.remove_node(self.node_id)

    def undo(self) -> None:
        d = self.project.diagram
        assert self._node is not None
        d.add_node(self._node, self._node_index)
        for index, (a, b) in self._proxies:
            d.add_proxy(a, b, index)
        for index, (a, b) in self._arrows:
            d.add_arrow(a, b, index)
        self.project.set_proposed(self._proposed)


class UpdateNode(Command):
    """Change fields of a node (label, measured, column, note, ...)."""

    def __init__(self, project: Project, node_id: str, **changes: Any) -> None:
        self.project, self.node_id, self.changes = project, node_id, changes
        self._old: dict[str, Any] = {}
        names = ", ".join(changes)
        self.text = f"Change {names} of {node_id}"

    def redo(self) -> None:
        diff = self.project.diagram.update_node(self.node_id, **self.changes)
        self._old = {k: old for k, (old, _) in diff.items()}

    def undo(self) -> None:
        if self._old:
            self.project.diagram.update_node(self.node_id, **self._old)


class MoveNodes(Command):
    """One drag: every moved node's old and new position."""

    def __init__(
        self, project: Project, moves: dict[str, tuple[tuple[float, float], tuple[float, float]]]
    ) -> None:
        self.project, self.moves = project, moves
        self.text = "Move " + (next(iter(moves)) if len(moves) == 1 else f"{len(moves)} nodes")

    def redo(self) -> None:
        for node_id, (_, (x, y)) in self.moves.items():
            self.project.diagram.update_node(node_id, x=x, y=y)

    def undo(self) -> None:
        for node_id, ((x, y), _) in self.moves.items():
            self.project.diagram.update_node(node_id, x=x, y=y)


class AddArrow(Command):
    """Add the arrow cause → effect (refused with the diagram's message when it would close a
    cycle).
    """

    def __init__(self, project: Project, cause: str, effect: str) -> None:
        self.project, self.cause, self.effect = project, cause, effect
        self.text = f"Add arrow {cause} → {effect}"

    def redo(self) -> None:
        self.project.diagram.add_arrow(self.cause, self.effect)

    def undo(self) -> None:
        self.project.diagram.remove_arrow(self.cause, self.effect)


class RemoveArrow(Command):
    """Remove the arrow cause → effect; undo puts it back at its place."""

    def __init__(self, project: Project, cause: str, effect: str) -> None:
        self.project, self.cause, self.effect = project, cause, effect
        self.text = f"Delete arrow {cause} → {effect}"
        self._index = 0

    def redo(self) -> None:
        self._index = self.project.diagram.remove_arrow(self.cause, self.effect)

    def undo(self) -> None:
        self.project.diagram.add_arrow(self.cause, self.effect, self._index)


class ReverseArrow(Command):
    """Turn the arrow cause → effect around (refused when the reversed arrow would close a cycle)."""

    def __init__(self, project: Project, cause: str, effect: str) -> None:
        self.project, self.cause, self.effect = project, cause, effect
        self.text = f"Reverse arrow {cause} → {effect}"
        self._index = 0

    def redo(self) -> None:
        d = self.project.diagram
        self._index = d.remove_arrow(self.cause, self.effect)
        try:
            d.add_arrow(self.effect, self.cause, self._index)
        except Exception:
            d.add_arrow(self.cause, self.effect, self._index)
            raise

    def undo(self) -> None:
        d = self.project.diagram
        d.remove_arrow(self.effect, self.cause)
        d.add_arrow(self.cause, self.effect, self._index)


class AddProxy(Command):
    """Link two nodes as alternate measures of the same thing (an undirected proxy link)."""

    def __init__(self, project: Project, a: str, b: str) -> None:
        self.project, self.a, self.b = project, a, b
        self.text = f"Link {a} and {b} as proxies"

    def redo(self) -> None:
        self.project.diagram.add_proxy(self.a, self.b)

    def undo(self) -> None:
        self.project.diagram.remove_proxy(self.a, self.b)


class RemoveProxy(Command):
    """Remove the proxy link between two nodes; undo puts it back at its place."""

    def __init__(self, project: Project, a: str, b: str) -> None:
        self.project, self.a, self.b = project, a, b
        self.text = f"Unlink proxies {a} and {b}"
        self._index = 0

    def redo(self) -> None:
        self._index = self.project.diagram.remove_proxy(self.a, self.b)

    def undo(self) -> None:
        self.project.diagram.add_proxy(self.a, self.b, self._index)


class SetProposed(Command):
    """Replace the set of covariates the analyst proposes to adjust for."""

    def __init__(self, project: Project, ids: list[str]) -> None:
        self.project, self.ids = project, list(ids)
        self._old: list[str] = []
        self.text = "Change the proposed adjustment set"

    def redo(self) -> None:
        self._old = self.project.proposed
        self.project.set_proposed(self.ids)

    def undo(self) -> None:
        self.project.set_proposed(self._old)


class SetKind(Command):
    """Make a node the exposure, the outcome or a covariate.  The node that
    held that kind before becomes a covariate, and the node leaves the
    proposed set when it stops being a covariate."""

    def __init__(self, project: Project, node_id: str, kind: str) -> None:
        self.project, self.node_id, self.kind = project, node_id, kind
        self.text = (
            f"Make {node_id} the {kind}" if kind != "covariate" else f"Make {node_id} a covariate"
        )
        self._done: list[Command] = []

    def redo(self) -> None:
        d = self.project.diagram
        steps: list[Command] = []
        if self.kind in ("exposure", "outcome"):
            steps += [
                UpdateNode(self.project, n.id, kind="covariate")
                for n in d.nodes_of_kind(self.kind)
                if n.id != self.node_id
            ]
            if self.node_id in self.project.proposed:
                steps.append(
                    SetProposed(
                        self.project, [p for p in self.project.proposed if p != self.node_id]
                    )
                )
        steps.append(UpdateNode(self.project, self.node_id, kind=self.kind))
        self._done = []
        try:
            for step in steps:
                step.redo()
                self._done.append(step)
        except Exception:
            for step in reversed(self._done):
                step.undo()
            self._done = []
            raise

    def undo(self) -> None:
        for step in reversed(self._done):
            step.undo()


class Macro(Command):
    """Several commands as one undo step (a multi-item delete, a paste)."""

    def __init__(self, text: str, commands: list[Command]) -> None:
        self.text, self.commands = text, commands
        self._done: list[Command] = []

    def redo(self) -> None:
        self._done = []
        try:
            for command in self.commands:
                command.redo()
                self._done.append(command)
        except Exception:
            for command in reversed(self._done):
                command.undo()
            self._done = []
            raise

    def undo(self) -> None:
        for command in reversed(self._done):
            command.undo()


class History:
    """A plain undo stack for scripts and tests (the GUI uses QUndoStack)."""

    def __init__(self) -> None:
        self._done: list[Command] = []
        self._undone: list[Command] = []

    def push(self, command: Command) -> None:
        command.redo()
        self._done.append(command)
        self._undone.clear()

    def undo(self) -> bool:
        if not self._done:
            return False
        command = self._done.pop()
        command.undo()
        self._undone.append(command)
        return True

    def redo(self) -> bool:
        if not self._undone:
            return False
        command = self._undone.pop()
        command.redo()
        self._done.append(command)
        return True
