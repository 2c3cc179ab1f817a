"""The window's actions, menus and toolbar, with the usual shortcuts."""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import TYPE_CHECKING

from PySide6.QtCore import QSize, Qt
from PySide6.QtGui import QAction, QActionGroup, QKeySequence
from PySide6.QtWidgets import QMenu, QToolBar

from covariscope.qt.diagnostics import FAMILY_LABELS
from covariscope.qt.icons import icon
from covariscope.vocabulary import CAUTIONS as VOCABULARY_CAUTIONS

if TYPE_CHECKING:
    from covariscope.qt.main_window import MainWindow

__all__ = ["CAUTIONS", "WindowActions"]

CAUTIONS = (
    "<p><b>Read the results with these cautions.</b></p><ul>"
    + "".join(f"<li>{text}</li>" for text in VOCABULARY_CAUTIONS)
    + "</ul>"
)

_Std = QKeySequence.StandardKey


def redo_keys(platform: list[QKeySequence] | None = None) -> list[QKeySequence]:
    """Ctrl+Shift+Z and Ctrl+Y, plus the platform's own Redo keys
    (``platform``; default: ``QKeySequence.keyBindings(Redo)``), each once."""
    own = QKeySequence.keyBindings(_Std.Redo) if platform is None else platform
    keys: list[QKeySequence] = []
    for key in (QKeySequence("Ctrl+Shift+Z"), QKeySequence("Ctrl+Y"), *own):
        if not key.isEmpty() and key not in keys:
            keys.append(key)
    return keys


def _std_keys(key: QKeySequence.StandardKey) -> list[QKeySequence]:
    return list(QKeySequence.keyBindings(key))


def _unique(keys: list[QKeySequence]) -> list[QKeySequence]:
    """Each key once: a key bound twice is "ambiguous" to Qt and never fires."""
    out: list[QKeySequence] = []
    for key in keys:
        if not key.isEmpty() and key not in out:
            out.append(key)
    return out


