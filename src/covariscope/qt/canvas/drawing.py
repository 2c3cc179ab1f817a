"""How a node, an arrow and a proxy link look: geometry and painting.

One code path draws the diagram everywhere: the canvas items, the PNG/SVG
export and the report's vector drawing all call these functions, so the
printed rationale shows exactly what the analyst saw.  Sizes are in scene
units (one unit is one screen pixel at 100 % zoom); fonts are sized in the
same units so that a scaled painter scales text with the drawing.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import (
    QBrush,
    QColor,
    QFont,
    QFontMetricsF,
    QPainter,
    QPainterPath,
    QPainterPathStroker,
    QPen,
    QPolygonF,
)

from covariscope.model.diagram import Node
from covariscope.qt.palette import (
    BODY_SHAPES,
    ROLE_GLYPHS,
    colour,
    kind_fill,
    kind_outline,
    role_colour,
)
from covariscope.vocabulary import KIND_TERMS, ROLE_TERMS, Kind, Role

__all__ = [
    "LABEL_PX",
    "Annotations",
    "NodeGeometry",
    "NodeLook",
    "arrow_shape",
    "border_point",
    "label_font",
    "link_ends",
    "node_geometry",
    "paint_arrow",
    "paint_node",
    "paint_proxy",
    "proxy_shape",
    "verdict_text",
]

LABEL_PX = 14  # label font size in scene units
TAG_PX = 12  # at the window's smallest default zoom, about 8 px on screen
BADGE_PX = 12
_PAD_X = 12.0
_FRAME_GAP = 6.0


@dataclass(frozen=True)
class Annotations:
    """What the analysis adds to the drawing: role per node id, verdict per
    node id as ``(code, label)``, and an optional highlighted path (node ids;
    a measure group is named ``"a|b"``)."""

    roles: Mapping[str, str] = field(default_factory=dict)
    verdicts: Mapping[str, tuple[str, str]] = field(default_factory=dict)
    path: Sequence[str] | None = None

    @classmethod
    def coerce(cls, value: Any) -> Annotations:
        """Accept an Annotations, a mapping with the same keys, or None."""
        if value is None:
            return cls()
        if isinstance(value, Annotations):
            return value
        return cls(
            roles=dict(value.get("roles", {})),
            verdicts=dict(value.get("verdicts", {})),
            path=value.get("path"),
        )


def verdict_text(verdict: tuple[str, str] | None) -> str | None:
    """The badge text of a verdict given as ``(code, label)``: its label."""
    return verdict[1] if verdict else None


@dataclass(frozen=True)
class NodeLook:
    """Everything that decides how one node is drawn."""

    label: str
    kind: str = "covariate"
    measured: bool = True
    bound: bool = True
    proposed: bool = False
    role: str | None = None
    verdict: str | None = None
    highlighted: bool = False
    selected: bool = False

    @classmethod
    def of(
        cls,
        node: Node,
        proposed: bool = False,
        role: str | None = None,
        verdict: tuple[str, str] | None = None,
        highlighted: bool = False,
        selected: bool = False,
    ) -> NodeLook:
        return cls(
            label=node.label,
            kind=node.kind,
            measured=node.measured,
            bound=node.column is not None or not node.measured,
            proposed=proposed and node.kind == "covariate",
            role=role if node.kind == "covariate" else None,
            verdict=verdict_text(verdict),
            highlighted=highlighted,
            selected=selected,
        )

    @property
    def tag(self) -> str:
        """The small text over the label: kind (or role, for a covariate
        after analysis), then whether data are missing."""
        if self.role:
            words = [ROLE_TERMS[Role(self.role)].label]
        else:
            words = [KIND_TERMS[Kind(self.kind)].short]
        if not self.measured:
            words.append("no data")
        elif not self.bound:
            words.append("no column")
        return " · ".join(words)


@dataclass(frozen=True)
class NodeGeometry:
    """A node's shapes, centred on (0, 0)."""

    body: QRectF
    outline: QPainterPath
    label: str
    tag: str
    label_rect: QRectF
    tag_rect: QRectF | None
    frame: QRectF | None
    badge: QRectF | None
    bounds: QRectF
    font_scale: float = 1.0

    @property
    def edge_outline(self) -> QPainterPath:
        """Where links end: the adjusted-for box when there is one, and the
        verdict badge, which belongs to the node."""
        path = QPainterPath()
        path.setFillRule(Qt.FillRule.WindingFill)
        if self.frame is not None:
            path.addRect(self.frame)
        else:
            path.addPath(self.outline)
        if self.badge is not None:
            path.addRect(self.badge)
        return path


