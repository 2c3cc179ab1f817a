"""Diagram export: PNG and SVG of the canvas, and a vector drawing of the
model into any painter (the report uses it).  GraphML needs no Qt and lives
in :mod:`covariscope.views.diagram`.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from itertools import pairwise
from pathlib import Path
from typing import Any

from PySide6.QtCore import QByteArray, QPointF, QRectF, QSize
from PySide6.QtGui import QColor, QImage, QImageWriter, QPainter

from covariscope.errors import CovariscopeError
from covariscope.model.diagram import Diagram
from covariscope.qt.canvas.drawing import (
    LABEL_PX,
    Annotations,
    NodeGeometry,
    NodeLook,
    link_ends,
    node_geometry,
    paint_arrow,
    paint_node,
    paint_proxy,
)
from covariscope.qt.canvas.items import LabelEditor, RubberLink
from covariscope.qt.canvas.scene import DiagramScene

__all__ = [
    "export_png",
    "export_svg",
    "render_diagram",
]

_MARGIN = 24.0


def _scene_rect(scene: DiagramScene) -> QRectF:
    rect = QRectF()
    for item in scene.items():
        if isinstance(item, LabelEditor | RubberLink):
            continue
        rect = rect.united(item.sceneBoundingRect())
    if rect.isEmpty():
        rect = QRectF(0, 0, 200, 100)
    return rect.adjusted(-_MARGIN, -_MARGIN, _MARGIN, _MARGIN)


class _CleanScene:
    """Render without selection, editor or rubber line."""

    def __init__(self, scene: DiagramScene) -> None:
        self.scene = scene

    def __enter__(self) -> QRectF:
        self.selected = self.scene.selectedItems()
        self.scene.clearSelection()
        self.hidden = [
            i
            for i in self.scene.items()
            if isinstance(i, LabelEditor | RubberLink) and i.isVisible()
        ]
        for item in self.hidden:
            item.hide()
        return _scene_rect(self.scene)

    def __exit__(self, *exc: object) -> None:
        for item in self.hidden:
            item.show()
        for chosen in self.selected:
            chosen.setSelected(True)


def _check_writable(path: Path) -> None:
    if not path.parent.exists():
        raise CovariscopeError(f"Cannot export to {path}: the folder {path.parent} does not exist.")


def export_png(scene: DiagramScene, path: str | os.PathLike[str], scale: float = 2.0) -> Path:
    """Write the canvas as a PNG image, ``scale`` pixels per scene unit."""
    path = Path(path)
    _check_writable(path)
    with _CleanScene(scene) as rect:
        size = QSize(max(1, round(rect.width() * scale)), max(1, round(rect.height() * scale)))
        image = QImage(size, QImage.Format.Format_ARGB32_Premultiplied)
        image.setDotsPerMeterX(round(96 * scale / 0.0254))
        image.setDotsPerMeterY(round(96 * scale / 0.0254))
        image.fill(QColor("#FFFFFF"))
        painter = QPainter(image)
        painter.setRenderHints(
            QPainter.RenderHint.Antialiasing | QPainter.RenderHint.TextAntialiasing
        )
        scene.render(painter, QRectF(image.rect()), rect)
        painter.end()
    if not QImageWriter(str(path), QByteArray(b"PNG")).write(image):
        raise CovariscopeError(
            f"Could not write the image {path}; check that the folder is writable."
        )
    return path


def export_svg(scene: DiagramScene, path: str | os.PathLike[str]) -> Path:
    """Write the canvas as an SVG drawing (vector, text kept as text)."""
    from PySide6.QtSvg import QSvgGenerator

    path = Path(path)
    _check_writable(path)
    with _CleanScene(scene) as rect:
        generator = QSvgGenerator()
        generator.setFileName(str(path))
        generator.setSize(QSize(round(rect.width()), round(rect.height())))
        generator.setViewBox(QRectF(0, 0, rect.width(), rect.height()))
        generator.setTitle("Causal diagram")
        generator.setDescription("Exported from Covariscope")
        painter = QPainter()
        if not painter.begin(generator):
            raise CovariscopeError(
                f"Could not write the drawing {path}; check that the folder is writable."
            )
        painter.fillRect(QRectF(0, 0, rect.width(), rect.height()), QColor("#FFFFFF"))
        scene.render(painter, QRectF(0, 0, rect.width(), rect.height()), rect)
        painter.end()
    return path


# -- vector drawing from the model ----------------------------------------------------


def render_diagram(
    painter: QPainter,
    target_rect: QRectF,
    diagram: Diagram,
    proposed: Iterable[str] = (),
    annotations: Annotations | dict[str, Any] | None = None,
    min_label_pt: float = 6.0,
) -> None:
    """Draw the diagram from the model, scaled to fit ``target_rect``.

    The drawing keeps its proportions and is centred.  When fitting would
    make labels smaller than ``min_label_pt`` points on the painter's device,
    the text stays at that size instead: the tag line is dropped and long
    labels are elided to the room between neighbours.
    """
    if len(diagram) == 0 or target_rect.width() <= 0 or target_rect.height() <= 0:
        return
    notes = Annotations.coerce(annotations)
    chosen = set(proposed)
    lit = set().union(*(set(s.split("|")) for s in notes.path)) if notes.path else set()
    looks = {
        n.id: NodeLook.of(
            n, n.id in chosen, notes.roles.get(n.id), notes.verdicts.get(n.id), n.id in lit
        )
        for n in diagram.nodes
    }
    centres = {n.id: QPointF(n.x, n.y) for n in diagram.nodes}
    dpi = painter.device().logicalDpiY() if painter.device() is not None else 96

    geoms = {i: node_geometry(look) for i, look in looks.items()}
    scale = _fit(target_rect, centres, geoms)
    label_pt = LABEL_PX * scale * 72.0 / dpi
    if label_pt < min_label_pt:
        k = min_label_pt / label_pt
        compact = k > 1.3
        # text may grow only until nodes of one column would touch
        k_cap = (
            _room_above_below(centres, geoms)
            / node_geometry(NodeLook("Xg"), compact=compact).body.height()
        )
        k = max(1.0, min(k, 0.92 * k_cap))
        for _ in range(3):  # bigger text widens the drawing: refit a few times
            budget = _width_budget(centres, geoms)
            geoms = {
                i: node_geometry(look, font_scale=k, max_width=budget[i], compact=compact)
                for i, look in looks.items()
            }
            scale = _fit(target_rect, centres, geoms)
            k = max(k, min(min_label_pt / (LABEL_PX * scale * 72.0 / dpi), 0.92 * k_cap))

    bounds = _bounds(centres, geoms)
    painter.save()
    painter.setRenderHints(QPainter.RenderHint.Antialiasing | QPainter.RenderHint.TextAntialiasing)
    painter.translate(target_rect.center())
    painter.scale(scale, scale)
    painter.translate(-bounds.center())
    # hairlines stay visible on small drawings: at least ~0.4 pt
    weight = max(1.0, 0.4 * dpi / 72.0 / max(scale, 1e-9) / 1.5)
    hops = list(pairwise(notes.path or []))
    steps = [(set(p.split("|")), set(q.split("|"))) for p, q in hops]
    for a, b in diagram.proxies:
        p1, p2 = link_ends(centres[a], geoms[a], centres[b], geoms[b])
        on = any(a in p and b in p for p, _ in steps) or any(a in q and b in q for _, q in steps)
        paint_proxy(painter, p1, p2, highlighted=on, weight=weight)
    for a, b in diagram.arrows:
        p1, p2 = link_ends(centres[a], geoms[a], centres[b], geoms[b])
        on = any((a in p and b in q) or (b in p and a in q) for p, q in steps)
        paint_arrow(painter, p1, p2, highlighted=on, weight=weight)
    for node_id, look in looks.items():
        painter.save()
        painter.translate(centres[node_id])
        paint_node(painter, look, geoms[node_id], weight=weight)
        painter.restore()
    painter.restore()


def _bounds(centres: dict[str, QPointF], geoms: dict[str, NodeGeometry]) -> QRectF:
    rect = QRectF()
    for node_id, c in centres.items():
        rect = rect.united(geoms[node_id].bounds.translated(c))
    return rect.adjusted(-6, -6, 6, 6)


def _fit(target: QRectF, centres: dict[str, QPointF], geoms: dict[str, NodeGeometry]) -> float:
    bounds = _bounds(centres, geoms)
    return min(target.width() / bounds.width(), target.height() / bounds.height())


def _room_above_below(centres: dict[str, QPointF], geoms: dict[str, NodeGeometry]) -> float:
    """The smallest vertical distance between two nodes that overlap sideways."""
    room = float("inf")
    items = list(centres.items())
    for n, (i, ci) in enumerate(items):
        for j, cj in items[n + 1 :]:
            if abs(ci.x() - cj.x()) < (geoms[i].body.width() + geoms[j].body.width()) / 2:
                room = min(room, abs(ci.y() - cj.y()) - 6)
    return max(room, 1.0) if room != float("inf") else 10_000.0


def _width_budget(centres: dict[str, QPointF], geoms: dict[str, NodeGeometry]) -> dict[str, float]:
    """The width each node may take: the distance to its nearest neighbour in
    the same row, so that two neighbours at full width just do not touch."""
    budget: dict[str, float] = {}
    for i, ci in centres.items():
        gap = float("inf")
        for j, cj in centres.items():
            if (
                i != j
                and abs(ci.y() - cj.y()) < (geoms[i].body.height() + geoms[j].body.height()) / 2 + 4
            ):
                gap = min(gap, abs(ci.x() - cj.x()) - 8)
        budget[i] = max(gap, 40.0) if gap != float("inf") else 10_000.0
    return budget
