"""The diagram scene: a projection of the project's diagram.

The scene keeps one item per model object (node id → NodeItem, arrow pair →
ArrowItem, proxy pair → ProxyItem) and changes them only when the model
says something changed.  Whatever the user does becomes a command on the
undo stack; the model then tells the scene, which redraws.
"""

from __future__ import annotations

from collections.abc import Callable
from itertools import pairwise
from typing import Any

import shiboken6
from PySide6.QtCore import QMimeData, QPointF, Signal
from PySide6.QtGui import QTransform, QUndoStack
from PySide6.QtWidgets import (
    QGraphicsItem,
    QGraphicsScene,
    QGraphicsSceneContextMenuEvent,
    QGraphicsSceneDragDropEvent,
    QGraphicsSceneMouseEvent,
    QMenu,
)

from covariscope.model.commands import (
    AddArrow,
    AddNode,
    AddProxy,
    Command,
    Macro,
    MoveNodes,
    RemoveArrow,
    RemoveNode,
    RemoveProxy,
    ReverseArrow,
    SetKind,
    UpdateNode,
)
from covariscope.model.diagram import DiagramEvent, Node
from covariscope.model.layout import layered_layout
from covariscope.model.project import Project, ProjectEvent
from covariscope.model.selection import (
    PASTE_OFFSET,
    Selection,
    copied_selection,
    paste_command,
)
from covariscope.qt.canvas import menus
from covariscope.qt.canvas.items import (
    ArrowItem,
    LabelEditor,
    NodeItem,
    ProxyItem,
    SuggestionItem,
)
from covariscope.qt.canvas.modes import ConnectMode, Mode, Pointer, SelectMode
from covariscope.qt.palette import colour
from covariscope.qt.undo import push
from covariscope.views.keep_choice import KeepChoice

__all__ = ["COLUMN_MIME", "DiagramScene", "column_from_mime"]

#: Drag-and-drop type of a dataset column (the column name, UTF-8).
COLUMN_MIME = "application/x-covariscope-column"

#: how far a proxy link moves aside when an arrow joins the same two nodes
_PROXY_SHIFT = 9.0