def label_font(scale: float = 1.0) -> QFont:
    return _font(LABEL_PX * scale, QFont.Weight.DemiBold)


def _font(px: float, weight: QFont.Weight = QFont.Weight.Normal) -> QFont:
    font = QFont()
    font.setPixelSize(max(1, round(px)))
    font.setWeight(weight)
    return font


def node_geometry(
    look: NodeLook,
    font_scale: float = 1.0,
    max_width: float | None = None,
    compact: bool = False,
) -> NodeGeometry:
    """Lay out one node.  ``max_width`` elides the label to fit; ``compact``
    drops the tag line (for very small drawings; the shape still tells the
    kind)."""
    k = font_scale
    lf, tf, bf = label_font(k), _font(TAG_PX * k), _font(BADGE_PX * k)
    lm, tm, bm = QFontMetricsF(lf), QFontMetricsF(tf), QFontMetricsF(bf)
    tag = "" if compact else look.tag
    glyph = 12.0 * k if look.role else 0.0
    point = 0.0
    label_h = lm.height()
    tag_h = 0.0 if compact else tm.height()
    height = label_h + tag_h + (8.0 if compact else 10.0) * k
    if look.kind in ("exposure", "outcome"):
        point = height * 0.32
    mark = 10.0 * k if look.measured and not look.bound and not compact else 0.0
    extra = 2 * _PAD_X * k + glyph + point + 2 * mark
    label = look.label
    width = max(lm.horizontalAdvance(label), tm.horizontalAdvance(tag)) + extra
    width = max(width, (44.0 if compact else 76.0) * k)
    if max_width is not None and width > max_width:
        width = max(max_width, extra + lm.horizontalAdvance("W…"))
        label = lm.elidedText(label, Qt.TextElideMode.ElideRight, width - extra + 1)
        tag = tm.elidedText(tag, Qt.TextElideMode.ElideRight, width - extra + 1)
    body = QRectF(-width / 2, -height / 2, width, height)
    outline = _body_outline(BODY_SHAPES.get(look.kind, "capsule"), body, point)
    inner_left = body.left() + _PAD_X * k + glyph + (point if look.kind == "outcome" else 0)
    inner_right = body.right() - _PAD_X * k - (point if look.kind == "exposure" else 0)
    inner_left, inner_right = inner_left + mark, inner_right - mark
    top = body.top() + (4.0 if compact else 5.0) * k
    tag_rect = None
    if tag:
        tag_rect = QRectF(inner_left, top, inner_right - inner_left, tag_h)
        top += tag_h
    label_rect = QRectF(inner_left, top, inner_right - inner_left, label_h)
    frame = (
        body.adjusted(-_FRAME_GAP * k, -_FRAME_GAP * k, _FRAME_GAP * k, _FRAME_GAP * k)
        if look.proposed
        else None
    )
    outer = frame if frame is not None else body
    badge = None
    if look.verdict:
        text_w = bm.horizontalAdvance(look.verdict)
        bw = min(text_w + 12 * k, max(outer.width() * 1.6, 90 * k))
        badge = QRectF(-bw / 2, outer.bottom() + 4 * k, bw, bm.height() + 4 * k)
    bounds = outer.adjusted(-4, -4, 4, 4)
    if badge is not None:
        bounds = bounds.united(badge.adjusted(-2, -2, 2, 2))
    return NodeGeometry(body, outline, label, tag, label_rect, tag_rect, frame, badge, bounds, k)


