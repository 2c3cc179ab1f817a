"""A plain vector drawing of the diagram for the printed page.

Used when no richer drawer is given.  Positions come from the canvas; the
drawing keeps their arrangement, scaled into the rectangle.  Conventions of
the page: a node in the proposed set is boxed (a textbook
convention), an unmeasured node has a dashed outline and an italic label, the
exposure and the outcome are bold and rounded, a proxy link is a dotted line
without a head.  Every label is measured and elided to its box.
"""

from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPen, QPolygonF

from covariscope.report.layout import Fonts, TextItem, wrap_text
from covariscope.views.report_content import DiagramSketch

__all__ = ["draw_sketch"]

_MIN_LABEL_PT = 5.5
_INK = QColor(20, 20, 20)
_GREY = QColor(110, 110, 110)


def _border_point(rect: QRectF, toward: QPointF) -> QPointF:
    """Where the line from the rect's centre toward a point leaves the rect."""
    c = rect.center()
    dx, dy = toward.x() - c.x(), toward.y() - c.y()
    if dx == 0 and dy == 0:
        return c
    sx = (rect.width() / 2) / abs(dx) if dx else math.inf
    sy = (rect.height() / 2) / abs(dy) if dy else math.inf
    s = min(sx, sy)
    return QPointF(c.x() + dx * s, c.y() + dy * s)


