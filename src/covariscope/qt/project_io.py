"""Project life: new, open, save, save as, recent files, the title's
unsaved-changes marker, asking before losing work, autosave to a recovery
file every minute and the offer to recover after a crash.

Questions to the user go through :class:`Prompts`, which tests replace.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QObject, QSettings, QStandardPaths, QTimer, Signal
from PySide6.QtWidgets import QFileDialog, QMessageBox, QWidget

from covariscope.errors import CovariscopeError
from covariscope.model.project import Project, load_project, save_project
from covariscope.views import recovery
from covariscope.views.data_panel import data_file_filter

if TYPE_CHECKING:
    from covariscope.qt.main_window import MainWindow

__all__ = ["PROJECT_FILTER", "ProjectIO", "Prompts", "recovery_folder"]

PROJECT_FILTER = "Covariscope projects (*.json);;All files (*)"
DATA_FILTER = data_file_filter()
MAX_RECENT = 8
AUTOSAVE_MS = 60_000


class Prompts:
    """Every question the window asks, in one replaceable place."""

    def __init__(self, parent: QWidget) -> None:
        self.parent = parent

    def save_changes(self, name: str) -> str:
        """``"save"``, ``"discard"`` or ``"cancel"``."""
        box = QMessageBox(self.parent)
        box.setIcon(QMessageBox.Icon.Warning)
        box.setWindowTitle("Unsaved changes")
        box.setText(f"{name} has unsaved changes. Save them first?")
        save = box.addButton("Save", QMessageBox.ButtonRole.AcceptRole)
        discard = box.addButton("Discard changes", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Cancel", QMessageBox.ButtonRole.RejectRole)
        box.exec()
        clicked = box.clickedButton()
        return "save" if clicked is save else "discard" if clicked is discard else "cancel"

    def yes_no(self, title: str, text: str) -> bool:
        answer = QMessageBox.question(self.parent, title, text)
        return answer == QMessageBox.StandardButton.Yes

    def warn(self, title: str, text: str) -> None:
        QMessageBox.warning(self.parent, title, text)

    def info(self, title: str, text: str) -> None:
        QMessageBox.information(self.parent, title, text)

    def open_path(self, title: str, filter_: str, start: str = "") -> str | None:
        path, _ = QFileDialog.getOpenFileName(self.parent, title, start, filter_)
        return path or None

    def save_path(self, title: str, filter_: str, start: str = "") -> str | None:
        path, _ = QFileDialog.getSaveFileName(self.parent, title, start, filter_)
        return path or None

    def printer(self) -> Any:
        """A QPrinter the user chose and set up, or None when they cancelled."""
        from PySide6.QtPrintSupport import QPrintDialog, QPrinter

        printer = QPrinter(QPrinter.PrinterMode.HighResolution)
        dialog = QPrintDialog(printer, self.parent)
        return printer if dialog.exec() else None


def recovery_folder() -> Path:
    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    return Path(base or Path.home() / ".covariscope") / "recovery"


class ProjectIO(QObject):
    """Files for one main window."""

    title_changed = Signal(str)
    recent_changed = Signal()

    def __init__(self, window: MainWindow) -> None:
        super().__init__(window)
        self.window = window
        self.extra_modified = False  # changes outside the undo stack (a recovered project)
        self.autosave_timer = QTimer(self)
        self.autosave_timer.setInterval(AUTOSAVE_MS)
        self.autosave_timer.timeout.connect(self.autosave)
        self.autosave_timer.start()
        #: the recent file not yet written to the settings (see add_recent)
        self._recent_head: str | None = None
        self._recent_writer = QTimer(self)
        self._recent_writer.setSingleShot(True)
        self._recent_writer.setInterval(0)
        self._recent_writer.timeout.connect(self.write_recent)
        window.undo_stack.cleanChanged.connect(lambda _clean: self.update_title())

    # -- state ---------------------------------------------------------------------
    @property
    def project(self) -> Project:
        return self.window.project

    def is_modified(self) -> bool:
        return self.extra_modified or not self.window.undo_stack.isClean()

    def display_name(self) -> str:
        return self.project.path.name if self.project.path else "Untitled project"

    def update_title(self) -> None:
        # Qt puts the platform's unsaved-changes marker where "[*]" stands
        self.window.setWindowTitle(f"{self.display_name()}[*] — Covariscope")
        self.window.setWindowModified(self.is_modified())
        self.title_changed.emit(self.window.windowTitle())

    def mark_clean(self) -> None:
        self.extra_modified = False
        self.window.undo_stack.setClean()
        self.update_title()

    # -- asking ----------------------------------------------------------------------
    def confirm_discard(self) -> bool:
        """True when it is all right to drop the current project."""
        if not self.is_modified():
            return True
        answer = self.window.prompts.save_changes(self.display_name())
        if answer == "save":
            return self.save()
        return answer == "discard"

    # -- commands --------------------------------------------------------------------
    def new(self) -> bool:
        if not self.confirm_discard():
            return False
        self.window.set_project(Project())
        return True

    def open(self, path: str | None = None) -> bool:
        if not self.confirm_discard():
            return False
        if path is None:
            path = self.window.prompts.open_path(
                "Open project", PROJECT_FILTER, self.start_folder()
            )
            if not path:
                return False
        try:
            project = load_project(path)
        except CovariscopeError as exc:
            self.window.prompts.warn("Cannot open the project", str(exc))
            self.forget_recent(str(path))
            return False
        self.window.set_project(project)
        self.add_recent(str(project.path))
        return True

    def save(self) -> bool:
        if self.project.path is None:
            return self.save_as()
        return self._write(self.project.path)

    def save_as(self, path: str | None = None) -> bool:
        if path is None:
            start = str(self.project.path or Path(self.start_folder()) / "project.json")
            path = self.window.prompts.save_path("Save project as", PROJECT_FILTER, start)
            if not path:
                return False
        target = Path(path)
        if not target.suffix:
            target = target.with_suffix(".json")
        return self._write(target)

    def _write(self, target: Path) -> bool:
        try:
            save_project(self.project, target)
        except CovariscopeError as exc:
            self.window.prompts.warn("Cannot save the project", str(exc))
            return False
        self.mark_clean()
        self.add_recent(str(self.project.path))
        recovery.discard(recovery.recovery_path(recovery_folder()))
        self.window.show_message(f"Saved {self.project.path}")
        return True

    def start_folder(self) -> str:
        """Where open and save dialogs start: the project's folder, else the
        user's documents folder."""
        if self.project.path:
            return str(self.project.path.parent)
        docs = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.DocumentsLocation)
        return docs or str(Path.home())

    # -- recent files ---------------------------------------------------------------
    def recent_files(self) -> list[str]:
        value: Any = QSettings().value("recent_files", [])
        if isinstance(value, str):
            value = [value]
        stored = [str(v) for v in (value or [])]
        if self._recent_head is None:
            return stored
        head = self._recent_head
        return [head, *[p for p in stored if p != head]][:MAX_RECENT]

    def add_recent(self, path: str) -> None:
        """Put ``path`` at the head of the recent files; the settings are read
        and written in the next turn of the event loop.

        Reading the settings file costs 10 ms and more the first time, and
        writing it syncs it to disk twice (``fdatasync``) while PySide keeps
        the interpreter lock: on a busy disk that held the GUI thread for
        tens of milliseconds in the same turn as opening the project
        (measured in benchmarks/gui_storm.py).
        """
        self._recent_head = path
        self._recent_writer.start()
        self.recent_changed.emit()

    def write_recent(self) -> None:
        """Write the recent file not yet written (at once; on close too)."""
        self._recent_writer.stop()
        if self._recent_head is not None:
            files = self.recent_files()
            self._recent_head = None
            QSettings().setValue("recent_files", files)

    def forget_recent(self, path: str) -> None:
        self.write_recent()
        QSettings().setValue("recent_files", [p for p in self.recent_files() if p != path])
        self.recent_changed.emit()

    # -- recovery -------------------------------------------------------------------
    def autosave(self) -> Path | None:
        """Write the recovery file when there is unsaved work (every minute)."""
        folder = recovery_folder()
        if not self.is_modified():
            recovery.discard(recovery.recovery_path(folder))
            return None
        try:
            return recovery.write_recovery(folder, self.project)
        except OSError as exc:
            self.window.show_message(f"Autosave failed: {exc}")
            return None

    def offer_recovery(self) -> bool:
        """After a crash: offer the newest orphaned recovery file."""
        folder = recovery_folder()
        orphans = recovery.find_orphans(folder)
        if not orphans:
            return False
        newest = orphans[0]
        name = Path(newest.project_path).name if newest.project_path else "an untitled project"
        ask = (
            f"Covariscope did not close normally last time. Unsaved work on {name} was kept. "
            "Recover it now?"
        )
        recovered = False
        if self.window.prompts.yes_no("Recover unsaved work", ask):
            try:
                project = recovery.read_recovery(newest)
            except (CovariscopeError, OSError, ValueError, KeyError) as exc:
                self.window.prompts.warn(
                    "Cannot recover", f"The recovery file cannot be read: {exc}"
                )
            else:
                self.window.set_project(project)
                self.extra_modified = True
                self.update_title()
                recovered = True
        for orphan in orphans:
            recovery.discard(orphan.path)
        if recovered:
            self.autosave()
        return recovered

    def shutdown(self) -> None:
        """A clean close: stop autosaving, write the recent files, remove this
        window's recovery file."""
        self.autosave_timer.stop()
        self.write_recent()
        recovery.discard(recovery.recovery_path(recovery_folder()))
