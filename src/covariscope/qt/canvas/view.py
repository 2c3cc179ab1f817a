"""The view on the diagram scene: zoom, pan, fit, keyboard."""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QPoint, QPointF, QRectF, QSize, QSizeF, Qt
from PySide6.QtGui import (
    QCursor,
    QKeyEvent,
    QMouseEvent,
    QPainter,
    QResizeEvent,
    QWheelEvent,
)
from PySide6.QtWidgets import QApplication, QGraphicsView

from covariscope.qt.canvas.items import LabelEditor
from covariscope.qt.canvas.scene import DiagramScene

__all__ = ["DiagramView"]

_STEP = 1.2
_MIN_ZOOM, _MAX_ZOOM = 0.15, 4.0
#: the smallest zoom the window's own fit uses, so that the small words on
#: the diagram (role tags, verdict chips) stay readable: about 8 px and more
#: (common practice for screen text); Fit (Ctrl+0) shows the whole diagram
READABLE_ZOOM = 0.7


def _close(a: QRectF, b: QRectF, tolerance: float) -> bool:
    """Two rectangles equal to within ``tolerance`` on every edge."""
    return (
        abs(a.left() - b.left()) <= tolerance
        and abs(a.top() - b.top()) <= tolerance
        and abs(a.right() - b.right()) <= tolerance
        and abs(a.bottom() - b.bottom()) <= tolerance
    )