def draw_sketch(
    painter: QPainter, rect: QRectF, sketch: DiagramSketch, fonts: Fonts, label_pt: float
) -> list[TextItem]:
    """Draw ``sketch`` inside ``rect``; returns the text items drawn."""
    items: list[TextItem] = []
    nodes = sketch.nodes
    if not nodes:
        return items
    device_pt = painter.device().logicalDpiY() / 72.0
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    painter.setPen(QPen(QColor(170, 170, 170), 0.5 * device_pt))
    painter.setBrush(Qt.BrushStyle.NoBrush)
    painter.drawRect(rect)

    # labels shrink with crowding, but not below a size that still reads
    size = max(_MIN_LABEL_PT, min(label_pt, label_pt * math.sqrt(14 / max(len(nodes), 1))))
    fm = fonts.metrics(size)
    pad = fm.averageCharWidth() * 0.6
    line_h = fm.lineSpacing()
    max_w = max(rect.width() / 4.5, fm.averageCharWidth() * 6)
    box_h = 2 * line_h + 2 * pad

    xs = [n.x for n in nodes]
    ys = [n.y for n in nodes]
    x0, x1 = min(xs), max(xs)
    y0, y1 = min(ys), max(ys)
    inner = rect.adjusted(max_w / 2 + pad, box_h / 2 + pad, -(max_w / 2 + pad), -(box_h / 2 + pad))
    span_x = (x1 - x0) or 1.0
    span_y = (y1 - y0) or 1.0
    centres = {
        n.id: QPointF(
            inner.center().x() if x1 == x0 else inner.left() + (n.x - x0) / span_x * inner.width(),
            inner.center().y() if y1 == y0 else inner.top() + (n.y - y0) / span_y * inner.height(),
        )
        for n in nodes
    }

    # each label may use the room up to its nearest neighbour on the same level;
    # exposure and outcome are sized first (they always show their label) and
    # the others keep clear of them
    boxes: dict[str, QRectF] = {}
    lines_of: dict[str, list[str]] = {}
    size_of: dict[str, float] = {}
    gap = fm.averageCharWidth() * 0.5
    key_kinds = ("exposure", "outcome")
    ordered = sorted(nodes, key=lambda n: n.kind not in key_kinds)
    for n in ordered:
        c = centres[n.id]
        main = n.kind in key_kinds
        room = max_w
        for m in nodes:
            if m.id == n.id:
                continue
            d = centres[m.id]
            if abs(d.y() - c.y()) >= box_h:
                continue
            dx = abs(d.x() - c.x())
            if m.id in boxes:  # already placed: keep clear of its box
                room = min(room, 2 * (dx - boxes[m.id].width() / 2 - gap))
            elif not (main and m.kind not in key_kinds):
                room = min(room, dx * 0.92)
        room = max(room, fm.averageCharWidth() * 4)
        if main:
            room = max(room, rect.width() / 4.5)
        # a crowded label first gets a slightly smaller type, then its row number
        for trial in (size, size * 0.88, size * 0.78):
            trial = max(_MIN_LABEL_PT, trial)
            metrics = fonts.metrics(trial, bold=main, italic=not n.measured)
            pad_t = metrics.averageCharWidth() * 0.6
            lines = wrap_text(n.label, metrics, room - 2 * pad_t, 2, break_words=False)
            cut = not lines or any(line.endswith("…") for line in lines)
            if not cut:
                break
        if cut and n.key:
            # a crowded diagram names the node by its row in the covariate table
            trial = size
            metrics = fonts.metrics(trial, bold=main, italic=not n.measured)
            lines = [n.key]
        elif not lines:
            lines = [n.id[:1]]
        width = max(metrics.horizontalAdvance(line) for line in lines) + 2 * pad
        height = len(lines) * metrics.lineSpacing() + 2 * pad
        boxes[n.id] = QRectF(c.x() - width / 2, c.y() - height / 2, width, height)
        lines_of[n.id] = lines
        size_of[n.id] = trial

    # arrows first, so boxes cover their ends
    pen = QPen(_INK, 0.6 * device_pt)
    head = max(line_h * 0.45, 2.0 * device_pt)
    for a, b in sketch.arrows:
        if a not in boxes or b not in boxes:
            continue
        p = _border_point(boxes[a], boxes[b].center())
        q = _border_point(boxes[b], boxes[a].center())
        painter.setPen(pen)
        painter.drawLine(QLineF(p, q))
        angle = math.atan2(q.y() - p.y(), q.x() - p.x())
        left = QPointF(q.x() - head * math.cos(angle - 0.4), q.y() - head * math.sin(angle - 0.4))
        right = QPointF(q.x() - head * math.cos(angle + 0.4), q.y() - head * math.sin(angle + 0.4))
        painter.setBrush(QBrush(_INK))
        painter.drawPolygon(QPolygonF([q, left, right]))
    dotted = QPen(_GREY, 0.8 * device_pt, Qt.PenStyle.DotLine)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    for a, b in sketch.proxies:
        if a in boxes and b in boxes:
            painter.setPen(dotted)
            painter.drawLine(QLineF(boxes[a].center(), boxes[b].center()))

    for n in nodes:
        box = boxes[n.id]
        painter.setBrush(QBrush(QColor(255, 255, 255)))
        if n.adjusted:
            painter.setPen(QPen(_INK, 1.3 * device_pt))
            painter.drawRect(box)
        elif n.kind in ("exposure", "outcome"):
            painter.setBrush(QBrush(QColor(235, 235, 235)))
            painter.setPen(QPen(_INK, 1.0 * device_pt))
            painter.drawRoundedRect(box, box.height() / 2.5, box.height() / 2.5)
        else:
            style = Qt.PenStyle.SolidLine if n.measured else Qt.PenStyle.DashLine
            painter.setPen(QPen(_GREY, 0.5 * device_pt, style))
            painter.drawRoundedRect(box, pad * 1.5, pad * 1.5)
        if n.adjusted and not n.measured:
            painter.setPen(QPen(_INK, 1.3 * device_pt, Qt.PenStyle.DashLine))
            painter.drawRect(box)
        bold = n.kind in key_kinds
        italic = not n.measured
        font, metrics = fonts.get(size_of[n.id], bold, italic)
        painter.setFont(font)
        painter.setPen(_INK)
        for k, line in enumerate(lines_of[n.id]):
            w = metrics.horizontalAdvance(line)
            top = box.top() + pad + k * metrics.lineSpacing()
            x = box.center().x() - w / 2
            painter.drawText(QPointF(x, top + metrics.ascent()), line)
            items.append(
                TextItem(
                    QRectF(x, top, w, metrics.height()),
                    line,
                    size_of[n.id],
                    bold,
                    italic,
                    "diagram",
                )
            )
    painter.restore()
    return items
