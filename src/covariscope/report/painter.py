"""Drawing the one-page rationale with QPainter on any paint device.

One code path serves the PDF file (:func:`write_pdf`, QPdfWriter), the
printer (:func:`print_rationale`, QPrinter) and images
(:func:`render_image`): each opens a painter on its device and calls
:func:`paint_rationale`, which lays the page out with
:func:`covariscope.report.layout.plan_page` and draws exactly what was
measured.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from PySide6.QtCore import QMarginsF, QPointF, QRectF, QSizeF
from PySide6.QtGui import (
    QBrush,
    QColor,
    QGuiApplication,
    QImage,
    QPagedPaintDevice,
    QPageLayout,
    QPageSize,
    QPaintDevice,
    QPainter,
    QPdfWriter,
    QPen,
)

from covariscope import __version__
from covariscope.errors import CovariscopeError
from covariscope.model.files import temporary_prefix
from covariscope.model.project import Project
from covariscope.report.layout import Fonts, PagePlan, TextItem, plan_appendix, plan_page
from covariscope.report.sketch import draw_sketch
from covariscope.study.result import StudyResult
from covariscope.views.report_content import RationaleContent, build_content

__all__ = [
    "PAGE_SIZES",
    "PaintRecord",
    "paint_rationale",
    "print_rationale",
    "render_image",
    "write_pdf",
]

#: Paper sizes by their command-line names.
PAGE_SIZES = {"a4": QPageSize.PageSizeId.A4, "letter": QPageSize.PageSizeId.Letter}
_MARGIN_MM = 12.0
_PDF_DPI = 600
_APP: list[QGuiApplication] = []  # kept alive for the life of the process

#: ``drawer(painter, rect)`` draws the diagram into ``rect``.
DiagramDrawer = Callable[[QPainter, QRectF], Any]


@dataclass
class PaintRecord:
    """What was drawn: every text item's box (device coordinates), for checks."""

    page_rect: QRectF
    plan: PagePlan
    items: list[TextItem] = field(default_factory=list)
    #: the appendix pages (the notes in full), when page one shortened notes
    appendix: list[PagePlan] = field(default_factory=list)


def _application() -> None:
    # QPdfWriter and fonts need a GUI application, also headless from the CLI
    if QGuiApplication.instance() is None:
        _APP.append(QGuiApplication([]))


def paint_rationale(
    painter: QPainter,
    page_rect: QRectF,
    content: RationaleContent,
    diagram_drawer: DiagramDrawer | None = None,
) -> PaintRecord:
    """Draw the page into ``page_rect`` (device coordinates of the painter).

    ``diagram_drawer`` draws the diagram into the rectangle the layout gives
    it; without one the page draws its own vector sketch of the diagram.
    """
    return _paint(painter, page_rect, content, diagram_drawer)


def _paint(
    painter: QPainter,
    page_rect: QRectF,
    content: RationaleContent,
    diagram_drawer: DiagramDrawer | None,
) -> PaintRecord:
    device = painter.device()
    plan = plan_page(content, page_rect, device)
    record = PaintRecord(QRectF(page_rect), plan)
    px = device.logicalDpiY() / 72.0
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    painter.setRenderHint(QPainter.RenderHint.TextAntialiasing)
    painter.setPen(QPen(QColor(0, 0, 0, 0), 0))
    for shade in plan.shades:
        painter.setBrush(
            QBrush(QColor(225, 225, 225) if shade.level == 0 else QColor(244, 244, 244))
        )
        painter.drawRect(shade.rect)
    painter.setPen(QPen(QColor(120, 120, 120), 0.6 * px))
    for x0, x1, y in plan.rules:
        painter.drawLine(QPointF(x0, y), QPointF(x1, y))
    fonts = Fonts(plan.body_pt, device)
    for item in plan.items:
        font, metrics = fonts.get(item.size_pt, item.bold, item.italic)
        painter.setFont(font)
        painter.setPen(QColor(90, 90, 90) if item.grey else QColor(0, 0, 0))
        painter.drawText(QPointF(item.rect.left(), item.rect.top() + metrics.ascent()), item.text)
        record.items.append(item)
    if plan.diagram_rect.isValid():
        if diagram_drawer is not None:
            painter.save()
            painter.setClipRect(plan.diagram_rect)
            diagram_drawer(painter, plan.diagram_rect)
            painter.restore()
        else:
            record.items.extend(
                draw_sketch(painter, plan.diagram_rect, content.diagram, fonts, plan.body_pt)
            )
    painter.restore()
    return record


