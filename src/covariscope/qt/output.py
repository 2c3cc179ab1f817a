"""Exports and printing: the diagram (PNG, SVG, GraphML), the review table
(CSV), and the one-page rationale (printer or PDF, drawn by the report
module's painter so print and PDF share one code path)."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QRectF
from PySide6.QtGui import QPainter

from covariscope.errors import CovariscopeError
from covariscope.model.files import check_output_path

if TYPE_CHECKING:
    from covariscope.qt.main_window import MainWindow
    from covariscope.study.result import StudyResult

__all__ = [
    "export_diagram",
    "export_dialog_plots",
    "export_review_csv",
    "print_rationale",
    "save_rationale_pdf",
]

_FILTERS = {
    "png": "PNG image (*.png)",
    "svg": "SVG drawing (*.svg)",
    "graphml": "GraphML (*.graphml)",
    "csv": "CSV table (*.csv)",
    "pdf": "PDF document (*.pdf)",
}


def _ask(w: MainWindow, kind: str, title: str, stem: str) -> Path | None:
    base = (
        w.project.path.with_name(f"{w.project.path.stem}{stem}.{kind}")
        if w.project.path
        else Path(w.io.start_folder()) / f"covariscope{stem}.{kind}"
    )
    path = w.prompts.save_path(title, _FILTERS[kind], str(base))
    if not path:
        return None
    target = Path(path)
    return target if target.suffix else target.with_suffix(f".{kind}")


def _writable(w: MainWindow, target: Path, kind: str) -> Path | None:
    """The target, unless it is a file the project reads (then say so).

    The save dialog has already asked about replacing an existing file; the
    project file and the data file are never replaced.
    """
    reads = [
        ("the project file itself", w.project.path),
        ("the study's data file", w.project.data_path()),
    ]
    try:
        return check_output_path(Path(target), reads, kind=kind, force=True)
    except CovariscopeError as exc:
        w.prompts.warn(f"Cannot write the {kind}", str(exc))
        return None


def export_diagram(w: MainWindow, kind: str, path: str | None = None) -> bool:
    target = (
        Path(path) if path else _ask(w, kind, f"Export the diagram as {kind.upper()}", "_diagram")
    )
    target = _writable(w, target, kind.upper()) if target is not None else None
    if target is None:
        return False
    from covariscope.qt.canvas import export_png, export_svg
    from covariscope.views.diagram import export_graphml

    try:
        if kind == "graphml":
            export_graphml(w.project.diagram, target)
        elif kind == "svg":
            export_svg(w.scene, target)
        else:
            export_png(w.scene, target)
    except (CovariscopeError, OSError) as exc:
        w.prompts.warn("Export failed", str(exc))
        return False
    w.show_message(f"Wrote {target}")
    return True


def export_review_csv(w: MainWindow, path: str | None = None) -> bool:
    target = Path(path) if path else _ask(w, "csv", "Export the review table", "_review")
    target = _writable(w, target, "CSV") if target is not None else None
    if target is None:
        return False
    try:
        target.write_text(w.review.to_csv(), encoding="utf-8")
    except OSError as exc:
        w.prompts.warn("Export failed", f"Could not write {target}: {exc.strerror or exc}.")
        return False
    w.show_message(f"Wrote {target}")
    return True


def _ready(w: MainWindow) -> StudyResult | None:
    """The finished analysis the rationale reads, or None (the user is told why)."""
    if w.result is None:
        w.prompts.warn(
            "No analysis yet",
            "The rationale needs a finished analysis: mark an exposure and an outcome, bind "
            "the data and wait for the status bar to say the analysis is up to date.",
        )
    return w.result


def print_rationale(w: MainWindow) -> bool:
    result = _ready(w)
    if result is None:
        return False
    try:
        from covariscope.report.painter import paint_rationale
        from covariscope.views.report_content import build_content
    except ImportError:
        w.prompts.warn(
            "Printing not available", "The rationale report is not installed in this build."
        )
        return False
    printer = w.prompts.printer()
    if printer is None:
        return False
    painter = QPainter()
    if not painter.begin(printer):
        w.prompts.warn("Cannot print", "The printer could not be started; check its settings.")
        return False
    try:
        page = QRectF(printer.pageLayout().paintRectPixels(printer.resolution()))
        page.moveTo(0, 0)
        paint_rationale(painter, page, build_content(result, w.project))
    finally:
        painter.end()
    w.show_message("Sent the rationale to the printer.")
    return True


def save_rationale_pdf(w: MainWindow, path: str | None = None) -> bool:
    result = _ready(w)
    if result is None:
        return False
    target = Path(path) if path else _ask(w, "pdf", "Save the rationale as PDF", "_rationale")
    if target is None:
        return False
    try:
        from covariscope.report.painter import write_pdf
    except ImportError:
        w.prompts.warn("PDF not available", "The rationale report is not installed in this build.")
        return False
    target = _writable(w, target, "PDF")
    if target is None:
        return False
    try:
        written = write_pdf(result, w.project, target)
    except (CovariscopeError, OSError) as exc:
        w.prompts.warn("Could not write the PDF", str(exc))
        return False
    w.show_message(f"Wrote {written}")
    return True


def export_dialog_plots(w: MainWindow, node_id: str) -> list[Path]:
    """Save the plots of ``node_id``'s diagnostics dialog as images (one file per plot)."""
    from covariscope.qt.diagnostics import CovariateDialog

    dialog = w.dialogs.get(node_id)
    if not isinstance(dialog, CovariateDialog):  # only a covariate's dialog has plots to save
        return []
    save = dialog.save_plots
    target = _ask(w, "png", "Save the diagnostics plots", f"-{node_id}")
    if target is None:
        return []
    target = _writable(w, target, "plots")
    if target is None:
        return []
    try:
        written: list[Path] = save(target)
    except (OSError, ValueError) as exc:
        w.prompts.warn("Cannot write the plots", f"{target}: {exc}")
        return []
    w.statusBar().showMessage(f"Saved {len(written)} plots beside {target.name}", 5000)
    return written
