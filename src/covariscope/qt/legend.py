"""The canvas legend: a sample of every shape, frame and line style, painted
by the canvas's own drawing functions, beside its meaning
(:mod:`covariscope.views.legend` holds the words)."""

from __future__ import annotations

import html

from PySide6.QtCore import QPointF, QUrl
from PySide6.QtGui import QPainter, QPixmap, QTextDocument
from PySide6.QtWidgets import QTextBrowser, QWidget

from covariscope.qt.canvas.drawing import (
    NodeLook,
    node_geometry,
    paint_arrow,
    paint_node,
    paint_proxy,
    paint_suggestion,
)
from covariscope.qt.palette import colour
from covariscope.views.legend import LegendEntry, legend_sections

__all__ = ["LegendPanel", "sample_pixmap"]

_SCALE = 0.72
_LINE_W, _LINE_H = 120, 34
#: a sample never wider than this: a long role tag is elided (the words beside it name the role)
_NODE_MAX_W = 104.0


def _node_pixmap(entry: LegendEntry) -> QPixmap:
    label = entry.kind.capitalize() if entry.kind != "covariate" else "Label"
    look = NodeLook(
        label=label,
        kind=entry.kind,
        measured=entry.measured,
        bound=entry.bound,
        proposed=entry.proposed,
        role=entry.role,
        verdict=entry.verdict,
        highlighted=entry.highlighted,
        selected=entry.selected,
    )
    geom = node_geometry(look, font_scale=_SCALE, max_width=_NODE_MAX_W)
    r = geom.bounds
    pix = QPixmap(int(r.width()) + 2, int(r.height()) + 2)
    pix.fill(colour("background"))
    painter = QPainter(pix)
    painter.translate(-r.left() + 1, -r.top() + 1)
    paint_node(painter, look, geom)
    painter.end()
    return pix


def _line_pixmap(entry: LegendEntry) -> QPixmap:
    pix = QPixmap(_LINE_W, _LINE_H)
    pix.fill(colour("background"))
    painter = QPainter(pix)
    p1, p2 = QPointF(6, _LINE_H / 2), QPointF(_LINE_W - 6, _LINE_H / 2)
    if entry.sample == "arrow":
        paint_arrow(painter, p1, p2)
    elif entry.sample == "path_arrow":
        paint_arrow(painter, p1, p2, highlighted=True)
    elif entry.sample == "proxy":
        paint_proxy(painter, p1, p2)
    else:
        paint_suggestion(painter, QPointF(6, _LINE_H - 8), QPointF(_LINE_W - 6, _LINE_H - 8))
    painter.end()
    return pix


def sample_pixmap(entry: LegendEntry) -> QPixmap:
    """The entry's sample, drawn as the canvas draws it."""
    return _node_pixmap(entry) if entry.sample == "node" else _line_pixmap(entry)


class LegendPanel(QTextBrowser):
    """Every section of the legend, sample beside words (a dock's content);
    rich text, so the words wrap to whatever width the dock has."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("legendPanel")
        self.setOpenLinks(False)
        document = self.document()
        self.entries: list[LegendEntry] = []
        parts: list[str] = []
        for section in legend_sections():
            parts.append(f"<p style='margin-top: 8px'><b>{html.escape(section.title)}</b></p>")
            parts.append("<table cellspacing='0' cellpadding='3'>")
            for entry in section.entries:
                url = QUrl(f"legend:sample/{len(self.entries)}")
                document.addResource(
                    QTextDocument.ResourceType.ImageResource, url, sample_pixmap(entry).toImage()
                )
                parts.append(
                    f"<tr><td align='center' valign='middle'><img src='{url.toString()}'></td>"
                    f"<td valign='middle'><b>{html.escape(entry.title)}</b>: "
                    f"{html.escape(entry.words)}</td></tr>"
                )
                self.entries.append(entry)
            parts.append("</table>")
        self.setHtml("".join(parts))

    def text(self) -> str:
        """The legend's words (for tests and copying)."""
        return self.toPlainText()
