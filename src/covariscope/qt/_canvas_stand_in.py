"""A plain stand-in for the diagram canvas, used only while
:mod:`covariscope.qt.canvas` is not installed: it draws each node as a
labelled box and each arrow as a line, and offers the scene's method names
as no-ops, so the rest of the window keeps working."""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QPointF, Qt, Signal
from PySide6.QtGui import QPainter, QPen
from PySide6.QtWidgets import QGraphicsScene, QGraphicsView

from covariscope.model.commands import AddNode
from covariscope.model.diagram import Node
from covariscope.qt.undo import push

__all__ = ["StandInScene", "StandInView"]


class StandInScene(QGraphicsScene):
    node_double_clicked = Signal(str)
    selection_changed_ids = Signal(list)
    message = Signal(str)
    proposed_toggled = Signal(str, bool)

    def __init__(self, project: Any, undo_stack: Any, parent: Any = None) -> None:
        super().__init__(parent)
        self.project, self.undo_stack = project, undo_stack
        self._verdicts: dict[str, Any] = {}
        project.diagram.subscribe(self._redraw)
        project.subscribe(self._redraw)
        self._redraw()

    def detach(self) -> None:
        self.project.diagram.unsubscribe(self._redraw)
        self.project.unsubscribe(self._redraw)

    def _redraw(self, *_: Any) -> None:
        self.clear()
        d = self.project.diagram
        proposed = set(self.project.proposed)
        for a, b in d.arrows:
            na, nb = d.node(a), d.node(b)
            self.addLine(na.x, na.y, nb.x, nb.y, QPen(Qt.GlobalColor.darkGray, 1.5))
        for n in d.nodes:
            text = f"{n.label}\n[{n.kind}]" + ("" if n.column else "\n(no data)")
            item = self.addText(text)
            r = item.boundingRect()
            item.setPos(n.x - r.width() / 2, n.y - r.height() / 2)
            pen = QPen(Qt.GlobalColor.black, 2.5 if n.id in proposed else 1)
            self.addRect(item.sceneBoundingRect(), pen).setZValue(-1)

    def set_mode(self, mode: str) -> None: ...
    def delete_selection(self) -> None: ...
    def reverse_selected_arrows(self) -> None: ...
    def copy_selection(self) -> dict[str, Any]:
        return {}

    def paste(self, clip: Any) -> list[str]:
        return []

    def auto_layout(self) -> None: ...
    def highlight_path(self, nodes: Any) -> None: ...

    def set_annotations(self, roles: Any, verdicts: Any) -> None:
        self._verdicts = dict(verdicts or {})

    def add_node_at(self, pos: QPointF) -> str | None:
        node_id = self.project.diagram.fresh_id("node")
        ok = push(
            self.undo_stack,
            AddNode(self.project, Node(node_id, x=pos.x(), y=pos.y())),
            self.message.emit,
        )
        return node_id if ok else None


class StandInView(QGraphicsView):
    def __init__(self, scene: StandInScene) -> None:
        super().__init__(scene)
        self.setRenderHint(QPainter.RenderHint.Antialiasing)

    def fit_to_window(self) -> None:
        rect = self.scene().itemsBoundingRect().adjusted(-40, -40, 40, 40)
        self.fitInView(rect, Qt.AspectRatioMode.KeepAspectRatio)
