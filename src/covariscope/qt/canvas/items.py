"""Graphics items of the canvas: nodes, arrows, proxy links, the label editor.

Items only draw and report; they never change the model.  The scene turns
what the user does with them into commands.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFocusEvent, QKeyEvent, QPainter, QPainterPath, QPen
from PySide6.QtWidgets import (
    QGraphicsItem,
    QGraphicsLineItem,
    QGraphicsObject,
    QGraphicsSceneMouseEvent,
    QGraphicsTextItem,
    QStyleOptionGraphicsItem,
    QWidget,
)

from covariscope.model.diagram import Node
from covariscope.qt.canvas.drawing import (
    NodeLook,
    arrow_shape,
    bow_control,
    distance,
    label_font,
    link_ends,
    node_geometry,
    paint_arrow,
    paint_node,
    paint_proxy,
    paint_suggestion,
    verdict_text,
)
from covariscope.qt.palette import colour

__all__ = ["ArrowItem", "LabelEditor", "NodeItem", "ProxyItem", "RubberLink", "SuggestionItem"]


class NodeItem(QGraphicsObject):
    """One node, drawn by :func:`~covariscope.qt.canvas.drawing.paint_node`."""

    def __init__(self, node: Node, proposed: bool = False) -> None:
        super().__init__()
        self.node = node
        self.proposed = proposed
        self.role: str | None = None
        self.verdict: tuple[str, str] | None = None
        self.highlighted = False
        self.moved_callback: Callable[[str], None] | None = None
        self.setFlags(
            QGraphicsItem.GraphicsItemFlag.ItemIsSelectable
            | QGraphicsItem.GraphicsItemFlag.ItemIsMovable
            | QGraphicsItem.GraphicsItemFlag.ItemSendsGeometryChanges
        )
        self.setAcceptHoverEvents(True)
        self.setZValue(2)
        self.setPos(node.x, node.y)
        # signals rather than an itemChange override, which PySide cannot
        # return None from safely
        self.xChanged.connect(self._position_changed)
        self.yChanged.connect(self._position_changed)
        self.geometry = node_geometry(self.look())
        self._refresh_tooltip()

    @property
    def node_id(self) -> str:
        return self.node.id

    def look(self) -> NodeLook:
        return NodeLook.of(
            self.node, self.proposed, self.role, self.verdict, self.highlighted, self.isSelected()
        )

    def _relayout(self) -> None:
        self.prepareGeometryChange()
        self.geometry = node_geometry(self.look())
        self._refresh_tooltip()
        self.update()

    def _refresh_tooltip(self) -> None:
        n = self.node
        lines = [f"{n.label}  ({n.id})", self.look().tag]
        if n.column:
            lines.append(f"column: {n.column}")
        if self.proposed:
            lines.append("in the proposed adjustment set")
        if self.verdict:
            lines.append(f"verdict: {verdict_text(self.verdict)}")
        self.setToolTip("\n".join(lines))

    def set_node(self, node: Node) -> None:
        self.node = node
        if self.pos() != QPointF(node.x, node.y):
            self.setPos(node.x, node.y)
        self._relayout()

    def set_proposed(self, proposed: bool) -> None:
        if proposed != self.proposed:
            self.proposed = proposed
            self._relayout()

    def set_annotation(self, role: str | None, verdict: tuple[str, str] | None) -> None:
        if (role, verdict) != (self.role, self.verdict):
            self.role, self.verdict = role, verdict
            self._relayout()

    def set_highlighted(self, on: bool) -> None:
        if on != self.highlighted:
            self.highlighted = on
            self.update()

    # -- QGraphicsItem -------------------------------------------------------------
    def boundingRect(self) -> QRectF:
        return self.geometry.bounds

    def shape(self) -> QPainterPath:
        if self.geometry.frame is not None:
            path = QPainterPath()
            path.addRect(self.geometry.frame)
            return path
        return self.geometry.outline

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        paint_node(painter, self.look(), self.geometry)

    def _position_changed(self) -> None:
        if self.moved_callback is not None:
            self.moved_callback(self.node.id)


class _LinkItem(QGraphicsItem):
    def __init__(self, pair: tuple[str, str], a: NodeItem, b: NodeItem) -> None:
        super().__init__()
        self.pair = pair
        self.ends = (a, b)
        self.highlighted = False
        #: sideways offset (pixels) so a proxy link beside an arrow on the same
        #: pair of nodes stays visible instead of lying on top of it
        self.shift = 0.0
        self.p1 = QPointF()
        self.p2 = QPointF()
        self._shape = QPainterPath()
        self._bounds = QRectF()
        self.setFlags(QGraphicsItem.GraphicsItemFlag.ItemIsSelectable)
        self.setZValue(1)
        self.update_geometry()

    def update_geometry(self) -> None:
        a, b = self.ends
        self.prepareGeometryChange()
        self.p1, self.p2 = link_ends(a.pos(), a.geometry, b.pos(), b.geometry, gap=2.5)
        if self.shift:
            d = self.p2 - self.p1
            length = (d.x() ** 2 + d.y() ** 2) ** 0.5 or 1.0
            normal = QPointF(-d.y() / length, d.x() / length) * self.shift
            self.p1, self.p2 = self.p1 + normal, self.p2 + normal
        self._shape = arrow_shape(self.p1, self.p2, 12.0)
        # kept: Qt asks for it on every paint and index update, and the
        # bounds of a stroked path are measured anew on each call
        self._bounds = self._shape.boundingRect().adjusted(-6, -6, 6, 6)
        self.update()

    def set_shift(self, shift: float) -> None:
        if shift != self.shift:
            self.shift = shift
            self.update_geometry()

    def set_highlighted(self, on: bool) -> None:
        if on != self.highlighted:
            self.highlighted = on
            self.update()

    def boundingRect(self) -> QRectF:
        return self._bounds

    def shape(self) -> QPainterPath:
        return self._shape


class ArrowItem(_LinkItem):
    """A cause → effect arrow."""

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        paint_arrow(painter, self.p1, self.p2, self.highlighted, self.isSelected())


class ProxyItem(_LinkItem):
    """An undirected proxy link."""

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        paint_proxy(painter, self.p1, self.p2, self.highlighted, self.isSelected())


class SuggestionItem(_LinkItem):
    """A link the data suggest the diagram may lack (a failed independence
    claim): drawn over the diagram, not part of it, never selectable."""

    def __init__(
        self,
        pair: tuple[str, str],
        a: NodeItem,
        b: NodeItem,
        heads: tuple[bool, bool],
        others: tuple[NodeItem, ...] = (),
    ) -> None:
        self.heads = heads
        #: the other nodes, so the bow (and its "?") bends away from them
        self.others = others
        self.side = 1.0
        super().__init__(pair, a, b)
        self.setFlags(QGraphicsItem.GraphicsItemFlag(0))
        self.setZValue(1.5)  # over the links, under the nodes (their labels stay readable)

    def update_geometry(self) -> None:
        super().update_geometry()
        self.side = max((1.0, -1.0), key=self._clearance)

    def _clearance(self, side: float) -> float:
        """How far the bow's middle lies from the nearest other node."""
        c = bow_control(self.p1, self.p2, side)
        mid = (self.p1 + self.p2) * 0.25 + c * 0.5  # the quadratic curve at t = ½
        return min((distance(mid, n.pos()) for n in self.others), default=0.0)

    def boundingRect(self) -> QRectF:
        pad = min(0.18 * distance(self.p1, self.p2), 40.0) + 14.0
        return QRectF(self.p1, self.p2).normalized().adjusted(-pad, -pad, pad, pad)

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        paint_suggestion(painter, self.p1, self.p2, self.heads, side=self.side)


