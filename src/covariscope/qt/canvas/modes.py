"""Mouse modes of the canvas, one class per mode.

Each mode receives plain :class:`Pointer` records (position in scene
coordinates, button, modifiers) and answers whether it consumed the event;
the scene turns Qt's mouse events into pointers and falls back to the
default behaviour (select, move, rubber band) when a mode declines.  Tests
drive the modes with pointers directly.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from PySide6.QtCore import QPointF, Qt

from covariscope.qt.canvas.drawing import distance
from covariscope.qt.canvas.items import RubberLink

if TYPE_CHECKING:
    from covariscope.qt.canvas.scene import DiagramScene

__all__ = ["ConnectMode", "Mode", "Pointer", "SelectMode"]

_CLICK_SLOP = 6.0  # scene units the pointer may wander and still be a click


@dataclass(frozen=True)
class Pointer:
    """One mouse event as the modes see it."""

    pos: QPointF
    button: Qt.MouseButton = Qt.MouseButton.LeftButton
    modifiers: Qt.KeyboardModifier = Qt.KeyboardModifier.NoModifier


class Mode:
    name = ""

    def __init__(self, scene: DiagramScene) -> None:
        self.scene = scene

    def press(self, p: Pointer) -> bool:
        return False

    def move(self, p: Pointer) -> bool:
        return False

    def release(self, p: Pointer) -> bool:
        return False

    def cancel(self) -> None:
        """Leave the mode: drop any gesture in progress."""


class _LinkGesture:
    """Dragging a link out of a node and dropping it on another."""

    def __init__(self, scene: DiagramScene, link: str) -> None:
        self.scene, self.link = scene, link
        self.source: str | None = None
        self.start = QPointF()
        self.wandered = False
        self.line: RubberLink | None = None

    @property
    def active(self) -> bool:
        return self.source is not None

    def begin(self, source: str, pos: QPointF) -> None:
        self.source, self.start, self.wandered = source, QPointF(pos), False
        centre = self.scene.nodes[source].pos()
        self.line = RubberLink(centre, proxy=self.link == "proxy")
        self.line.follow(pos)
        self.scene.addItem(self.line)

    def follow(self, pos: QPointF) -> None:
        if self.line is not None:
            self.line.follow(pos)
        if distance(pos, self.start) > _CLICK_SLOP:
            self.wandered = True

    def finish(self, pos: QPointF) -> bool:
        """Make the link if the pointer is over another node.  Returns True
        when a link was attempted."""
        source = self.source
        self.cancel()
        if source is None:
            return False
        target = self.scene.node_id_at(pos)
        if target is None:
            return False
        if target == source and not self.wandered:
            return False  # a plain click on the node, not a link
        self.scene.connect_nodes(source, target, self.link)
        return True

    def cancel(self) -> None:
        if self.line is not None:
            self.scene.removeItem(self.line)
            self.line = None
        self.source = None


class SelectMode(Mode):
    """Click to select, drag to move (one command on release), drag on empty
    canvas for a rubber band (the view draws it), Shift+drag from a node to
    draw an arrow."""

    name = "select"

    def __init__(self, scene: DiagramScene) -> None:
        super().__init__(scene)
        self.gesture = _LinkGesture(scene, "arrow")

    def press(self, p: Pointer) -> bool:
        if (
            p.button == Qt.MouseButton.LeftButton
            and p.modifiers & Qt.KeyboardModifier.ShiftModifier
        ):
            source = self.scene.node_id_at(p.pos)
            if source is not None:
                self.gesture.begin(source, p.pos)
                return True
        return False

    def move(self, p: Pointer) -> bool:
        if self.gesture.active:
            self.gesture.follow(p.pos)
            return True
        return False

    def release(self, p: Pointer) -> bool:
        if self.gesture.active:
            self.gesture.finish(p.pos)
            return True
        self.scene.commit_moves()
        return False

    def cancel(self) -> None:
        self.gesture.cancel()


class ConnectMode(Mode):
    """Drag from one node to another to link them: an arrow (cause → effect)
    or a proxy link.  ``arm`` starts a link from a node chosen elsewhere (a
    context menu): the next click on another node completes it."""

    def __init__(self, scene: DiagramScene, link: str) -> None:
        super().__init__(scene)
        self.name = link
        self.gesture = _LinkGesture(scene, link)
        self.armed = False

    def arm(self, source: str) -> None:
        self.gesture.cancel()
        self.gesture.begin(source, self.scene.nodes[source].pos())
        self.gesture.wandered = True
        self.armed = True

    def press(self, p: Pointer) -> bool:
        if p.button != Qt.MouseButton.LeftButton:
            self.cancel()
            return p.button != Qt.MouseButton.RightButton
        if self.armed:
            self.armed = False
            self.gesture.finish(p.pos)
            self.scene.set_mode("select")
            return True
        source = self.scene.node_id_at(p.pos)
        if source is not None:
            self.gesture.begin(source, p.pos)
        return True

    def move(self, p: Pointer) -> bool:
        if self.gesture.active:
            self.gesture.follow(p.pos)
        return True

    def release(self, p: Pointer) -> bool:
        if self.gesture.active and not self.armed:
            self.gesture.finish(p.pos)
        return True

    def cancel(self) -> None:
        self.armed = False
        self.gesture.cancel()