def _paint_on(
    device: QPagedPaintDevice, content: RationaleContent, diagram_drawer: DiagramDrawer | None
) -> PaintRecord:
    layout = device.pageLayout()
    paint = layout.paintRectPixels(device.logicalDpiX())  # the device's resolution
    painter = QPainter()
    if not painter.begin(device):
        raise CovariscopeError("The page could not be opened for drawing (is the file writable?).")
    try:
        rect = QRectF(0, 0, paint.width(), paint.height())
        record = paint_rationale(painter, rect, content, diagram_drawer)
        if record.plan.cut_notes:
            record.appendix = plan_appendix(content, rect, device, record.plan.body_pt)
            for plan in record.appendix:
                device.newPage()
                _draw_text(painter, plan, device)
        return record
    finally:
        painter.end()


def _draw_text(painter: QPainter, plan: PagePlan, device: QPaintDevice) -> None:
    """Draw a plan that holds only text (the appendix pages)."""
    fonts = Fonts(plan.body_pt, device)
    for item in plan.items:
        font, metrics = fonts.get(item.size_pt, item.bold, item.italic)
        painter.setFont(font)
        painter.setPen(QColor(90, 90, 90) if item.grey else QColor(0, 0, 0))
        painter.drawText(QPointF(item.rect.left(), item.rect.top() + metrics.ascent()), item.text)


def _page_layout(page: str) -> QPageLayout:
    key = str(page).lower()
    if key not in PAGE_SIZES:
        raise CovariscopeError(f'"{page}" is not a paper size; use one of {", ".join(PAGE_SIZES)}.')
    return QPageLayout(
        QPageSize(PAGE_SIZES[key]),
        QPageLayout.Orientation.Portrait,
        QMarginsF(_MARGIN_MM, _MARGIN_MM, _MARGIN_MM, _MARGIN_MM),
        QPageLayout.Unit.Millimeter,
    )


def write_pdf(
    result: StudyResult,
    project: Project,
    path: Path | str,
    page: str = "a4",
    *,
    content: RationaleContent | None = None,
    record: list[PaintRecord] | None = None,
) -> Path:
    """Write the rationale for ``result`` as a one-page PDF and return its path.

    ``content`` may be given when already built; ``record``, when a list, gets
    the :class:`PaintRecord` of the page (for checks).
    """
    return _write_pdf(result, project, path, page, content, record)


def _write_pdf(
    result: StudyResult,
    project: Project,
    path: Path | str,
    page: str,
    content: RationaleContent | None,
    record: list[PaintRecord] | None,
) -> Path:
    _application()
    path = Path(path)
    if path.parent and not path.parent.exists():
        raise CovariscopeError(f"Cannot write {path}: the folder {path.parent} does not exist.")
    content = content or build_content(result, project)
    # Written beside the target and moved into place: a failed write never
    # leaves a broken file where the user's earlier PDF was.
    fd, tmp_name = tempfile.mkstemp(
        prefix=temporary_prefix(path), suffix=".tmp", dir=path.parent or None
    )
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        writer = QPdfWriter(str(tmp))
        writer.setResolution(_PDF_DPI)
        writer.setPageLayout(_page_layout(page))
        writer.setTitle(f"Adjustment rationale — {content.question}")
        writer.setCreator(f"Covariscope {__version__}")
        done = _paint_on(writer, content, None)
        del writer  # flushes and closes the file
        if tmp.stat().st_size == 0:
            raise CovariscopeError(
                f"Cannot write {path}: check that the location is writable and not full."
            )
        os.replace(tmp, path)
    except OSError as exc:
        raise CovariscopeError(
            f"Cannot write {path} ({exc.strerror or exc}); check that the location is "
            "writable and not full."
        ) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()
    if record is not None:
        record.append(done)
    return path


def print_rationale(
    printer: QPagedPaintDevice, result: StudyResult, project: Project
) -> PaintRecord:
    """Print the rationale on a QPrinter (set up by the print dialog)."""
    _application()
    return _paint_on(printer, build_content(result, project), None)


def render_image(
    content: RationaleContent, page: str = "a4", dpi: int = 110
) -> tuple[QImage, PaintRecord]:
    """The page as an image at ``dpi`` (for the on-screen preview and checks)."""
    return _render_image(content, page, dpi)


def _render_image(content: RationaleContent, page: str, dpi: int) -> tuple[QImage, PaintRecord]:
    _application()
    layout = _page_layout(page)
    size_mm: QSizeF = layout.pageSize().size(QPageSize.Unit.Millimeter)
    scale = dpi / 25.4
    image = QImage(
        round(size_mm.width() * scale), round(size_mm.height() * scale), QImage.Format.Format_RGB32
    )
    image.setDotsPerMeterX(round(dpi / 0.0254))
    image.setDotsPerMeterY(round(dpi / 0.0254))
    image.fill(QColor(255, 255, 255))
    margin = _MARGIN_MM * scale
    painter = QPainter(image)
    try:
        rect = QRectF(margin, margin, image.width() - 2 * margin, image.height() - 2 * margin)
        record = paint_rationale(painter, rect, content)
    finally:
        painter.end()
    return image, record