class RubberLink(QGraphicsLineItem):
    """The line that follows the pointer while a link is being drawn."""

    def __init__(self, start: QPointF, proxy: bool = False) -> None:
        super().__init__(start.x(), start.y(), start.x(), start.y())
        pen = QPen(colour("proxy") if proxy else colour("selection"), 1.6)
        pen.setStyle(Qt.PenStyle.DashLine)
        self.setPen(pen)
        self.setZValue(5)
        self.setAcceptedMouseButtons(Qt.MouseButton.NoButton)

    def follow(self, point: QPointF) -> None:
        line = self.line()
        line.setP2(point)
        self.setLine(line)


class LabelEditor(QGraphicsTextItem):
    """Rename in place: Enter commits, Esc cancels, leaving the field commits."""

    def __init__(self, node_item: NodeItem, on_done: Callable[[str, str | None], None]) -> None:
        super().__init__(node_item.node.label)
        self.node_id = node_item.node.id
        self._on_done = on_done
        self._finished = False
        self.setFont(label_font())
        self.setTextInteractionFlags(Qt.TextInteractionFlag.TextEditorInteraction)
        self.setZValue(10)
        self.setDefaultTextColor(colour("text"))
        rect = node_item.geometry.label_rect
        width = max(rect.width(), 120.0)
        self.setTextWidth(width)
        self.setPos(node_item.pos() + QPointF(-width / 2, rect.top() - 4))
        cursor = self.textCursor()
        cursor.select(cursor.SelectionType.Document)
        self.setTextCursor(cursor)

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        painter.setPen(QPen(colour("selection"), 1.2))
        painter.setBrush(colour("badge_fill"))
        painter.drawRect(self.boundingRect())
        super().paint(painter, option, widget)  # type: ignore[arg-type]  # Qt accepts no widget

    def finish(self, commit: bool) -> None:
        if self._finished:
            return
        self._finished = True
        text = self.toPlainText().strip().replace("\n", " ") if commit else None
        self._on_done(self.node_id, text)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        if event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter):
            self.finish(True)
            event.accept()
        elif event.key() == Qt.Key.Key_Escape:
            self.finish(False)
            event.accept()
        else:
            super().keyPressEvent(event)

    def focusOutEvent(self, event: QFocusEvent) -> None:
        super().focusOutEvent(event)
        self.finish(True)

    def mouseDoubleClickEvent(self, event: QGraphicsSceneMouseEvent) -> None:
        super().mouseDoubleClickEvent(event)
        event.accept()
