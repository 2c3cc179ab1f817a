"""The main window: canvas in the centre, data panel, review table, open
paths list and estimates strip around it, status bar below.

Kept thin: actions live in :mod:`covariscope.qt.actions`, files in
:mod:`covariscope.qt.project_io`, data in :mod:`covariscope.qt.data_controller`,
panel logic in :mod:`covariscope.views`.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import shiboken6
from PySide6.QtCore import QPointF, Qt, QTimer
from PySide6.QtGui import QUndoStack
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QLabel,
    QMainWindow,
    QProgressBar,
    QTableWidget,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from covariscope.model.commands import Command, Macro, SetKind, SetProposed, UpdateNode
from covariscope.model.project import Project
from covariscope.qt import output
from covariscope.qt.actions import WindowActions
from covariscope.qt.canvas import DiagramScene, DiagramView
from covariscope.qt.claims_panel import ClaimsPanel
from covariscope.qt.clipboard import selection_from_mime, selection_mime
from covariscope.qt.data_controller import DataController
from covariscope.qt.data_panel import DataPanel
from covariscope.qt.diagnostics import CovariateDialog, EndpointDialog, NodeDialog
from covariscope.qt.estimates_strip import EstimatesStrip
from covariscope.qt.geometry import HeightShare, restore_layout, save_layout, window_size
from covariscope.qt.glossary import GlossaryWindow
from covariscope.qt.legend import LegendPanel
from covariscope.qt.messages_bar import MessagesBar
from covariscope.qt.outcome_dialog import OutcomeColumnsDialog
from covariscope.qt.project_io import ProjectIO, Prompts
from covariscope.qt.review_table import PathsPanel, ReviewTable
from covariscope.qt.settings_dialogs import ThresholdsDialog
from covariscope.qt.steps import StepChain
from covariscope.qt.tables import selected_text
from covariscope.qt.undo import push
from covariscope.qt.worker import AnalysisRunner
from covariscope.study.result import StudyResult
from covariscope.views.commands import SetSettings
from covariscope.views.diagnostics import node_labels
from covariscope.views.diagram import canvas_annotations
from covariscope.views.keep_choice import keep_choice, keep_choices_after
from covariscope.views.messages import window_messages
from covariscope.views.model_code import model_code, model_code_text
from covariscope.views.outcome_settings import family_columns_after
from covariscope.views.recompute import recompute_summary
from covariscope.views.residual import spline_knots_after
from covariscope.views.review import proposed_after_toggle

__all__ = ["MainWindow"]

#: Node fields no analysis reads: editing them asks for none.
LAYOUT_FIELDS = frozenset({"x", "y", "note"})
#: Node fields no panel shows: editing them refreshes none.
PLACE_FIELDS = frozenset({"x", "y"})
#: The review table's share of the window's height (the main output), kept on resizes.
REVIEW_SHARE = 0.4


class MainWindow(QMainWindow):
    def __init__(
        self,
        project: Project | None = None,
        *,
        run: Any = None,
        debounce_ms: int = 250,
        prompts: Prompts | None = None,
    ) -> None:
        super().__init__()
        self.setObjectName("mainWindow")
        self.resize(window_size(self.screen().availableGeometry().size()))
        self.project = Project()
        self.undo_stack = QUndoStack(self)
        self.prompts = prompts or Prompts(self)
        self.result: StudyResult | None = None
        self.selected_ids: list[str] = []
        #: while an edit is pushed: what its events asked for ("refresh", "analyse")
        self._held: set[str] | None = None
        self.dialogs: dict[str, NodeDialog] = {}
        self.runner = AnalysisRunner(
            lambda: self.project, run=run, debounce_ms=debounce_ms, parent=self
        )
        self.runner.started.connect(lambda _g: self._set_state("Analysing…"))
        self.runner.progress.connect(lambda f, t: self.show_progress(t or "Analysing", f))
        self.runner.finished.connect(self._analysis_done)
        self.showing = StepChain(self)
        self.runner.failed.connect(self._analysis_failed)
        self.io = ProjectIO(self)
        self.data = DataController(self)

        self.strip = EstimatesStrip()
        self.messages_bar = MessagesBar()
        self.messages_bar.fix_requested.connect(self.apply_fix)
        self.centre = QWidget()
        self.centre_layout = QVBoxLayout(self.centre)
        self.centre_layout.setContentsMargins(0, 0, 0, 0)
        self.centre_layout.addWidget(self.messages_bar)
        self.centre_layout.addWidget(self.strip)
        self.setCentralWidget(self.centre)
        self.scene: Any = None
        self.view: Any = None

        self.data_panel = DataPanel()
        self.data_panel.load_requested.connect(self.data.choose_and_load)
        self.data_panel.bind_requested.connect(self.data.bind)
        self.data_panel.unbind_requested.connect(self.data.unbind_column)
        self.data_panel.type_requested.connect(self.data.set_type)
        self.data_panel.reference_requested.connect(self.data.set_reference)
        self.review = ReviewTable()
        self.review.proposed_toggled.connect(self.set_proposed_member)
        self.review.node_activated.connect(self.open_diagnostics)
        self.review.keep_chosen.connect(self.keep_member)
        self.paths = PathsPanel()
        self.paths.path_chosen.connect(self._highlight_path)
        self.claims = ClaimsPanel()
        self.claims.suggestion_chosen.connect(self._show_suggestion)
        self.claims.settings_changed.connect(lambda ch: self.project.update_settings(**ch))
        self.docks = {
            "data": self._dock("Data", self.data_panel, Qt.DockWidgetArea.LeftDockWidgetArea),
            "review": self._dock(
                "Covariate review", self.review, Qt.DockWidgetArea.BottomDockWidgetArea
            ),
            "paths": self._dock(
                "Open backdoor paths", self.paths, Qt.DockWidgetArea.LeftDockWidgetArea
            ),
            "claims": self._dock(
                "Independence claims", self.claims, Qt.DockWidgetArea.BottomDockWidgetArea
            ),
            "legend": self._dock("Legend", LegendPanel(), Qt.DockWidgetArea.RightDockWidgetArea),
        }
        # the legend opens from View ▸ Legend: on a laptop the canvas needs the width
        self.docks["legend"].hide()
        self.docks["legend"].toggleViewAction().triggered.connect(self._legend_toggled)
        self.glossary: GlossaryWindow | None = None
        # the claims share the bottom with the review, one tab each
        self.tabifyDockWidget(self.docks["review"], self.docks["claims"])
        # closed at first (View ▸ Independence claims): its tab would take a row of the review
        # table's height on a laptop screen
        self.docks["claims"].hide()
        self.docks["review"].raise_()
        # the paths list is short: it shares the left column with the data
        # panel, so the canvas keeps the whole width between them and the edge
        self.splitDockWidget(self.docks["data"], self.docks["paths"], Qt.Orientation.Vertical)
        self.resizeDocks([self.docks["data"]], [450], Qt.Orientation.Horizontal)
        self.resizeDocks(
            [self.docks["data"], self.docks["paths"]], [420, 150], Qt.Orientation.Vertical
        )
        self.review_share = HeightShare(self, self.docks["review"], REVIEW_SHARE)
        self._size_review()
        self._fitted = False
        self._layout_settled = False
        self._restored = False

        self.state_label = QLabel("No analysis yet")
        self.rows_label = QLabel("")
        self.engine_label = QLabel("")
        self.engine_label.setObjectName("engineLabel")
        self.error_label = QLabel("")
        self.error_label.setObjectName("lastError")
        # What is being done ("Fitting model 12 of 42, pass 2 over the rows")
        # beside the bar, which shows the share done: the sentence does not fit in it.
        self.progress_label = QLabel("")
        self.progress_label.hide()
        self.progress = QProgressBar()
        self.progress.setMaximumWidth(180)
        self.progress.setRange(0, 1000)
        self.progress.hide()
        self.cancel_button = QToolButton()
        self.cancel_button.setText("Cancel")
        self.cancel_button.clicked.connect(self.cancel_work)
        self.cancel_button.hide()
        bar = self.statusBar()
        for label in (self.state_label, self.rows_label):
            label.setObjectName("statusField")
        permanent = (
            self.state_label,
            self.rows_label,
            self.engine_label,
            self.progress_label,
            self.progress,
        )
        for w in (*permanent, self.cancel_button):
            bar.addPermanentWidget(w)
        bar.addWidget(self.error_label, 1)

        self.actions_ = WindowActions(self)
        self.actions_.build_menus()
        self.addToolBar(
            self.actions_.build_toolbar(compact=self.screen().availableGeometry().height() < 900)
        )
        for dock in self.docks.values():
            self.actions_.view_menu.addAction(dock.toggleViewAction())
        self.set_project(project or Project())
        self.io.mark_clean()
        self._restored = restore_layout(self)

    def _legend_toggled(self, shown: bool) -> None:
        """An opened legend takes a readable width beside the canvas."""
        if shown:  # once the dock is laid out
            QTimer.singleShot(
                0,
                lambda: self.resizeDocks([self.docks["legend"]], [360], Qt.Orientation.Horizontal),
            )

    def _size_review(self) -> None:
        """The review table is the main output: give it a good share of the height."""
        if not shiboken6.isValid(self):
            return
        review_height = max(260, int(self.height() * REVIEW_SHARE))
        self.review_share.share = review_height / max(self.height(), 1)
        self.resizeDocks([self.docks["review"]], [review_height], Qt.Orientation.Vertical)
        self.resizeDocks([self.docks["data"]], [450], Qt.Orientation.Horizontal)

    def _dock(self, title: str, widget: QWidget, area: Qt.DockWidgetArea) -> QDockWidget:
        dock = QDockWidget(title, self)
        dock.setObjectName(title.replace(" ", "_"))
        dock.setWidget(widget)
        dock.setFeatures(
            QDockWidget.DockWidgetFeature.DockWidgetMovable
            | QDockWidget.DockWidgetFeature.DockWidgetFloatable
            | QDockWidget.DockWidgetFeature.DockWidgetClosable
        )
        self.addDockWidget(area, dock)
        return dock

    # -- project -----------------------------------------------------------------------
    def set_project(self, project: Project) -> None:
        """Show another project: new scene, empty undo history, data reloaded."""
        old = self.project
        old.diagram.unsubscribe(self._model_changed)
        old.unsubscribe(self._project_changed)
        for dialog in list(self.dialogs.values()):
            dialog.close()
        self.dialogs.clear()
        self.showing.stop()
        self.runner.cancel()
        self.data.forget()
        self.undo_stack.clear()
        self.undo_stack.setClean()
        self.io.extra_modified = False
        self.project = project
        self.result = None
        self.runner.result = None
        if self.scene is not None:
            self.scene.detach()
        scene = DiagramScene(project, self.undo_stack, self)  # owned by the window
        view = DiagramView(scene)
        view.setObjectName("diagramView")
        view.setAcceptDrops(True)
        view.viewport().setAcceptDrops(True)
        scene.node_double_clicked.connect(self.open_diagnostics)
        scene.selection_changed_ids.connect(self._selection_changed)
        scene.message.connect(self.show_message)
        scene.proposed_toggled.connect(self.set_proposed_member)
        scene.keep_chosen.connect(self.keep_member)
        scene.keep_choice_of = lambda n: keep_choice(self.project, self.result, n)
        if hasattr(self, "actions_"):
            scene.mode_changed.connect(self.actions_.sync_mode)
            view.addActions(self.actions_.canvas_only)
        if self.view is not None:
            self.centre_layout.removeWidget(self.view)
            self.view.hide()  # not painted again before it is deleted
            self.view.deleteLater()
        old_scene = self.scene
        self.scene, self.view = scene, view
        self.centre_layout.addWidget(view, 1)
        if old_scene is not None:
            old_scene.deleteLater()
        project.diagram.subscribe(self._model_changed)
        project.subscribe(self._project_changed)
        if hasattr(self, "actions_"):
            self.actions_.sync_family(project.analysis.family)
            self.actions_.sync_mode("select")
        self.set_last_error("")
        self.io.update_title()
        if project.data is not None:
            self.data.start_load()
        self.request_analysis()
        if len(project.diagram):
            view.fit_to_window(readable=True)
            self._fit_soon()
        # the panels in the next turn: the new canvas is painted first, and
        # neither turn holds the GUI thread for long (a result that comes
        # first refreshes them itself and drops this step)
        self.showing.start(self.panel_steps(), now=False)

    def open_demo(self) -> bool:
        from covariscope.model.demo import demo_folder, write_demo

        return self.io.open(str(write_demo(demo_folder())))

    def push(self, command: Command) -> bool:
        """Apply an edit through the undo stack; a refused edit shows its message.

        The panels are refreshed, and an analysis asked for, once for the
        whole edit: a macro (the columns bound when data load, a paste, a
        deletion with its arrows) sends one model event per part, and a
        refresh of every panel per event held the GUI thread 40 ms and more.
        """
        if self._held is not None:  # an edit pushed while another is applied
            return push(self.undo_stack, command, self._refused)
        self._held = set()
        try:
            return push(self.undo_stack, command, self._refused)
        finally:
            held, self._held = self._held, None
            if "refresh" in held:
                self.refresh_panels()
            if "analyse" in held:
                self.request_analysis()

    def _refresh_soon(self) -> None:
        """Refresh the panels now, or once the edit being pushed is applied."""
        if self._held is None:
            self.refresh_panels()
        else:
            self._held.add("refresh")

    def _analyse_soon(self) -> None:
        """Ask for an analysis now, or once the edit being pushed is applied."""
        if self._held is None:
            self.request_analysis()
        else:
            self._held.add("analyse")

    def _refused(self, message: str) -> None:
        self.show_message(message)
        self.set_last_error(message)

    # -- reacting to the model -----------------------------------------------------------
    def _model_changed(self, event: Any) -> None:
        if event.kind == "node_changed" and set(event.changes) <= PLACE_FIELDS:
            return  # the canvas moves the node itself; no panel shows where it sits
        self._refresh_soon()
        if event.kind == "node_changed" and set(event.changes) <= LAYOUT_FIELDS:
            return  # where a node sits and what its note says change no number
        self._analyse_soon()

    def _project_changed(self, event: Any) -> None:
        if event.kind == "settings":
            self.data.reprofile()
            self.actions_.sync_family(self.project.analysis.family)
        self._refresh_soon()
        table = self.data.table
        moved = table is not None and self.project.data_path() != Path(table.path)
        if event.kind == "data" and moved:
            self.data.forget()
        self._analyse_soon()

    def request_analysis(self) -> None:
        if self.project.diagram.exposure is None or self.project.diagram.outcome is None:
            self.runner.cancel()
            self._set_state("Needs an exposure and an outcome")
            return
        if self.data.loading:
            self._set_state("Waiting for the data")
            return
        self._set_state("Out of date — updating…")
        self._mark_review_stale(True)
        self.runner.request()

    def _mark_review_stale(self, stale: bool) -> None:
        """Grey the review table while an analysis is due (restyled only on a change)."""
        if self.review.property("stale") is not stale:
            self.review.setProperty("stale", stale)
            self.review.style().polish(self.review.table)

    def refresh_panels(self) -> None:
        for step in self.panel_steps():
            step()

    def panel_steps(self) -> list[Callable[[], None]]:
        """The refresh of each panel, as steps a :class:`StepChain` can run one
        per turn (each panel's layout and paint then fall in its own turn)."""
        return [
            lambda: self.data_panel.refresh(self.project, self.data.table, self.data.profiles),
            lambda: self.review.refresh(self.project, self.result),
            self._refresh_side_panels,
            lambda: self.messages_bar.refresh(
                window_messages(
                    self.project,
                    self.result,
                    self.data.profiles,
                    data_loaded=self.data.table is not None,
                )
            ),
        ]

    def _refresh_side_panels(self) -> None:
        self.paths.refresh(self.result, node_labels(self.project))
        self.claims.sync_settings(
            self.project.analysis.claim_correction, self.project.analysis.claim_limit
        )
        self.claims.refresh(self.result)
        self.strip.refresh(self.result)

    def _analysis_done(self, _generation: int, result: StudyResult) -> None:
        """Show a new result: panels, canvas and dialogs in short steps, one
        per turn of the event loop (so the window keeps answering), the state
        last (tests and users read "up to date" once all of it shows)."""
        self.hide_progress()
        self.result = result
        dialogs = [lambda d=d: self._refresh_open_dialog(d) for d in list(self.dialogs.values())]
        self.showing.start(
            [
                self._show_review,
                lambda: self.claims.refresh(self.result),
                *self.panel_steps(),
                self._show_annotations,
                *dialogs,
                self._show_state,
            ]
        )

    def _show_review(self) -> None:
        self._mark_review_stale(False)
        self.review.refresh(self.project, self.result)
        sample = self.result.sample if self.result is not None else None
        if sample is not None:
            self.rows_label.setText(f"{sample.used:,} of {sample.rows:,} rows used")
        elif self.data.table is not None:
            self.rows_label.setText("Diagram only: see the messages above the diagram")
        else:
            self.rows_label.setText("No data loaded")

    def _show_annotations(self) -> None:
        if self.result is not None:
            notes = canvas_annotations(self.result)
            self.scene.set_annotations(notes.roles, notes.verdicts)

    def _show_state(self) -> None:
        result = self.result
        if result is None or self.runner.running or self.runner.pending:
            return  # an edit came in meanwhile: its own state stands
        self._set_state("Analysis up to date")
        self.show_engine()
        # a tooltip, not a status message: a long message would widen the window
        self.state_label.setToolTip(
            recompute_summary(result.recomputed, result.models_fitted, result.seconds)
        )
        self.error_label.setToolTip("\n".join(result.messages))

    def _analysis_failed(self, _generation: int, message: str) -> None:
        self.showing.stop()
        self.hide_progress()
        self._set_state("Analysis failed")
        self.set_last_error(message)

    # -- edits from the panels -------------------------------------------------------------
    def set_proposed_member(self, node_id: str, checked: bool) -> None:
        ids = proposed_after_toggle(self.project, node_id, checked)
        if ids is not None and not self.push(SetProposed(self.project, ids)):
            self.review.refresh(self.project, self.result)

    def keep_member(self, key: str, member: str | None) -> None:
        """Keep ``member`` of the collinear group filed under ``key`` (None:
        back to the suggestion); one undo step, then the analysis runs again."""
        choices = keep_choices_after(self.project, key, member)
        if choices is None:
            return
        if member is None:
            text = "Let the analysis suggest which member to keep"
        else:
            text = f"Keep {node_labels(self.project).get(member, member)} of its group"
        self.push(SetSettings(self.project, text, keep_choices=choices))

    def _show_suggestion(self, claim: object) -> None:
        if self.scene is not None:
            self.scene.show_suggestion(claim)

    def _highlight_path(self, path: object) -> None:
        if self.scene is not None:
            self.scene.highlight_path(
                list(path) if isinstance(path, list | tuple) and path else None
            )

    def _selection_changed(self, ids: list[object]) -> None:
        self.selected_ids = [str(i) for i in ids]
        covariates = [i for i in self.selected_ids if i in self.project.diagram]
        if len(covariates) == 1:
            self.review.select_node(covariates[0])

    def selected_nodes(self) -> list[str]:
        return [i for i in self.selected_ids if i in self.project.diagram]

    def set_kind_of_selection(self, kind: str) -> None:
        nodes = self.selected_nodes()
        if not nodes:
            self.show_message("Select a node first.")
            return
        if kind != "covariate" and len(nodes) > 1:
            self.show_message(f"Select one node to make it the {kind}.")
            return
        commands: list[Command] = [SetKind(self.project, n, kind) for n in nodes]
        self.push(
            commands[0]
            if len(commands) == 1
            else Macro(f"Make {len(nodes)} nodes covariates", commands)
        )

    def toggle_measured_of_selection(self) -> None:
        nodes = self.selected_nodes()
        commands: list[Command] = [
            UpdateNode(self.project, n, measured=not self.project.diagram.node(n).measured)
            for n in nodes
        ]
        if commands:
            self.push(Macro("Change measured", commands))

    def focused_table(self) -> QTableWidget | None:
        """The review or data table when the keyboard focus is in it (Copy and
        Paste then act on the table, not on the diagram)."""
        focus = QApplication.focusWidget()
        for table in (self.review.table, self.data_panel.table):
            if focus is not None and (focus is table or table.isAncestorOf(focus)):
                return table
        return None

    def copy_selection(self) -> bool:
        """Copy what the focus is on: the selected cells of a table as
        tab-separated text with a header row, else the selected nodes and
        their links (our own MIME type, plus the node labels as text), so
        that Paste works in another window too."""
        table = self.focused_table()
        if table is not None:
            text = selected_text(table)
            if not text:
                self.show_message("Select the rows to copy first.")
                return False
            QApplication.clipboard().setText(text)
            n = text.count("\n") - 1
            self.show_message(f"Copied {n} row{'s' if n != 1 else ''} as text.")
            return True
        clip = self.scene.copy_selection()
        if not clip.get("nodes"):
            self.show_message("Select the nodes to copy first.")
            return False
        QApplication.clipboard().setMimeData(selection_mime(clip))
        n = len(clip["nodes"])
        self.show_message(f"Copied {n} node{'s' if n != 1 else ''}.")
        return True

    def paste(self) -> list[str]:
        if self.focused_table() is not None:
            self.show_message("The tables are read-only; click the diagram to paste nodes there.")
            return []
        clip = selection_from_mime(QApplication.clipboard().mimeData())
        if clip is None:
            self.show_message("The clipboard holds no diagram nodes to paste.")
            return []
        pasted: list[str] = self.scene.paste(clip)
        return pasted

    def add_node_at_centre(self) -> None:
        centre = self.view.mapToScene(self.view.viewport().rect().center())
        self.scene.add_node_at(QPointF(centre))

    def set_form(self, column: str, knots: int) -> None:
        """Enter ``column`` linearly (0) or as a spline with ``knots`` knots; one undo step."""
        choices = spline_knots_after(self.project, column, knots)
        if choices is not None:
            text = f"Enter {column} as a spline" if knots else f"Enter {column} linearly"
            self.push(SetSettings(self.project, text, spline_knots=choices))

    def set_family(self, family: str) -> None:
        if family != self.project.analysis.family:
            self.push(SetSettings(self.project, f"Use the {family} model", family=family))

    def outcome_columns_dialog(self) -> OutcomeColumnsDialog:
        """The outcome-columns dialog for the project's family (not shown)."""
        return OutcomeColumnsDialog(self.project, self.data.columns(), self)

    def edit_outcome_columns(self) -> None:
        dialog = self.outcome_columns_dialog()
        if dialog.exec():
            self.apply_outcome_columns(dialog.values())

    def apply_outcome_columns(self, chosen: dict[str, str | None]) -> None:
        """Save the family's outcome columns (one undo step)."""
        family = self.project.analysis.family
        after = family_columns_after(self.project, family, chosen)
        if after != self.project.analysis.family_columns:
            self.push(
                SetSettings(
                    self.project, f"Choose the {family} outcome columns", family_columns=after
                )
            )

    def apply_fix(self, fix: str) -> None:
        """The fix a problem in the messages bar offers."""
        if fix == "outcome_columns":
            self.edit_outcome_columns()
        elif fix == "load":
            self.data.choose_and_load()
        elif fix == "bind":
            self.docks["data"].show()
            self.docks["data"].raise_()
            self.show_message("Drag a column from the data panel onto the node, or pick it there.")

    def edit_thresholds(self) -> None:
        dialog = ThresholdsDialog(self.project.analysis.thresholds, self)
        if dialog.exec():
            values = dialog.values()
            if values != self.project.analysis.thresholds:
                self.push(SetSettings(self.project, "Change the thresholds", thresholds=values))

    def cancel_work(self) -> None:
        if self.data.loading:
            self.show_message(self.data.cancel())
        if self.runner.running or self.runner.pending:
            self.runner.cancel()
            self._set_state("Analysis cancelled — edit or press F5 to run again")
        self.hide_progress()

    # -- diagnostics ----------------------------------------------------------------------
    def open_diagnostics(self, node_id: str) -> NodeDialog | None:
        if node_id not in self.project.diagram:
            return None
        dialog = self.dialogs.get(node_id)
        if dialog is None:
            kind = self.project.diagram.node(node_id).kind
            dialog = (
                CovariateDialog(node_id, self)
                if kind == "covariate"
                else EndpointDialog(node_id, self)
            )
            dialog.note_saved.connect(self._save_note)
            if isinstance(dialog, EndpointDialog):
                dialog.family_changed.connect(self.set_family)
            else:
                dialog.keep_chosen.connect(self.keep_member)
                dialog.form_chosen.connect(self.set_form)
                dialog.plots_requested.connect(lambda n: output.export_dialog_plots(self, n))
            dialog.finished.connect(lambda _r, n=node_id: self.dialogs.pop(n, None))
            self.dialogs[node_id] = dialog
        self._refresh_dialog(dialog)
        dialog.show()
        dialog.raise_()
        return dialog

    def _refresh_open_dialog(self, dialog: NodeDialog) -> None:
        if shiboken6.isValid(dialog) and self.dialogs.get(dialog.node_id) is dialog:
            self._refresh_dialog(dialog)

    def _refresh_dialog(self, dialog: NodeDialog) -> None:
        if dialog.node_id not in self.project.diagram:
            dialog.close()
            return
        dialog.refresh(
            self.project, self.result, self.data.profiles, self.data.plot_frame(self.result)
        )

    def _save_note(self, node_id: str, text: str) -> None:
        if node_id in self.project.diagram and self.project.diagram.node(node_id).note != text:
            self.push(UpdateNode(self.project, node_id, note=text))

    # -- output ----------------------------------------------------------------------------
    def export_diagram(self, kind: str) -> bool:
        return output.export_diagram(self, kind)

    def export_review_csv(self, path: str | None = None) -> bool:
        return output.export_review_csv(self, path)

    def print_rationale(self) -> bool:
        return output.print_rationale(self)

    def save_rationale_pdf(self, path: str | None = None) -> bool:
        return output.save_rationale_pdf(self, path)

    def copy_model_code(self, language: str = "all") -> str:
        """Put the recommended and the proposed set's model, as code in
        ``language`` ("python", "r", "stata" or "all"), on the clipboard;
        returns the text (empty when no model is fitted yet)."""
        codes = model_code(self.result, self.project) if self.result is not None else {}
        text = model_code_text(codes, language)
        if not text:
            self.show_message(
                "No fitted model to copy yet: bind the exposure and the outcome to data "
                "and let the analysis finish."
            )
            return ""
        QApplication.clipboard().setText(text)
        self.show_message("The model's code is on the clipboard.")
        return text

    def show_glossary(self, section: str = "") -> GlossaryWindow:
        """Open (or raise) the glossary, at ``section`` when given."""
        if self.glossary is None or not shiboken6.isValid(self.glossary):
            self.glossary = GlossaryWindow(self)
        self.glossary.show()
        self.glossary.raise_()
        if section:
            self.glossary.show_section(section)
        return self.glossary

    def show_about(self) -> None:
        from covariscope import __version__

        self.prompts.info(
            "About Covariscope",
            f"<p><b>Covariscope {__version__}</b></p><p>Should this covariate be in the model, and why? "
            "A workbench that sets the causal diagram beside the data's evidence, covariate by "
            "covariate, and writes the rationale down.</p>",
        )

    # -- status ---------------------------------------------------------------------------
    def _set_state(self, text: str) -> None:
        self.state_label.setText(text)

    def show_message(self, text: str) -> None:
        self.statusBar().showMessage(text, 8000)

    def set_last_error(self, text: str) -> None:
        self.error_label.setText(f"Last problem: {text}" if text else "")
        self.error_label.setToolTip(text)

    def show_engine(self) -> None:
        """Name the engine that reads the data, and the memory the program holds now."""
        from covariscope.data.sources.memuse import resident_bytes
        from covariscope.views.data_panel import engine_status

        if self.data.table is None:
            self.engine_label.setText("")
            self.engine_label.setToolTip("")
            return
        source = self.data.source
        engine = source.engine if source is not None else "memory"
        self.engine_label.setText(engine_status(engine, resident_bytes()))
        self.engine_label.setToolTip(
            source.status() if source is not None else "Every row is loaded into memory."
        )

    def show_progress(self, text: str, fraction: float) -> None:
        self.progress_label.setText(text)
        self.progress.setFormat("%p%")
        # QProgressBar.setValue repaints the bar at once, through the style
        # sheet (10-20 ms the first time it shows); with updates off for the
        # call, the bar is painted with the rest of the window instead
        self.progress.setUpdatesEnabled(False)
        self.progress.setValue(int(1000 * max(0.0, min(1.0, fraction))))
        self.progress.setUpdatesEnabled(True)
        self.progress_label.show()
        self.progress.show()
        self.cancel_button.show()

    def hide_progress(self) -> None:
        self.progress_label.hide()
        self.progress.hide()
        self.cancel_button.hide()

    def resizeEvent(self, event: Any) -> None:
        super().resizeEvent(event)
        # a window opened small and then widened gives the data panel its
        # columns back (the canvas takes the rest)
        data = self.docks["data"]
        if (
            self.width() >= 1200
            and data.isVisible()
            and not data.isFloating()
            and data.width() < 450
        ):
            self.resizeDocks([data], [450], Qt.Orientation.Horizontal)
        self._fit_soon()

    def showEvent(self, event: Any) -> None:
        super().showEvent(event)
        if not self._layout_settled:
            # the docks take their share once the window has its real size,
            # unless a remembered layout put them where the user left them
            self._layout_settled = True
            if not self._restored:
                QTimer.singleShot(0, self._size_review)
            else:  # the share the user left it at
                QTimer.singleShot(0, self.review_share.remember)
        self._fit_soon()

    def _fit_soon(self) -> None:
        """Fit the diagram once the window has its real size, until the user
        zooms or pans it themselves (a fit before the docks settle is too small)."""
        if (
            self.view is not None
            and len(self.project.diagram)
            and not getattr(self.view, "user_zoomed", False)
        ):
            QTimer.singleShot(0, self._fit_now)

    def _fit_now(self) -> None:
        if (
            self.view is not None
            and shiboken6.isValid(self.view)
            and not getattr(self.view, "user_zoomed", False)
        ):
            self.view.fit_to_window(readable=True)

    # -- closing --------------------------------------------------------------------------
    def closeEvent(self, event: Any) -> None:
        if getattr(self, "_shut", False):
            event.accept()
            return
        if not self.io.confirm_discard():
            event.ignore()
            return
        for dialog in list(self.dialogs.values()):
            dialog.close()
        save_layout(self)
        self.showing.stop()
        self.runner.shutdown(30_000)
        self.data.loader.shutdown(30_000)
        self.data.profiler.shutdown(30_000)
        self.io.shutdown()
        self.project.diagram.unsubscribe(self._model_changed)
        self.project.unsubscribe(self._project_changed)
        if hasattr(self.scene, "detach"):
            self.scene.detach()
        self._shut = True
        event.accept()