class DiagramView(QGraphicsView):
    """Ctrl+wheel or +/- zoom; middle-drag or Space+drag pans; Delete removes
    the selection; N adds a node at the pointer (and opens its name); F2
    renames the selected node; Esc returns to selecting."""

    def __init__(self, scene: DiagramScene, parent: Any = None) -> None:
        super().__init__(scene, parent)
        self.diagram_scene = scene
        self.setRenderHints(QPainter.RenderHint.Antialiasing | QPainter.RenderHint.TextAntialiasing)
        self.setDragMode(QGraphicsView.DragMode.RubberBandDrag)
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.AnchorUnderMouse)
        # a scroll bar coming or going must not shift the drawing under the pointer
        self.setResizeAnchor(QGraphicsView.ViewportAnchor.NoAnchor)
        self.setViewportUpdateMode(QGraphicsView.ViewportUpdateMode.BoundingRectViewportUpdate)
        self.setAcceptDrops(True)
        self._pan_from: QPoint | None = None
        self._space = False
        #: the user zoomed or panned: the window stops refitting on resize
        self.user_zoomed = False
        self._measured_size = QSize()
        scene.mode_changed.connect(self._on_mode)
        scene.changed.connect(self._track_items)

    # -- zoom ---------------------------------------------------------------------------
    def zoom(self) -> float:
        return self.transform().m11()

    def set_zoom(self, factor: float) -> None:
        factor = min(max(factor, _MIN_ZOOM), _MAX_ZOOM)
        self.scale(factor / self.zoom(), factor / self.zoom())

    def zoom_in(self) -> None:
        self.user_zoomed = True
        self.set_zoom(self.zoom() * _STEP)

    def zoom_out(self) -> None:
        self.user_zoomed = True
        self.set_zoom(self.zoom() / _STEP)

    def actual_size(self) -> None:
        self.user_zoomed = True
        self.set_zoom(1.0)

    def fit_to_window(self, readable: bool = False) -> None:
        """Show the whole diagram; ``readable`` stops at :data:`READABLE_ZOOM`
        (the diagram then scrolls) so that its words stay legible."""
        self.user_zoomed = False
        scene = self.diagram_scene
        if not scene.nodes:
            self.resetTransform()
            return
        rect = scene.itemsBoundingRect().adjusted(-30, -30, 30, 30)
        # the scrollable area is the diagram itself, so a fitted diagram
        # shows no scroll bars (the scene's own rect is far larger)
        self.setSceneRect(rect)
        self.fitInView(rect, Qt.AspectRatioMode.KeepAspectRatio)
        if self.zoom() > 1.5:  # a small diagram stays at a readable size
            self.set_zoom(1.5)
            self.centerOn(rect.center())
        elif readable and self.zoom() < READABLE_ZOOM:
            self.set_zoom(READABLE_ZOOM)
            self.centerOn(rect.center())
        self._track_items()

    def _track_items(self, *_regions: Any) -> None:
        """Keep the scrollable area = the diagram plus what is in view, so
        scroll bars appear only when part of the diagram is out of sight and
        a node added or moved beyond the edge can still be reached.

        What is "in view" is measured on the whole frame, not the viewport:
        a scroll bar coming or going then changes nothing here, so the two
        cannot chase each other (that loop redrew an idle window for ever).
        The visible part of the diagram stays where it is on the screen when
        the area grows or shrinks, so nothing moves under the pointer."""
        items = self.diagram_scene.itemsBoundingRect()
        if items.isNull():
            return
        zoom = max(self.zoom(), 1e-6)
        pad = 2.0 / zoom  # rounding must not bring the bars back
        frame = self.contentsRect()
        origin = self.mapToScene(QPoint(0, 0))
        seen = QRectF(origin, QSizeF(frame.width() / zoom, frame.height() / zoom))
        seen = seen.adjusted(pad, pad, -pad, -pad)
        wanted = items.adjusted(-30, -30, 30, 30).united(seen)
        if QApplication.mouseButtons() != Qt.MouseButton.NoButton:
            wanted = wanted.united(self.sceneRect())  # a drag only ever grows the area
        if _close(wanted, self.sceneRect(), 0.5 / zoom):
            return
        anchor = self.mapToScene(QPoint(0, 0))
        self.setSceneRect(wanted)
        moved = self.mapFromScene(anchor)
        if moved != QPoint(0, 0):
            bars = self.horizontalScrollBar(), self.verticalScrollBar()
            bars[0].setValue(bars[0].value() + moved.x())
            bars[1].setValue(bars[1].value() + moved.y())

    def resizeEvent(self, event: QResizeEvent) -> None:
        super().resizeEvent(event)
        # only a change of the frame (the window or a dock resized) measures
        # again; the viewport resized by a scroll bar does not
        if self.size() != self._measured_size:
            self._measured_size = self.size()
            self._track_items()

    def wheelEvent(self, event: QWheelEvent) -> None:
        if event.modifiers() & Qt.KeyboardModifier.ControlModifier:
            steps = event.angleDelta().y() / 120.0
            self.user_zoomed = True
            self.set_zoom(self.zoom() * _STEP**steps)
            event.accept()
            return
        super().wheelEvent(event)

    # -- keys ---------------------------------------------------------------------------
    def _editing(self) -> bool:
        return isinstance(self.diagram_scene.focusItem(), LabelEditor)

    def cursor_scene_pos(self) -> QPointF:
        local = self.viewport().mapFromGlobal(QCursor.pos())
        if not self.viewport().rect().contains(local):
            local = self.viewport().rect().center()
        return self.mapToScene(local)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        if self._editing():
            super().keyPressEvent(event)
            return
        key, scene = event.key(), self.diagram_scene
        if key in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace):
            scene.delete_selection()
        elif key == Qt.Key.Key_N and not event.modifiers() & Qt.KeyboardModifier.ControlModifier:
            node_id = scene.add_node_at(self.cursor_scene_pos())
            if node_id:
                scene.start_rename(node_id)
        elif key == Qt.Key.Key_F2:
            selected = scene.selected_node_ids()
            if len(selected) == 1:
                scene.start_rename(selected[0])
        elif key in (Qt.Key.Key_Plus, Qt.Key.Key_Equal):
            self.zoom_in()
        elif key == Qt.Key.Key_Minus:
            self.zoom_out()
        elif key == Qt.Key.Key_Escape:
            scene.set_mode("select")
        elif key == Qt.Key.Key_Space and not event.isAutoRepeat():
            self._space = True
            self.user_zoomed = True
            self.setDragMode(QGraphicsView.DragMode.ScrollHandDrag)
            self.setInteractive(False)
        else:
            super().keyPressEvent(event)
            return
        event.accept()

    def keyReleaseEvent(self, event: QKeyEvent) -> None:
        if event.key() == Qt.Key.Key_Space and not event.isAutoRepeat() and self._space:
            self._space = False
            self.setInteractive(True)
            self._on_mode(self.diagram_scene.mode.name)
            event.accept()
            return
        super().keyReleaseEvent(event)

    # -- middle-drag pan -------------------------------------------------------------------
    def mousePressEvent(self, event: QMouseEvent) -> None:
        if event.button() == Qt.MouseButton.MiddleButton:
            self._pan_from = event.position().toPoint()
            self.user_zoomed = True
            self.viewport().setCursor(Qt.CursorShape.ClosedHandCursor)
            event.accept()
            return
        super().mousePressEvent(event)

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        if self._pan_from is not None:
            now = event.position().toPoint()
            delta = now - self._pan_from
            self._pan_from = now
            self.horizontalScrollBar().setValue(self.horizontalScrollBar().value() - delta.x())
            self.verticalScrollBar().setValue(self.verticalScrollBar().value() - delta.y())
            event.accept()
            return
        super().mouseMoveEvent(event)

    def mouseReleaseEvent(self, event: QMouseEvent) -> None:
        if event.button() == Qt.MouseButton.MiddleButton and self._pan_from is not None:
            self._pan_from = None
            self.viewport().unsetCursor()
            event.accept()
            return
        super().mouseReleaseEvent(event)

    def _on_mode(self, name: str) -> None:
        if self._space:
            return
        if name == "select":
            self.setDragMode(QGraphicsView.DragMode.RubberBandDrag)
            self.viewport().unsetCursor()
        else:
            self.setDragMode(QGraphicsView.DragMode.NoDrag)
            self.viewport().setCursor(Qt.CursorShape.CrossCursor)