class DiagramScene(QGraphicsScene):
    """The canvas scene of one project.

    Signals: ``node_double_clicked(str)``, ``selection_changed_ids(list)``,
    ``message(str)`` (a refused edit's message, as the model words it),
    ``proposed_toggled(str, bool)``, ``mode_changed(str)``,
    ``keep_chosen(str, object)`` (a collinear group's key and the member to
    keep, or None for the suggestion: the window pushes the edit).

    :attr:`keep_choice_of` is set by the window to a function from node id
    to its :class:`~covariscope.views.keep_choice.KeepChoice` (or None), so
    the node menu offers the same keep choice as the review table.
    """

    node_double_clicked = Signal(str)
    selection_changed_ids = Signal(list)
    message = Signal(str)
    proposed_toggled = Signal(str, bool)
    mode_changed = Signal(str)
    keep_chosen = Signal(str, object)

    def __init__(self, project: Project, undo_stack: QUndoStack, parent: Any = None) -> None:
        super().__init__(parent)
        self.project = project
        self.undo_stack = undo_stack
        self.nodes: dict[str, NodeItem] = {}
        self.arrows: dict[tuple[str, str], ArrowItem] = {}
        self.proxies: dict[tuple[str, str], ProxyItem] = {}
        self.roles: dict[str, str] = {}
        self.verdicts: dict[str, tuple[str, str]] = {}
        self.path: list[str] | None = None
        #: the link a failed independence claim suggests, drawn over the diagram
        self.suggestion: SuggestionItem | None = None
        self.label_editor: LabelEditor | None = None
        self._proposed = set(project.proposed)
        self.keep_choice_of: Callable[[str], KeepChoice | None] = lambda _node: None
        self.modes: dict[str, Mode] = {
            "select": SelectMode(self),
            "arrow": ConnectMode(self, "arrow"),
            "proxy": ConnectMode(self, "proxy"),
        }
        self.mode: Mode = self.modes["select"]
        self.setBackgroundBrush(colour("background"))
        self.setSceneRect(-2000, -1500, 4000, 3000)
        self._diagram = project.diagram
        self._diagram.subscribe(self._on_diagram)
        project.subscribe(self._on_project)
        self.selectionChanged.connect(self._emit_selection)
        self._rebuild()

    def detach(self) -> None:
        """Stop following the model (call before dropping the scene)."""
        self._diagram.unsubscribe(self._on_diagram)
        self.project.unsubscribe(self._on_project)
        self.selectionChanged.disconnect(self._emit_selection)
        self.mode.cancel()

    # -- edits through the undo stack -----------------------------------------------
    def push(self, command: Command) -> bool:
        """Apply a command on the undo stack; a refused edit emits ``message``."""
        return push(self.undo_stack, command, self.message.emit)

    def set_mode(self, name: str) -> None:
        if name not in self.modes:
            raise ValueError(f"unknown canvas mode {name!r}; use one of {', '.join(self.modes)}")
        self.mode.cancel()
        self.mode = self.modes[name]
        self.mode_changed.emit(name)

    def add_node_at(
        self,
        pos: QPointF,
        kind: str = "covariate",
        label: str | None = None,
        column: str | None = None,
    ) -> str:
        """Add a node centred at ``pos``; returns its id ("" if refused).  A
        new exposure or outcome takes over from the present one, which becomes
        a covariate (one undo step)."""
        d = self.project.diagram
        node_id = d.fresh_id(label or column or "node")
        node = Node(node_id, label=label or node_id, column=column, x=pos.x(), y=pos.y())
        command: Command = AddNode(self.project, node)
        if kind != "covariate":
            command = Macro(f"Add {node.label}", [command, SetKind(self.project, node_id, kind)])
        if not self.push(command):
            return ""
        self.select_ids([node_id])
        return node_id

    def connect_nodes(self, source: str, target: str, link: str = "arrow") -> bool:
        command = AddProxy if link == "proxy" else AddArrow
        return self.push(command(self.project, source, target))

    def commit_moves(self) -> None:
        """Turn dragged items into one MoveNodes command."""
        moves = {}
        for node_id, item in self.nodes.items():
            old = (item.node.x, item.node.y)
            new = (item.pos().x(), item.pos().y())
            if old != new:
                moves[node_id] = (old, new)
        if moves:
            self.push(MoveNodes(self.project, moves))

    def delete_selection(self) -> None:
        nodes = self.selected_node_ids()
        gone = set(nodes)
        steps: list[Command] = []
        for pair in self._selected(self.arrows):
            if not gone & set(pair):
                steps.append(RemoveArrow(self.project, *pair))
        for pair in self._selected(self.proxies):
            if not gone & set(pair):
                steps.append(RemoveProxy(self.project, *pair))
        steps += [RemoveNode(self.project, n) for n in nodes]
        if steps:
            text = steps[0].text if len(steps) == 1 else f"Delete {len(steps)} items"
            self.push(Macro(text, steps))

    def reverse_selected_arrows(self) -> None:
        pairs = self._selected(self.arrows)
        if not pairs:
            return
        steps: list[Command] = [ReverseArrow(self.project, a, b) for a, b in pairs]
        text = steps[0].text if len(steps) == 1 else f"Reverse {len(steps)} arrows"
        if self.push(Macro(text, steps)):
            for a, b in pairs:
                if (b, a) in self.arrows:
                    self.arrows[(b, a)].setSelected(True)

    def rename_node(self, node_id: str, label: str) -> bool:
        if not label.strip() or label == self.project.diagram.node(node_id).label:
            return False
        return self.push(UpdateNode(self.project, node_id, label=label))

    def start_rename(self, node_id: str) -> LabelEditor:
        """Open the in-place label editor on a node."""
        self.finish_rename(commit=True)
        editor = LabelEditor(self.nodes[node_id], self._rename_done)
        self.addItem(editor)
        self.label_editor = editor
        editor.setFocus()
        return editor

    def finish_rename(self, commit: bool = True) -> None:
        if self.label_editor is not None:
            self.label_editor.finish(commit)

    def _rename_done(self, node_id: str, text: str | None) -> None:
        editor, self.label_editor = self.label_editor, None
        if editor is not None and editor.scene() is self:
            self.removeItem(editor)
        if text is not None and node_id in self.nodes:
            self.rename_node(node_id, text)

    def copy_selection(self) -> Selection:
        """The selected nodes with the arrows and proxy links among them."""
        return copied_selection(self.project.diagram, self.selected_node_ids())

    def paste(self, clip: Selection, offset: tuple[float, float] | None = None) -> list[str]:
        """Add copies of copied nodes (fresh ids, shifted) with their links, as
        one undo step, and select them; returns the new ids (see
        :func:`~covariscope.model.selection.paste_command`)."""
        pasted = paste_command(self.project, clip, offset or (PASTE_OFFSET, PASTE_OFFSET))
        if pasted is None or not self.push(pasted.command):
            return []
        new_ids = list(pasted.ids)
        self.select_ids(new_ids)
        return new_ids

    def auto_layout(self) -> None:
        """Arrange the diagram in layers (one undo step)."""
        positions = layered_layout(self.project.diagram)
        moves = {
            n.id: ((n.x, n.y), positions[n.id])
            for n in self.project.diagram.nodes
            if (n.x, n.y) != positions[n.id]
        }
        if moves:
            self.push(Macro("Arrange the diagram", [MoveNodes(self.project, moves)]))

    # -- analysis overlays -----------------------------------------------------------
    def set_annotations(self, roles: dict[str, str], verdicts: dict[str, tuple[str, str]]) -> None:
        """Show each covariate's role and verdict; empty dicts clear them.
        Only the nodes whose words changed, and their links, are redrawn."""
        changed = {
            n
            for n in self.nodes
            if (roles.get(n), verdicts.get(n)) != (self.roles.get(n), self.verdicts.get(n))
        }
        self.roles, self.verdicts = dict(roles), dict(verdicts)
        for node_id in changed:
            self.nodes[node_id].set_annotation(self.roles.get(node_id), self.verdicts.get(node_id))
        if changed:
            self._update_links_of(changed)

    def _update_links_of(self, nodes: set[str]) -> None:
        for store in (self.arrows, self.proxies):
            for pair, item in store.items():
                if nodes.intersection(pair):
                    item.update_geometry()
        hint = self.suggestion
        if hint is not None and nodes.intersection(hint.pair) and shiboken6.isValid(hint):
            hint.update_geometry()

    def highlight_path(self, path: list[str] | None) -> None:
        """Highlight a path's nodes and links; None clears.  A measure group
        in the path is named by its member ids joined with "|"."""
        self.path = list(path) if path else None
        steps = [set(step.split("|")) for step in (self.path or [])]
        lit = set().union(*steps) if steps else set()
        for node_id, item in self.nodes.items():
            item.set_highlighted(node_id in lit)
        hops = list(pairwise(steps))
        for (a, b), arrow in self.arrows.items():
            arrow.set_highlighted(any((a in p and b in q) or (b in p and a in q) for p, q in hops))
        for (a, b), proxy in self.proxies.items():
            proxy.set_highlighted(any(a in g and b in g for g in steps))

    def show_suggestion(self, claim: tuple[str, str, Any] | None) -> None:
        """Draw the link a failed claim ``(a, b, arrows)`` suggests; None clears.

        The chevrons mark the ends a missing arrow could point to (``arrows``,
        the directions that close no cycle)."""
        if self.suggestion is not None:
            if shiboken6.isValid(self.suggestion):
                self.removeItem(self.suggestion)
            self.suggestion = None
        if claim is None:
            return
        a, b, arrows = claim
        if a not in self.nodes or b not in self.nodes:
            return
        heads = ((b, a) in set(arrows), (a, b) in set(arrows))
        others = tuple(item for n, item in self.nodes.items() if n not in (a, b))
        self.suggestion = SuggestionItem((a, b), self.nodes[a], self.nodes[b], heads, others)
        self.addItem(self.suggestion)

    # -- reading ------------------------------------------------------------------------
    def selected_node_ids(self) -> list[str]:
        return [
            n
            for n in self.project.diagram.node_ids
            if n in self.nodes and self.nodes[n].isSelected()
        ]

    def selected_arrows(self) -> list[tuple[str, str]]:
        return self._selected(self.arrows)

    def _selected(self, items: dict[tuple[str, str], Any]) -> list[tuple[str, str]]:
        return [pair for pair, item in items.items() if item.isSelected()]

    def select_ids(self, ids: list[str]) -> None:
        self.clearSelection()
        for node_id in ids:
            if node_id in self.nodes:
                self.nodes[node_id].setSelected(True)

    def node_id_at(self, pos: QPointF) -> str | None:
        for item in self.items(pos):
            if isinstance(item, NodeItem):
                return item.node_id
        return None

    def item_at(self, pos: QPointF) -> QGraphicsItem | None:
        for item in self.items(pos):
            if isinstance(item, NodeItem | ArrowItem | ProxyItem):
                return item
        return None

    # -- model events ----------------------------------------------------------------------
    def _alive(self) -> bool:
        return shiboken6.isValid(self)

    def _on_diagram(self, event: DiagramEvent) -> None:
        if not self._alive():
            return
        d = self.project.diagram
        if event.kind == "node_added" and event.node:
            self._add_node_item(d.node(event.node))
        elif event.kind == "node_removed" and event.node:
            if self.suggestion is not None:  # it bends away from the nodes it knew
                self.show_suggestion(None)
            item = self.nodes.pop(event.node, None)
            if item is not None:
                self.removeItem(item)
        elif event.kind == "node_changed" and event.node:
            item = self.nodes[event.node]
            item.set_node(d.node(event.node))
            self._update_links(event.node)
        elif event.kind == "arrow_added" and event.pair:
            self._add_link(event.pair, ArrowItem, self.arrows)
        elif event.kind == "arrow_removed" and event.pair:
            self._remove_link(event.pair, self.arrows)
        elif event.kind == "proxy_added" and event.pair:
            self._add_link(event.pair, ProxyItem, self.proxies)
        elif event.kind == "proxy_removed" and event.pair:
            self._remove_link(event.pair, self.proxies)
        elif event.kind == "reset":
            self._rebuild()

    def _on_project(self, event: ProjectEvent) -> None:
        if not self._alive() or event.kind != "proposed":
            return
        now = set(self.project.proposed)
        changed = (now - self._proposed) | (self._proposed - now)
        self._proposed = now
        for node_id in sorted(changed):
            if node_id in self.nodes:
                self.nodes[node_id].set_proposed(node_id in now)
            self._update_links(node_id)
        for node_id in [n for n in self.project.diagram.node_ids if n in changed]:
            self.proposed_toggled.emit(node_id, node_id in now)

    def _rebuild(self) -> None:
        self.show_suggestion(None)
        for store in (self.arrows, self.proxies, self.nodes):
            for item in list(store.values()):
                self.removeItem(item)
            store.clear()
        d = self.project.diagram
        self._proposed = set(self.project.proposed)
        for node in d.nodes:
            self._add_node_item(node)
        for pair in d.arrows:
            self._add_link(pair, ArrowItem, self.arrows)
        for pair in d.proxies:
            self._add_link(pair, ProxyItem, self.proxies)
        if self.path:
            self.highlight_path(self.path)

    def _add_node_item(self, node: Node) -> None:
        item = NodeItem(node, node.id in self._proposed)
        item.set_annotation(self.roles.get(node.id), self.verdicts.get(node.id))
        item.moved_callback = self._update_links
        self.nodes[node.id] = item
        self.addItem(item)

    def _add_link(self, pair: tuple[str, str], cls: type, store: dict[Any, Any]) -> None:
        item = cls(pair, self.nodes[pair[0]], self.nodes[pair[1]])
        store[pair] = item
        self.addItem(item)
        self._separate(pair)

    def _remove_link(self, pair: tuple[str, str], store: dict[Any, Any]) -> None:
        item = store.pop(pair, None)
        if item is not None:
            self.removeItem(item)
        self._separate(pair)

    def _separate(self, pair: tuple[str, str]) -> None:
        """Move a proxy link aside when an arrow joins the same two nodes."""
        a, b = pair
        arrow = (a, b) in self.arrows or (b, a) in self.arrows
        for key in ((a, b), (b, a)):
            proxy = self.proxies.get(key)
            if proxy is not None:
                proxy.set_shift(_PROXY_SHIFT if arrow else 0.0)

    def _update_links(self, node_id: str | None = None) -> None:
        for store in (self.arrows, self.proxies):
            for pair, item in store.items():
                if node_id is None or node_id in pair:
                    item.update_geometry()
        hint = self.suggestion
        moved = hint is not None and (node_id is None or node_id in hint.pair)
        if hint is not None and moved and shiboken6.isValid(hint):
            hint.update_geometry()

    def _emit_selection(self) -> None:
        if self._alive():
            for item in self.nodes.values():
                if shiboken6.isValid(item):
                    item.update()  # the selection halo
            self.selection_changed_ids.emit(self.selected_node_ids())

    # -- Qt events --------------------------------------------------------------------------
    @staticmethod
    def _pointer(event: QGraphicsSceneMouseEvent) -> Pointer:
        return Pointer(event.scenePos(), event.button(), event.modifiers())

    def mousePressEvent(self, event: QGraphicsSceneMouseEvent) -> None:
        if self.mode.press(self._pointer(event)):
            event.accept()
            return
        super().mousePressEvent(event)

    def mouseMoveEvent(self, event: QGraphicsSceneMouseEvent) -> None:
        if self.mode.move(self._pointer(event)):
            event.accept()
            return
        super().mouseMoveEvent(event)

    def mouseReleaseEvent(self, event: QGraphicsSceneMouseEvent) -> None:
        if self.mode.release(self._pointer(event)):
            event.accept()
            return
        super().mouseReleaseEvent(event)

    def mouseDoubleClickEvent(self, event: QGraphicsSceneMouseEvent) -> None:
        if (
            self.label_editor is not None
            and self.itemAt(event.scenePos(), QTransform()) is self.label_editor
        ):
            super().mouseDoubleClickEvent(event)
            return
        node_id = self.node_id_at(event.scenePos())
        if node_id is not None:
            self.node_double_clicked.emit(node_id)
            event.accept()
            return
        super().mouseDoubleClickEvent(event)

    def contextMenuEvent(self, event: QGraphicsSceneContextMenuEvent) -> None:
        menu = self.menu_at(event.scenePos())
        if menu is not None:
            menu.exec(event.screenPos())
            event.accept()

    def menu_at(self, pos: QPointF) -> QMenu | None:
        """The context menu for what lies at ``pos`` (node, arrow, proxy link
        or empty canvas).  Each action's ``data()`` names what it does."""
        item = self.item_at(pos)
        if item is not None and not item.isSelected():
            self.clearSelection()
            item.setSelected(True)
        if isinstance(item, NodeItem):
            return menus.node_menu(self, item.node_id)
        if isinstance(item, ArrowItem):
            return menus.arrow_menu(self, item.pair)
        if isinstance(item, ProxyItem):
            return menus.proxy_menu(self, item.pair)
        return menus.canvas_menu(self, pos)

    def dragEnterEvent(self, event: QGraphicsSceneDragDropEvent) -> None:
        if event.mimeData().hasFormat(COLUMN_MIME):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dragMoveEvent(self, event: QGraphicsSceneDragDropEvent) -> None:
        self.dragEnterEvent(event)

    def dropEvent(self, event: QGraphicsSceneDragDropEvent) -> None:
        column = column_from_mime(event.mimeData())
        if column is None:
            event.ignore()
            return
        self.drop_column(column, event.scenePos())
        event.acceptProposedAction()

    def drop_column(self, column: str, pos: QPointF) -> str:
        """A dataset column dropped on the canvas: a node bound to it (one
        undo step).  A column binds one node, so a node that held it lets go."""
        d = self.project.diagram
        node_id = d.fresh_id(column)
        steps: list[Command] = [
            UpdateNode(self.project, n.id, column=None) for n in d.nodes if n.column == column
        ]
        node = Node(node_id, label=column, column=column, x=pos.x(), y=pos.y())
        steps.append(AddNode(self.project, node))
        if not self.push(Macro(f"Add {node_id} from column {column}", steps)):
            return ""
        self.select_ids([node_id])
        return node_id


def column_from_mime(data: QMimeData) -> str | None:
    """The column name carried by a drag, or None when it carries none."""
    if data is None or not data.hasFormat(COLUMN_MIME):
        return None
    column = bytes(data.data(COLUMN_MIME).data()).decode("utf-8").strip()
    return column or None