class WindowActions:
    """Creates every action once; the window connects nothing else by hand."""

    def __init__(self, w: MainWindow) -> None:
        self.w = w
        a = self._action
        io = w.io
        self.new = a("&New project", io.new, _Std.New)
        self.open = a("&Open project…", lambda: io.open(), _Std.Open)
        self.open_demo = a("Open the &demo study", w.open_demo)
        self.save = a("&Save", io.save, _Std.Save)
        self.save_as = a("Save &as…", lambda: io.save_as(), "Ctrl+Shift+S")
        self.load_data = a("&Load data…", lambda: w.data.choose_and_load(), "Ctrl+L")
        self.export_png = a("Diagram as &PNG…", lambda: w.export_diagram("png"))
        self.export_svg = a("Diagram as &SVG…", lambda: w.export_diagram("svg"))
        self.export_graphml = a("Diagram as &GraphML…", lambda: w.export_diagram("graphml"))
        self.export_csv = a("Review table as &CSV…", w.export_review_csv)
        self.print = a("&Print rationale…", w.print_rationale, _Std.Print)
        self.pdf = a("Save rationale as P&DF…", w.save_rationale_pdf)
        self.quit = a("&Quit", w.close, _Std.Quit)

        self.undo = w.undo_stack.createUndoAction(w, "&Undo")
        self.undo.setShortcut(_Std.Undo)
        self.redo = w.undo_stack.createRedoAction(w, "&Redo")
        # both common Redo keys, each once: the platform's StandardKey.Redo is
        # Ctrl+Shift+Z on most Linux desktops, and a key bound twice is
        # "ambiguous" to Qt, so neither would fire
        self.redo.setShortcuts(redo_keys())
        self.copy = a("&Copy", w.copy_selection, _Std.Copy)
        self.paste = a("&Paste", w.paste, _Std.Paste)
        self.delete = a("&Delete", lambda: w.scene.delete_selection(), _Std.Delete)
        self.reverse = a("&Reverse arrow", lambda: w.scene.reverse_selected_arrows(), "Ctrl+R")

        self.add_node = a("Add &node", w.add_node_at_centre, "Ctrl+Shift+N")
        self.mode_group = QActionGroup(w)
        self.mode_select = self._mode("&Select and move", "select", "S")
        self.mode_arrow = self._mode("Draw &arrow", "arrow", "A")
        self.mode_proxy = self._mode("Draw pro&xy link", "proxy", "X")
        self.mode_select.setChecked(True)
        # single keys (and Delete) act on the diagram only: typed into the
        # data panel, the review table or a note they stay text; the window
        # adds these actions to each new canvas view
        self.canvas_only = [self.mode_select, self.mode_arrow, self.mode_proxy, self.delete]
        for act in self.canvas_only:
            act.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
        self.make_exposure = a(
            "Make &exposure", lambda: w.set_kind_of_selection("exposure"), "Ctrl+E"
        )
        self.make_outcome = a("Make &outcome", lambda: w.set_kind_of_selection("outcome"), "Ctrl+U")
        self.make_covariate = a("Make &covariate", lambda: w.set_kind_of_selection("covariate"))
        self.toggle_measured = a(
            "Mark &measured / unmeasured", w.toggle_measured_of_selection, "Ctrl+M"
        )
        self.layout = a("Automatic &layout", lambda: w.scene.auto_layout(), "Ctrl+Shift+L")
        self.fit = a("&Fit to window", lambda: w.view.fit_to_window(), "Ctrl+0")
        self.zoom_in = a("Zoom &in", lambda: w.view.zoom_in(), _Std.ZoomIn)
        self.zoom_in.setShortcuts([QKeySequence("Ctrl++"), QKeySequence("Ctrl+=")])
        self.zoom_out = a("Zoom &out", lambda: w.view.zoom_out(), _Std.ZoomOut)
        self.zoom_out.setShortcuts([QKeySequence("Ctrl+-")])
        self.actual_size = a("&Actual size", lambda: w.view.actual_size(), "Ctrl+1")

        self.family_group = QActionGroup(w)
        self.family: dict[str, QAction] = {}
        for key, label in FAMILY_LABELS.items():
            act = QAction(label, w, checkable=True)
            act.triggered.connect(lambda _=False, k=key: w.set_family(k))
            self.family_group.addAction(act)
            self.family[key] = act
        self.copy_code = {
            language: a(words, partial(w.copy_model_code, language))
            for language, words in (
                ("python", "&Python (statsmodels)"),
                ("r", "&R"),
                ("stata", "&Stata"),
                ("all", "&All three"),
            )
        }
        self.copy_code["all"].setShortcut(QKeySequence("Ctrl+Shift+C"))
        self.outcome_columns = a("&Outcome columns…", w.edit_outcome_columns)
        self.thresholds = a("&Thresholds…", w.edit_thresholds)
        self.engine = a("Data &engine…", w.data.edit_engine)
        self.rerun = a("&Run the analysis again", w.runner.run_now, _Std.Refresh)
        # no Esc shortcut: Esc belongs to the canvas (leave a mode, drop a rename);
        # while work runs the status bar shows a Cancel button
        self.cancel = a("&Cancel loading or analysis", w.cancel_work)

        self.glossary = a("&Glossary", lambda: w.show_glossary(), _Std.HelpContents)
        self.glossary.setShortcuts(_unique([QKeySequence("F1"), *_std_keys(_Std.HelpContents)]))
        self.cautions = a("&Cautions", lambda: w.prompts.info("Cautions", CAUTIONS))
        self.about = a("&About Covariscope", w.show_about)

    def _action(
        self,
        text: str,
        slot: Callable[[], object],
        shortcut: QKeySequence.StandardKey | str | None = None,
    ) -> QAction:
        act = QAction(text, self.w)
        if shortcut is not None:
            act.setShortcut(QKeySequence(shortcut))
        act.triggered.connect(lambda _=False: slot())
        return act

    def _dress(self) -> None:
        """Icons and the short words the toolbar shows under them."""
        for act, name, word in (
            (self.new, "new", "New"),
            (self.open, "open", "Open"),
            (self.save, "save", "Save"),
            (self.undo, "undo", "Undo"),
            (self.redo, "redo", "Redo"),
            (self.add_node, "add_node", "Node"),
            (self.mode_select, "select", "Select"),
            (self.mode_arrow, "arrow", "Arrow"),
            (self.mode_proxy, "proxy", "Proxy link"),
            (self.make_exposure, "exposure", "Exposure"),
            (self.make_outcome, "outcome", "Outcome"),
            (self.load_data, "data", "Data"),
            (self.layout, "layout", "Layout"),
            (self.fit, "fit", "Fit"),
            (self.print, "print", "Print"),
        ):
            act.setIcon(icon(name))
            act.setIconText(word)
            keys = act.shortcut().toString(QKeySequence.SequenceFormat.NativeText)
            tip = act.text().replace("&", "").rstrip("…")
            act.setToolTip(f"{tip} ({keys})" if keys else tip)

    def sync_mode(self, mode: str) -> None:
        """Check the toolbar's mode button of the canvas's present mode."""
        for act in self.mode_group.actions():
            if act.data() == mode:
                act.setChecked(True)

    def _mode(self, text: str, mode: str, shortcut: str) -> QAction:
        act = QAction(text, self.w, checkable=True)
        act.setShortcut(QKeySequence(shortcut))
        act.setData(mode)
        act.triggered.connect(lambda _=False: self.w.scene.set_mode(mode))
        self.mode_group.addAction(act)
        return act

    def build_menus(self) -> None:
        bar = self.w.menuBar()
        file = bar.addMenu("&File")
        file.addActions([self.new, self.open])
        self.recent_menu = file.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self.fill_recent)
        file.addAction(self.open_demo)
        file.addSeparator()
        file.addActions([self.save, self.save_as])
        file.addSeparator()
        file.addAction(self.load_data)
        export = file.addMenu("&Export")
        export.addActions([self.export_png, self.export_svg, self.export_graphml, self.export_csv])
        file.addSeparator()
        file.addActions([self.print, self.pdf])
        file.addSeparator()
        file.addAction(self.quit)

        edit = bar.addMenu("&Edit")
        edit.addActions([self.undo, self.redo])
        edit.addSeparator()
        edit.addActions([self.copy, self.paste, self.delete])

        diagram = bar.addMenu("&Diagram")
        diagram.addAction(self.add_node)
        diagram.addActions(self.mode_group.actions())
        diagram.addSeparator()
        diagram.addActions(
            [self.make_exposure, self.make_outcome, self.make_covariate, self.toggle_measured]
        )
        diagram.addAction(self.reverse)
        diagram.addSeparator()
        diagram.addActions([self.layout, self.fit])

        analysis = bar.addMenu("&Analysis")
        family = analysis.addMenu("Model &family")
        family.addActions(self.family_group.actions())
        analysis.addActions(
            [self.outcome_columns, self.thresholds, self.engine, self.rerun, self.cancel]
        )
        analysis.addSeparator()
        code = analysis.addMenu("Copy the model as &code")
        code.addActions(list(self.copy_code.values()))
        edit.addMenu(code)

        self.view_menu = bar.addMenu("&View")
        self.view_menu.addActions([self.zoom_in, self.zoom_out, self.actual_size, self.fit])
        self.view_menu.addSeparator()
        help_ = bar.addMenu("&Help")
        help_.addActions([self.glossary, self.cautions, self.about])

    def build_toolbar(self, compact: bool = False) -> QToolBar:
        """The toolbar; ``compact`` (a low screen) puts the words beside
        smaller icons, which saves height for the review table."""
        self._dress()
        tb = QToolBar("Main tools")
        tb.setObjectName("mainToolbar")
        tb.setIconSize(QSize(20, 20) if compact else QSize(24, 24))
        tb.setToolButtonStyle(
            Qt.ToolButtonStyle.ToolButtonTextBesideIcon
            if compact
            else Qt.ToolButtonStyle.ToolButtonTextUnderIcon
        )
        tb.addActions([self.new, self.open, self.save])
        tb.addSeparator()
        tb.addActions([self.undo, self.redo])
        tb.addSeparator()
        tb.addAction(self.add_node)
        tb.addActions(self.mode_group.actions())
        tb.addSeparator()
        tb.addActions([self.make_exposure, self.make_outcome])
        tb.addSeparator()
        tb.addActions([self.load_data, self.layout, self.fit])
        tb.addSeparator()
        tb.addAction(self.print)
        return tb

    def fill_recent(self) -> None:
        menu: QMenu = self.recent_menu
        menu.clear()
        files = self.w.io.recent_files()
        for path in files:
            act = menu.addAction(path)
            act.triggered.connect(lambda _=False, p=path: self.w.io.open(p))
        if not files:
            menu.addAction("No recent projects").setEnabled(False)

    def sync_family(self, family: str) -> None:
        if family in self.family:
            self.family[family].setChecked(True)