def _body_outline(shape: str, r: QRectF, point: float) -> QPainterPath:
    path = QPainterPath()
    if shape == "pointed":  # the exposure: a tab pointing at its effects
        path.addPolygon(
            QPolygonF(
                [
                    r.topLeft(),
                    QPointF(r.right() - point, r.top()),
                    QPointF(r.right(), r.center().y()),
                    QPointF(r.right() - point, r.bottom()),
                    r.bottomLeft(),
                    r.topLeft(),
                ]
            )
        )
    elif shape == "notched":  # the outcome: a slot that receives the tab
        path.addPolygon(
            QPolygonF(
                [
                    r.topLeft(),
                    r.topRight(),
                    r.bottomRight(),
                    r.bottomLeft(),
                    QPointF(r.left() + point, r.center().y()),
                    r.topLeft(),
                ]
            )
        )
    else:
        radius = min(r.height() / 2, 14.0)
        path.addRoundedRect(r, radius, radius)
    path.closeSubpath()
    return path


def paint_node(painter: QPainter, look: NodeLook, geom: NodeGeometry, weight: float = 1.0) -> None:
    """Draw a node centred on the painter's origin."""
    k = geom.font_scale
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    if look.selected:
        halo = QPen(colour("selection"), 6 * weight)
        halo.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
        c = halo.color()
        c.setAlpha(110)
        halo.setColor(c)
        painter.setPen(halo)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawPath(geom.outline if geom.frame is None else geom.edge_outline)
    if look.highlighted:
        pen = QPen(colour("path"), 3.2 * weight)
    else:
        pen = QPen(kind_outline(look.kind), 1.6 * weight)
    if not look.measured:
        pen.setStyle(Qt.PenStyle.CustomDashLine)
        pen.setDashPattern([4.0, 3.0])
    pen.setJoinStyle(Qt.PenJoinStyle.MiterJoin)
    painter.setPen(pen)
    painter.setBrush(QBrush(kind_fill(look.kind, look.measured)))
    painter.drawPath(geom.outline)

    if look.role:
        _paint_glyph(painter, look.role, geom, weight)
    if not look.bound and look.measured and geom.tag_rect is not None:
        _paint_unbound_mark(painter, geom, weight)

    if geom.tag_rect is not None:
        painter.setFont(_font(TAG_PX * k))
        painter.setPen(colour("muted"))
        painter.drawText(geom.tag_rect, Qt.AlignmentFlag.AlignCenter, geom.tag)
    painter.setFont(label_font(k))
    painter.setPen(colour("text"))
    painter.drawText(geom.label_rect, Qt.AlignmentFlag.AlignCenter, geom.label)

    if geom.frame is not None:  # adjusted for: the textbook box
        frame_pen = QPen(colour("path") if look.highlighted else colour("frame"), 2.0 * weight)
        frame_pen.setJoinStyle(Qt.PenJoinStyle.MiterJoin)
        painter.setPen(frame_pen)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(geom.frame)
    if geom.badge is not None and look.verdict:
        painter.setPen(QPen(colour("badge_edge"), 1.0 * weight))
        painter.setBrush(colour("badge_fill"))
        painter.drawRoundedRect(geom.badge, 3 * k, 3 * k)
        painter.setFont(_font(BADGE_PX * k, QFont.Weight.Medium))
        painter.setPen(colour("text"))
        text = QFontMetricsF(painter.font()).elidedText(
            look.verdict, Qt.TextElideMode.ElideRight, geom.badge.width() - 6 * k
        )
        painter.drawText(geom.badge, Qt.AlignmentFlag.AlignCenter, text)
    painter.restore()


