"""Toolbar icons, drawn here with QPainter (no icon set is shipped).

Each icon is a few strokes on a 24 × 24 grid in the canvas ink, with the
Okabe–Ito accent where it helps; the toolbar shows a short word under each,
so the picture is never the only cue.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QIcon, QPainter, QPainterPath, QPen, QPixmap, QPolygonF

from covariscope.qt.palette import INK, OKABE_ITO, kind_fill, kind_outline

__all__ = ["ICON_NAMES", "icon"]

_INK = QColor(INK["text"])
_ACCENT = QColor(OKABE_ITO["blue"])


def _pen(p: QPainter, colour: QColor = _INK, width: float = 1.6, dashed: bool = False) -> None:
    pen = QPen(colour, width)
    pen.setCapStyle(Qt.PenCapStyle.RoundCap)
    pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
    if dashed:
        pen.setStyle(Qt.PenStyle.DashLine)
    p.setPen(pen)


def _head(p: QPainter, tip: QPointF, angle: float, size: float = 5.0) -> None:
    """A filled arrowhead at ``tip`` pointing along ``angle`` (radians)."""
    left = QPointF(tip.x() - size * math.cos(angle - 0.45), tip.y() - size * math.sin(angle - 0.45))
    right = QPointF(
        tip.x() - size * math.cos(angle + 0.45), tip.y() - size * math.sin(angle + 0.45)
    )
    p.setBrush(p.pen().color())
    p.drawPolygon(QPolygonF([tip, left, right]))
    p.setBrush(Qt.BrushStyle.NoBrush)


def _page(p: QPainter) -> None:
    path = QPainterPath()
    path.moveTo(6, 3)
    path.lineTo(14, 3)
    path.lineTo(19, 8)
    path.lineTo(19, 21)
    path.lineTo(6, 21)
    path.closeSubpath()
    _pen(p)
    p.setBrush(QColor("#FFFFFF"))
    p.drawPath(path)
    p.drawLine(QPointF(14, 3), QPointF(14, 8))
    p.drawLine(QPointF(14, 8), QPointF(19, 8))


def _new(p: QPainter) -> None:
    _page(p)
    _pen(p, _ACCENT, 2.0)
    p.drawLine(QPointF(12.5, 11), QPointF(12.5, 18))
    p.drawLine(QPointF(9, 14.5), QPointF(16, 14.5))


def _open(p: QPainter) -> None:
    _pen(p)
    p.setBrush(QColor("#F3E3B5"))
    path = QPainterPath()
    path.moveTo(3, 6)
    path.lineTo(9, 6)
    path.lineTo(11, 8)
    path.lineTo(20, 8)
    path.lineTo(20, 19)
    path.lineTo(3, 19)
    path.closeSubpath()
    p.drawPath(path)
    p.setBrush(QColor("#FBE7BF"))
    flap = QPolygonF([QPointF(5, 11), QPointF(22, 11), QPointF(20, 19), QPointF(3, 19)])
    p.drawPolygon(flap)


def _save(p: QPainter) -> None:
    _pen(p)
    p.setBrush(QColor("#FFFFFF"))
    p.drawRoundedRect(QRectF(4, 12, 16, 8), 1.5, 1.5)
    _pen(p, _ACCENT, 2.0)
    p.drawLine(QPointF(12, 3), QPointF(12, 14))
    _head(p, QPointF(12, 15.5), math.pi / 2, 5.5)


def _turn(p: QPainter, mirrored: bool) -> None:
    _pen(p, _INK, 1.8)
    rect = QRectF(5, 7, 14, 12)
    if mirrored:
        p.drawArc(rect, 0 * 16, 180 * 16)
        _pen(p, _INK, 1.6)
        _head(p, QPointF(19, 14.5), math.pi / 2, 5.0)
    else:
        p.drawArc(rect, 0 * 16, 180 * 16)
        _pen(p, _INK, 1.6)
        _head(p, QPointF(5, 14.5), math.pi / 2, 5.0)


def _undo(p: QPainter) -> None:
    _turn(p, False)


def _redo(p: QPainter) -> None:
    _turn(p, True)


def _capsule(p: QPainter, rect: QRectF, kind: str = "covariate") -> None:
    _pen(p, kind_outline(kind), 1.5)
    p.setBrush(kind_fill(kind))
    p.drawRoundedRect(rect, rect.height() / 2, rect.height() / 2)


def _add_node(p: QPainter) -> None:
    _capsule(p, QRectF(2, 7, 16, 10))
    _pen(p, _ACCENT, 2.0)
    p.drawLine(QPointF(19, 2.5), QPointF(19, 9.5))
    p.drawLine(QPointF(15.5, 6), QPointF(22.5, 6))


def _select(p: QPainter) -> None:
    pointer = QPolygonF(
        [
            QPointF(6, 3),
            QPointF(6, 19),
            QPointF(10, 15),
            QPointF(13, 21),
            QPointF(15.5, 20),
            QPointF(12.5, 14),
            QPointF(18, 14),
        ]
    )
    _pen(p, _INK, 1.4)
    p.setBrush(QColor("#FFFFFF"))
    p.drawPolygon(pointer)


def _two_nodes(p: QPainter) -> None:
    _pen(p, _INK, 1.4)
    p.setBrush(QColor("#FFFFFF"))
    p.drawEllipse(QRectF(2, 14, 7, 7))
    p.drawEllipse(QRectF(15, 3, 7, 7))


def _arrow(p: QPainter) -> None:
    _two_nodes(p)
    _pen(p, _INK, 1.6)
    p.drawLine(QPointF(8, 15), QPointF(14, 9.5))
    _head(p, QPointF(15, 8.5), -math.pi / 4, 5.0)


def _proxy(p: QPainter) -> None:
    _two_nodes(p)
    _pen(p, QColor(INK["proxy"]), 1.8, dashed=True)
    p.drawLine(QPointF(8, 15), QPointF(16, 9))


def _exposure(p: QPainter) -> None:
    _pen(p, kind_outline("exposure"), 1.5)
    p.setBrush(kind_fill("exposure"))
    p.drawPolygon(
        QPolygonF([QPointF(2, 7), QPointF(16, 7), QPointF(22, 12), QPointF(16, 17), QPointF(2, 17)])
    )


def _outcome(p: QPainter) -> None:
    _pen(p, kind_outline("outcome"), 1.5)
    p.setBrush(kind_fill("outcome"))
    p.drawPolygon(
        QPolygonF([QPointF(2, 7), QPointF(22, 7), QPointF(22, 17), QPointF(2, 17), QPointF(8, 12)])
    )


def _data(p: QPainter) -> None:
    _pen(p, _INK, 1.3)
    p.setBrush(QColor("#FFFFFF"))
    p.drawRect(QRectF(3, 4, 18, 16))
    p.setBrush(QBrush(QColor(OKABE_ITO["sky_blue"])))
    p.drawRect(QRectF(3, 4, 18, 4))
    for y in (12, 16):
        p.drawLine(QPointF(3, y), QPointF(21, y))
    for x in (9, 15):
        p.drawLine(QPointF(x, 4), QPointF(x, 20))


def _layout(p: QPainter) -> None:
    _pen(p, _INK, 1.2)
    spots = [(4, 12), (12, 5), (12, 19), (20, 12)]
    for (ax, ay), (bx, by) in ((spots[0], spots[1]), (spots[0], spots[2])):
        p.drawLine(QPointF(ax, ay), QPointF(bx, by))
    for a, b in ((spots[1], spots[3]), (spots[2], spots[3])):
        p.drawLine(QPointF(*a), QPointF(*b))
    p.setBrush(QColor("#FFFFFF"))
    for x, y in spots:
        p.drawEllipse(QPointF(x, y), 2.8, 2.8)


def _fit(p: QPainter) -> None:
    _pen(p, _INK, 1.8)
    for x, y, sx, sy in ((3, 3, 1, 1), (21, 3, -1, 1), (3, 21, 1, -1), (21, 21, -1, -1)):
        p.drawLine(QPointF(x, y), QPointF(x + 5 * sx, y))
        p.drawLine(QPointF(x, y), QPointF(x, y + 5 * sy))
    _capsule(p, QRectF(7, 9, 10, 6))


def _print(p: QPainter) -> None:
    _pen(p, _INK, 1.4)
    p.setBrush(QColor("#FFFFFF"))
    p.drawRect(QRectF(7, 3, 10, 7))
    p.setBrush(QColor("#E4E6E8"))
    p.drawRoundedRect(QRectF(3, 9, 18, 8), 1.5, 1.5)
    p.setBrush(QColor("#FFFFFF"))
    p.drawRect(QRectF(7, 14, 10, 7))
    _pen(p, _ACCENT, 1.2)
    p.drawLine(QPointF(9, 17), QPointF(15, 17))
    p.drawLine(QPointF(9, 19), QPointF(13, 19))


_DRAW: dict[str, Callable[[QPainter], None]] = {
    "new": _new,
    "open": _open,
    "save": _save,
    "undo": _undo,
    "redo": _redo,
    "add_node": _add_node,
    "select": _select,
    "arrow": _arrow,
    "proxy": _proxy,
    "exposure": _exposure,
    "outcome": _outcome,
    "data": _data,
    "layout": _layout,
    "fit": _fit,
    "print": _print,
}

#: The icons there are.
ICON_NAMES: tuple[str, ...] = tuple(_DRAW)


def icon(name: str) -> QIcon:
    """The toolbar icon ``name`` at 24 and 48 pixels (for high-density screens)."""
    if name not in _DRAW:
        raise KeyError(f"no icon named {name!r}; there are {', '.join(ICON_NAMES)}")
    result = QIcon()
    for size in (24, 48):
        pixmap = QPixmap(size, size)
        pixmap.fill(Qt.GlobalColor.transparent)
        painter = QPainter(pixmap)
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        painter.scale(size / 24, size / 24)
        _DRAW[name](painter)
        painter.end()
        result.addPixmap(pixmap)
    return result