def _paint_glyph(painter: QPainter, role: str, geom: NodeGeometry, weight: float) -> None:
    k = geom.font_scale
    size = 8.0 * k
    left = geom.body.left() + _PAD_X * k * 0.7
    c = QPointF(left + size / 2, geom.body.center().y())
    h = size / 2
    ink = role_colour(role)
    painter.setPen(QPen(ink.darker(140), 1.2 * weight))
    painter.setBrush(ink)
    glyph = ROLE_GLYPHS.get(role, "dot")
    if glyph == "triangle_up":
        painter.drawPolygon(
            QPolygonF(
                [
                    QPointF(c.x(), c.y() - h),
                    QPointF(c.x() + h, c.y() + h),
                    QPointF(c.x() - h, c.y() + h),
                ]
            )
        )
    elif glyph == "triangle_down":
        painter.drawPolygon(
            QPolygonF(
                [
                    QPointF(c.x() - h, c.y() - h),
                    QPointF(c.x() + h, c.y() - h),
                    QPointF(c.x(), c.y() + h),
                ]
            )
        )
    elif glyph == "diamond":
        painter.drawPolygon(
            QPolygonF(
                [
                    QPointF(c.x(), c.y() - h),
                    QPointF(c.x() + h, c.y()),
                    QPointF(c.x(), c.y() + h),
                    QPointF(c.x() - h, c.y()),
                ]
            )
        )
    elif glyph in ("cross", "plus"):
        painter.setPen(QPen(ink.darker(120), 2.2 * weight))
        if glyph == "cross":
            painter.drawLine(QPointF(c.x() - h, c.y() - h), QPointF(c.x() + h, c.y() + h))
            painter.drawLine(QPointF(c.x() - h, c.y() + h), QPointF(c.x() + h, c.y() - h))
        else:
            painter.drawLine(QPointF(c.x() - h, c.y()), QPointF(c.x() + h, c.y()))
            painter.drawLine(QPointF(c.x(), c.y() - h), QPointF(c.x(), c.y() + h))
    elif glyph == "ring":
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.setPen(QPen(ink.darker(120), 2.0 * weight))
        painter.drawEllipse(c, h * 0.85, h * 0.85)
    elif glyph == "half_square":
        box = QRectF(c.x() - h, c.y() - h, 2 * h, 2 * h)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(box)
        painter.setBrush(ink)
        painter.drawPolygon(QPolygonF([box.topLeft(), box.bottomLeft(), box.bottomRight()]))
    else:
        painter.drawEllipse(c, h * 0.45, h * 0.45)


def _paint_unbound_mark(painter: QPainter, geom: NodeGeometry, weight: float) -> None:
    """A small slashed ring at the top right: measured, but no column yet."""
    k = geom.font_scale
    r = 3.6 * k
    c = QPointF(geom.body.right() - _PAD_X * k * 0.6 - r, geom.body.top() + 4 * k + r)
    if geom.body.height() < 30 * k:
        c = QPointF(c.x(), geom.body.center().y())
    painter.setPen(QPen(colour("muted"), 1.2 * weight))
    painter.setBrush(Qt.BrushStyle.NoBrush)
    painter.drawEllipse(c, r, r)
    painter.drawLine(QPointF(c.x() - r, c.y() + r), QPointF(c.x() + r, c.y() - r))


# -- links ---------------------------------------------------------------------------


def border_point(outline: QPainterPath, centre: QPointF, toward: QPointF) -> QPointF:
    """Where the segment from ``centre`` (the outline's origin, in scene
    coordinates) to ``toward`` leaves the outline."""
    inside, outside = 0.0, 1.0
    d = toward - centre
    local = QPointF(d.x(), d.y())
    if outline.contains(local):
        return toward
    for _ in range(22):
        mid = (inside + outside) / 2
        if outline.contains(QPointF(local.x() * mid, local.y() * mid)):
            inside = mid
        else:
            outside = mid
    return QPointF(centre.x() + d.x() * outside, centre.y() + d.y() * outside)


def _head(line: QLineF, size: float) -> QPolygonF:
    """A slim notched head at the line's end."""
    if line.length() < 1e-6:
        return QPolygonF()
    ux, uy = line.dx() / line.length(), line.dy() / line.length()
    tip = line.p2()
    back = QPointF(tip.x() - ux * size, tip.y() - uy * size)
    notch = QPointF(tip.x() - ux * size * 0.7, tip.y() - uy * size * 0.7)
    nx_, ny_ = -uy * size * 0.42, ux * size * 0.42
    return QPolygonF(
        [
            tip,
            QPointF(back.x() + nx_, back.y() + ny_),
            notch,
            QPointF(back.x() - nx_, back.y() - ny_),
        ]
    )


def arrow_shape(p1: QPointF, p2: QPointF, pick_width: float = 10.0) -> QPainterPath:
    path = QPainterPath(p1)
    path.lineTo(p2)
    stroker = QPainterPathStroker()
    stroker.setWidth(pick_width)
    return stroker.createStroke(path)


proxy_shape = arrow_shape


def paint_arrow(
    painter: QPainter,
    p1: QPointF,
    p2: QPointF,
    highlighted: bool = False,
    selected: bool = False,
    weight: float = 1.0,
) -> None:
    """A cause → effect arrow from ``p1`` to ``p2`` (both on node outlines)."""
    line = QLineF(p1, p2)
    size = 11.0 * (1.15 if highlighted else 1.0) * max(weight, 0.6)
    if line.length() < size:
        return
    ink = colour("path") if highlighted else colour("selection") if selected else colour("arrow")
    width = (3.0 if highlighted else 2.2 if selected else 1.5) * weight
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    pen = QPen(ink, width)
    pen.setCapStyle(Qt.PenCapStyle.FlatCap)
    painter.setPen(pen)
    shaft = QLineF(p1, line.pointAt(1 - size * 0.7 / line.length()))
    painter.drawLine(shaft)
    painter.setPen(QPen(ink, 0.8 * weight))
    painter.setBrush(ink)
    painter.drawPolygon(_head(line, size))
    painter.restore()


def paint_proxy(
    painter: QPainter,
    p1: QPointF,
    p2: QPointF,
    highlighted: bool = False,
    selected: bool = False,
    weight: float = 1.0,
) -> None:
    """A proxy link: two dashed rails with an "≈" seal at the middle — no head,
    so it never reads as a cause → effect arrow."""
    line = QLineF(p1, p2)
    if line.length() < 1e-6:
        return
    ink = colour("path") if highlighted else colour("selection") if selected else colour("proxy")
    ux, uy = line.dx() / line.length(), line.dy() / line.length()
    off = 2.6 * max(weight, 0.6)
    nx_, ny_ = -uy * off, ux * off
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    pen = QPen(ink, (1.8 if highlighted or selected else 1.3) * weight)
    pen.setStyle(Qt.PenStyle.CustomDashLine)
    pen.setDashPattern([5.0, 3.0])
    painter.setPen(pen)
    for sign in (1, -1):
        painter.drawLine(
            QPointF(p1.x() + sign * nx_, p1.y() + sign * ny_),
            QPointF(p2.x() + sign * nx_, p2.y() + sign * ny_),
        )
    mid = line.center()
    r = 7.5 * max(weight, 0.6)
    painter.setPen(QPen(ink, 1.2 * weight))
    painter.setBrush(QColor("#FFFFFF"))
    painter.drawEllipse(mid, r, r)
    font = _font(12 * max(weight, 0.6), QFont.Weight.Bold)
    painter.setFont(font)
    painter.setPen(ink)
    painter.drawText(
        QRectF(mid.x() - r, mid.y() - r - 1, 2 * r, 2 * r), Qt.AlignmentFlag.AlignCenter, "≈"
    )
    painter.restore()


def _open_chevron(painter: QPainter, tip: QPointF, ux: float, uy: float, size: float) -> None:
    """Two strokes of an open head at ``tip`` pointing along (ux, uy)."""
    back = QPointF(tip.x() - ux * size, tip.y() - uy * size)
    nx_, ny_ = -uy * size * 0.5, ux * size * 0.5
    painter.drawLine(QPointF(back.x() + nx_, back.y() + ny_), tip)
    painter.drawLine(QPointF(back.x() - nx_, back.y() - ny_), tip)


def bow_control(p1: QPointF, p2: QPointF, side: float = 1.0) -> QPointF:
    """The control point of a suggested link's bow; ``side`` (±1) picks the side."""
    line = QLineF(p1, p2)
    length = line.length() or 1.0
    bow = min(0.18 * length, 40.0) * side
    return line.center() + QPointF(-line.dy() / length * bow, line.dx() / length * bow)


def paint_suggestion(
    painter: QPainter,
    p1: QPointF,
    p2: QPointF,
    heads: tuple[bool, bool] = (True, True),
    weight: float = 1.0,
    side: float = 1.0,
) -> None:
    """A link the data suggest the diagram may lack: a dotted bow between the
    two nodes, an open chevron at each end the missing arrow could point to,
    and a "?" in a diamond at its middle.  Never solid, never filled, so it
    reads neither as a drawn arrow nor as a proxy link."""
    line = QLineF(p1, p2)
    if line.length() < 1e-6:
        return
    ink = colour("suggestion")
    control = bow_control(p1, p2, side)
    path = QPainterPath(p1)
    path.quadTo(control, p2)
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    pen = QPen(ink, 3.0 * weight)
    pen.setStyle(Qt.PenStyle.CustomDashLine)
    pen.setDashPattern([0.05, 1.9])
    pen.setCapStyle(Qt.PenCapStyle.RoundCap)
    painter.setPen(pen)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    painter.drawPath(path)
    solid = QPen(ink, 1.6 * weight)
    solid.setCapStyle(Qt.PenCapStyle.RoundCap)
    painter.setPen(solid)
    size = 10.0 * max(weight, 0.6)
    for end, tip, towards in ((heads[1], p2, control), (heads[0], p1, control)):
        if end:
            d = QLineF(towards, tip)
            if d.length() > 1e-6:
                _open_chevron(painter, tip, d.dx() / d.length(), d.dy() / d.length(), size)
    mid = path.pointAtPercent(0.5)
    r = 8.0 * max(weight, 0.6)
    diamond = QPolygonF(
        [
            QPointF(mid.x(), mid.y() - r),
            QPointF(mid.x() + r, mid.y()),
            QPointF(mid.x(), mid.y() + r),
            QPointF(mid.x() - r, mid.y()),
        ]
    )
    painter.setBrush(QColor("#FFFFFF"))
    painter.drawPolygon(diamond)
    painter.setFont(_font(11 * max(weight, 0.6), QFont.Weight.Bold))
    painter.drawText(
        QRectF(mid.x() - r, mid.y() - r, 2 * r, 2 * r), Qt.AlignmentFlag.AlignCenter, "?"
    )
    painter.restore()


def link_ends(
    pos_a: QPointF, geom_a: NodeGeometry, pos_b: QPointF, geom_b: NodeGeometry, gap: float = 2.0
) -> tuple[QPointF, QPointF]:
    """The two ends of a link between node outlines, a little off each."""
    a = border_point(geom_a.edge_outline, pos_a, pos_b)
    b = border_point(geom_b.edge_outline, pos_b, pos_a)
    line = QLineF(a, b)
    if line.length() > 2 * gap + 1:
        a = line.pointAt(gap / line.length())
        b = line.pointAt(1 - gap / line.length())
    return a, b


def distance(a: QPointF, b: QPointF) -> float:
    return math.hypot(a.x() - b.x(), a.y() - b.y())
