"""Diagnostics dialogs opened by double-clicking a node.

A covariate's dialog shows the checklist in words, role and verdict, the
comparison models and collinearity figures, two plots and the node's note;
the exposure's or outcome's shows its distribution, the model family
(changeable) and its missing data.  Both refresh when the analysis does.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QFrame,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPlainTextEdit,
    QPushButton,
    QScrollArea,
    QSizePolicy,
    QSplitter,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from covariscope.data.profile import ColumnProfile
from covariscope.model.project import Project
from covariscope.qt.diagnostic_plots import draw_data, draw_distribution, draw_estimates
from covariscope.qt.joint_plot import draw_picture
from covariscope.qt.modification_plot import draw_modification
from covariscope.qt.tables import filling
from covariscope.study.result import StudyResult
from covariscope.views.diagnostics import (
    DIAGNOSTIC_CAUTION,
    EndpointDiagnostics,
    NodeDiagnostics,
    endpoint_diagnostics,
    node_diagnostics,
)
from covariscope.views.keep_choice import KeepChoice, keep_choice
from covariscope.views.plots import (
    covariate_heading,
    distribution_picture,
    endpoint_heading,
    estimates_caption,
    estimates_picture,
    plot_path,
    sample_picture,
)
from covariscope.views.residual import FORM_CHOICES
from covariscope.vocabulary import FAMILY_TERMS

#: the column profiles a dialog reads (None before the data are profiled)
Profiles = Mapping[str, ColumnProfile] | None

__all__ = ["FAMILY_LABELS", "CovariateDialog", "EndpointDialog", "NodeDialog"]

FAMILY_LABELS: dict[str, str] = {f.value: t.label for f, t in FAMILY_TERMS.items()}

#: What the family chooser decides, said beside it.
FAMILY_HINT = (
    "Chosen by the outcome's type: linear for a measurement, logistic or log-link "
    "Poisson for a yes/no outcome, Cox for time to an event. It applies to every "
    "model of the analysis and sets the effect measure; a change is one undo step."
)

_MODEL_HEADERS = ("Model", "Estimate", "95% CI", "Change %", "SE inflation %")
_MODEL_TIPS = {
    3: "Change in the exposure estimate, this model against the same model without the "
    "covariate (crude + C against crude; full against full − C).",
    4: "Inflation of the exposure estimate's standard error, this model against the same "
    "model without the covariate.",
}


def _table(headers: tuple[str, ...]) -> QTableWidget:
    t = QTableWidget(0, len(headers))
    t.setHorizontalHeaderLabels(list(headers))
    t.verticalHeader().hide()
    t.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    t.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
    t.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    t.horizontalHeader().setStretchLastSection(True)
    t.setFocusPolicy(Qt.FocusPolicy.NoFocus)
    return t


def _fill(
    table: QTableWidget, rows: list[tuple[str, ...]], fit: bool = True, most: int = 0
) -> None:
    """Fill a table; ``fit`` sizes it to its rows (at most ``most`` of them when given:
    the rest scroll)."""
    with filling(table):
        table.setRowCount(len(rows))
        for r, row in enumerate(rows):
            for c, text in enumerate(row):
                item = QTableWidgetItem(text)
                if c:
                    item.setTextAlignment(
                        Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
                    )
                table.setItem(r, c, item)
    table.resizeRowsToContents()
    if not fit:
        return
    shown = min(len(rows), most) if most else len(rows)
    height = table.horizontalHeader().height() + sum(table.rowHeight(i) for i in range(shown)) + 6
    table.setFixedHeight(max(height, 40))


def _beside(canvas: QWidget, note: QLabel) -> QWidget:
    """A plot with its sentence to the right: the dialog has width to spare, not height."""
    page = QWidget()
    lay = QHBoxLayout(page)
    lay.setContentsMargins(0, 0, 0, 0)
    lay.addWidget(canvas, 1)
    note.setFixedWidth(250)
    note.setSizePolicy(QSizePolicy.Policy.Fixed, QSizePolicy.Policy.Ignored)
    note.setAlignment(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
    lay.addWidget(note)
    return page


class NodeDialog(QDialog):
    """Shared part: title, the note box (saved via ``note_saved``), caution."""

    note_saved = Signal(str, str)  # node id, text

    def __init__(self, node_id: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.node_id = node_id
        self.setObjectName("diagnosticsDialog")
        self.setAttribute(Qt.WidgetAttribute.WA_DeleteOnClose, False)
        self.note = QPlainTextEdit()
        self.note.setPlaceholderText(
            "Your reasoning for this variable, in a sentence or two. It is saved in the "
            "project and printed in the rationale."
        )
        self.note.setFixedHeight(44)
        self.note.textChanged.connect(self._note_edited)
        self.save_note_button = QPushButton("Save note")
        self.save_note_button.setEnabled(False)
        self.save_note_button.clicked.connect(self.save_note)
        self._note_dirty = False
        self._setting_note = False
        self.caution = QLabel(DIAGNOSTIC_CAUTION)
        self.caution.setObjectName("caution")
        self.caution.setWordWrap(True)
        self.buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        self.buttons.rejected.connect(self.close)

    def _note_box(self) -> QGroupBox:
        box = QGroupBox("Note")
        lay = QHBoxLayout(box)
        lay.addWidget(self.note, 1)
        lay.addWidget(self.save_note_button, 0, Qt.AlignmentFlag.AlignBottom)
        return box

    def _note_edited(self) -> None:
        if not self._setting_note:
            self._note_dirty = True
            self.save_note_button.setEnabled(True)

    def set_note(self, text: str) -> None:
        """Show the saved note, unless the user is in the middle of editing it."""
        if self._note_dirty or self.note.toPlainText() == text:
            return
        self._setting_note = True
        self.note.setPlainText(text)
        self._setting_note = False

    def save_note(self) -> None:
        if self._note_dirty:
            self._note_dirty = False
            self.save_note_button.setEnabled(False)
            self.note_saved.emit(self.node_id, self.note.toPlainText())

    def closeEvent(self, event: Any) -> None:
        self.save_note()
        super().closeEvent(event)

    def refresh(
        self, project: Project, result: StudyResult | None, profiles: Profiles, frame: Any
    ) -> None:
        raise NotImplementedError


class CovariateDialog(NodeDialog):
    """Full diagnostics of one covariate."""

    #: keep a member of the covariate's collinear group: (group key, member id)
    keep_chosen = Signal(str, object)
    #: enter the covariate's column linearly (0) or as a spline with this many knots
    form_chosen = Signal(str, int)
    #: the user asked to save the dialog's plots (node id)
    plots_requested = Signal(str)

    def __init__(self, node_id: str, parent: QWidget | None = None) -> None:
        super().__init__(node_id, parent)
        self.resize(1000, 820)
        self.state: NodeDiagnostics | None = None
        self.keep: KeepChoice | None = None
        self.keep_box = QGroupBox("Member of the group to keep")
        self.keep_member = QComboBox()
        self.keep_member.setToolTip(
            "The recommended set adjusts for this member of the group; the choice is "
            "saved with the project."
        )
        self.keep_member.activated.connect(self._keep_activated)
        self.keep_note = QLabel()
        self.keep_note.setWordWrap(True)
        keep_lay = QHBoxLayout(self.keep_box)
        keep_lay.addWidget(self.keep_member)
        keep_lay.addWidget(self.keep_note, 1)
        self.keep_box.hide()
        # a compact row beside the heading: the dialog has width to spare, not height
        self.form_box = QWidget()
        self.form = QComboBox()
        for knots, label in FORM_CHOICES:
            self.form.addItem(label, knots)
        self.form.setToolTip(
            "A continuous covariate enters linearly, or as a natural cubic spline with knots "
            "at quantiles when its effect may be curved (saved with the project; one undo step)."
        )
        self.form.activated.connect(self._form_activated)
        form_row = QHBoxLayout(self.form_box)
        form_row.setContentsMargins(0, 0, 0, 0)
        form_row.addWidget(QLabel("Form in the models:"))
        form_row.addWidget(self.form)
        self.form_box.hide()
        self.save_plots_button = self.buttons.addButton(
            "Save plots…", QDialogButtonBox.ButtonRole.ActionRole
        )
        self.save_plots_button.setToolTip(
            "Save every plot of this dialog (estimates, data, the collinearity picture and "
            "effect modification when shown) as images"
        )
        self.save_plots_button.clicked.connect(lambda: self.plots_requested.emit(self.node_id))
        self.heading = QLabel()
        self.heading.setObjectName("dialogHeading")
        self.verdict = QLabel()
        self.verdict.setObjectName("dialogVerdict")
        self.verdict.setWordWrap(True)
        self.checks = QLabel()
        self.checks.setWordWrap(True)
        self.checks.setTextFormat(Qt.TextFormat.RichText)
        self.models = _table(_MODEL_HEADERS)
        self.models.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        # a multi-level exposure has a row per model and contrast: those past five scroll
        self.models.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.models.horizontalHeader().setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        self.models.horizontalHeader().setStretchLastSection(False)
        for column, tip in _MODEL_TIPS.items():
            if (header := self.models.horizontalHeaderItem(column)) is not None:
                header.setToolTip(tip)
        self.figures = _table(("Collinearity", "Value"))
        self.figures.setMinimumHeight(120)
        self.messages = QLabel()
        self.messages.setObjectName("dialogMessages")
        self.estimate_figure = Figure(figsize=(4.4, 3.0), layout="constrained")
        self.estimate_canvas = FigureCanvasQTAgg(self.estimate_figure)
        self.data_figure = Figure(figsize=(4.4, 3.0), layout="constrained")
        self.data_canvas = FigureCanvasQTAgg(self.data_figure)
        self.joint_figure = Figure(figsize=(7.0, 1.5), layout="constrained")
        self.joint_canvas = FigureCanvasQTAgg(self.joint_figure)
        self.joint_note = QLabel()
        self.joint_note.setObjectName("jointNote")
        self.joint_note.setWordWrap(True)
        self.modification_figure = Figure(figsize=(7.0, 1.5), layout="constrained")
        self.modification_canvas = FigureCanvasQTAgg(self.modification_figure)
        self.modification_note = QLabel()
        self.modification_note.setObjectName("modificationNote")
        self.modification_note.setWordWrap(True)
        for c in (
            self.estimate_canvas,
            self.data_canvas,
            self.joint_canvas,
            self.modification_canvas,
        ):
            # the tab bar takes 30 px of the plots' height; the dialog must still fit 768 px
            c.setMinimumSize(300, 150)

        checklist_box = QGroupBox("What the diagram says")
        QVBoxLayout(checklist_box).addWidget(self.checks)
        numbers = QWidget()
        nl = QVBoxLayout(numbers)
        nl.setContentsMargins(0, 0, 0, 0)
        nl.addWidget(QLabel("Comparison models (same analytic sample)"))
        nl.addWidget(self.models)
        nl.addWidget(self.figures, 1)
        nl.addWidget(self.messages)
        pair = QSplitter(Qt.Orientation.Horizontal)
        pair.addWidget(self.estimate_canvas)
        pair.addWidget(self.data_canvas)
        joint = _beside(self.joint_canvas, self.joint_note)
        self.plots = plots = QTabWidget()
        plots.setDocumentMode(True)
        plots.addTab(pair, "Estimates and data")
        self._joint_tab = plots.addTab(joint, "What collinearity does")
        self._modification_tab = plots.addTab(
            _beside(self.modification_canvas, self.modification_note), "Effect modification"
        )

        top = QHBoxLayout()
        left = QVBoxLayout()
        left.addWidget(self.keep_box)
        left.addWidget(checklist_box)
        left.addStretch(1)
        # the numbers need the room of five columns; the checklist wraps
        top.addLayout(left, 2)
        top.addWidget(numbers, 3)
        # Everything but the buttons scrolls: on a screen shorter than the dialog
        # (1366 × 768) the user scrolls instead of losing the bottom of it.
        body = QWidget()
        layout = QVBoxLayout(body)
        head = QHBoxLayout()
        head.addWidget(self.heading, 1)
        head.addWidget(self.form_box)
        layout.addLayout(head)
        # the verdict's reason is the longest text: it gets the full width
        layout.addWidget(self.verdict)
        layout.addLayout(top, 3)
        layout.addWidget(plots, 2)
        layout.addWidget(self._note_box())
        layout.addWidget(self.caution)
        scroll = QScrollArea()
        scroll.setWidgetResizable(True)
        scroll.setFrameShape(QFrame.Shape.NoFrame)
        scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        scroll.setWidget(body)
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 8)
        outer.addWidget(scroll, 1)
        buttons = QHBoxLayout()
        buttons.setContentsMargins(9, 0, 9, 0)
        buttons.addWidget(self.buttons)
        outer.addLayout(buttons)
        self._fit_screen()

    def _fit_screen(self) -> None:
        """The dialog's size, within the screen it opens on (its body scrolls)."""
        screen = self.screen()
        if screen is None:
            return
        room = screen.availableGeometry()
        self.resize(min(1000, room.width() - 40), min(820, room.height() - 60))

    def refresh(
        self, project: Project, result: StudyResult | None, profiles: Profiles, frame: Any
    ) -> None:
        s = node_diagnostics(project, result, self.node_id, profiles)
        self.state = s
        self.setWindowTitle(s.title)
        self.heading.setText(covariate_heading(s))
        self.verdict.setText(f"<b>Role:</b> {s.role}<br><b>Verdict:</b> {s.verdict}<br>{s.reason}")
        self.checks.setText(
            "<ul style='margin-left:-20px'>"
            + "".join(f"<li>{c}</li>" for c in s.checklist)
            + "</ul>"
        )
        _fill(
            self.models,
            [(m.model, m.estimate, m.ci, m.change, m.se_inflation) for m in s.models],
            most=5,
        )
        _fill(self.figures, list(s.figures), fit=False)
        sample = result.sample if result is not None else None
        self.messages.setText(estimates_caption(s, sample))
        self.set_note(s.note)
        self._show_keep(keep_choice(project, result, self.node_id))
        self.form_box.setVisible(s.knots is not None)
        if s.knots is not None:
            self.form.setCurrentIndex(max(self.form.findData(s.knots), 0))
        self._plot_estimates(s, result.family if result is not None else project.analysis.family)
        draw_data(self.data_figure, sample_picture(s, project, profiles, frame, sample))
        self.data_canvas.draw_idle()
        self._plot_joint(s)
        self._plot_modification(s)

    def _plot_modification(self, s: NodeDiagnostics) -> None:
        view = s.modification
        draw_modification(self.modification_figure, view)
        self.modification_note.setText(view.summary if view is not None else "")
        self.plots.setTabEnabled(self._modification_tab, view is not None)
        self.modification_canvas.draw_idle()

    def _plot_joint(self, s: NodeDiagnostics) -> None:
        view = s.pictures[0] if s.pictures else None
        draw_picture(self.joint_figure, view)
        self.joint_note.setText(view.sentence if view is not None else "")
        self.plots.setTabEnabled(self._joint_tab, view is not None)
        self.plots.setTabToolTip(
            self._joint_tab,
            "The joint confidence region of the group's coefficients and the interval of their sum"
            if view is not None
            else "Shown for a member of a collinear group",
        )
        self.joint_canvas.draw_idle()

    def _show_keep(self, choice: KeepChoice | None) -> None:
        self.keep = choice
        self.keep_box.setVisible(choice is not None)
        if choice is None:
            return
        combo = self.keep_member
        combo.blockSignals(True)
        combo.clear()
        for member in choice.group:
            combo.addItem(choice.labels[member], member)
        combo.setCurrentIndex(max(combo.findData(choice.kept), 0))
        combo.blockSignals(False)
        self.keep_note.setText(
            "Your choice, saved with the project."
            if choice.saved
            else "Suggested by the analysis; choose another to keep it instead."
        )

    def choose_kept(self, member: str) -> None:
        """Keep ``member`` of the group, as choosing it in the list does."""
        index = self.keep_member.findData(member)
        if index < 0:
            raise KeyError(member)
        self.keep_member.setCurrentIndex(index)
        self._keep_activated(index)

    def save_plots(self, target: Path) -> list[Path]:
        """Write each shown plot beside ``target``: ``<stem>-<plot><suffix>`` (PNG by default)."""
        plots = [("estimates", self.estimate_figure, True), ("data", self.data_figure, True)]
        plots.append(("collinearity", self.joint_figure, self.plots.isTabEnabled(self._joint_tab)))
        plots.append(
            (
                "modification",
                self.modification_figure,
                self.plots.isTabEnabled(self._modification_tab),
            )
        )
        written = []
        for name, figure, shown in plots:
            if shown:
                path = plot_path(target, name)
                figure.savefig(path, dpi=150)
                written.append(path)
        return written

    def choose_form(self, knots: int) -> None:
        """Enter the covariate linearly (0) or as a spline, as choosing it in the list does."""
        index = self.form.findData(knots)
        if index < 0:
            raise KeyError(knots)
        self.form.setCurrentIndex(index)
        self._form_activated(index)

    def _form_activated(self, index: int) -> None:
        column = self.state.column if self.state is not None else None
        if column and index >= 0:
            self.form_chosen.emit(column, int(self.form.itemData(index)))

    def _keep_activated(self, index: int) -> None:
        if self.keep is not None and index >= 0:
            self.keep_chosen.emit(self.keep.key, self.keep_member.itemData(index))

    def _plot_estimates(self, s: NodeDiagnostics, family: str) -> None:
        draw_estimates(self.estimate_figure, estimates_picture(s, family))
        self.estimate_canvas.draw_idle()


class EndpointDialog(NodeDialog):
    """The exposure's or outcome's distribution, family and missing data."""

    family_changed = Signal(str)

    def __init__(self, node_id: str, parent: QWidget | None = None) -> None:
        super().__init__(node_id, parent)
        self.resize(660, 640)
        self.state: EndpointDiagnostics | None = None
        self.heading = QLabel()
        self.heading.setObjectName("dialogHeading")
        self.family = QComboBox()
        for key, label in FAMILY_LABELS.items():
            self.family.addItem(label, key)
        self.family.activated.connect(lambda i: self.family_changed.emit(self.family.itemData(i)))
        self.family.setToolTip(FAMILY_HINT)
        self.family_hint = QLabel(FAMILY_HINT)
        self.family_hint.setObjectName("familyHint")
        self.family_hint.setWordWrap(True)
        self.family_hint.setStyleSheet("color: palette(placeholder-text);")
        self.missing = QLabel()
        self.lines = QLabel()
        self.lines.setWordWrap(True)
        self.figure = Figure(figsize=(5, 3), layout="constrained")
        self.canvas = FigureCanvasQTAgg(self.figure)
        self.canvas.setMinimumHeight(240)
        form = QFormLayout()
        form.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
        form.addRow("Regression for every fit", self.family)
        form.addRow(self.family_hint)
        form.addRow("Missing in the file", self.missing)
        layout = QVBoxLayout(self)
        layout.addWidget(self.heading)
        layout.addLayout(form)
        layout.addWidget(self.lines)
        layout.addWidget(self.canvas, 1)
        layout.addWidget(self._note_box())
        layout.addWidget(self.caution)
        layout.addWidget(self.buttons)

    def refresh(
        self, project: Project, result: StudyResult | None, profiles: Profiles, frame: Any
    ) -> None:
        s = endpoint_diagnostics(project, result, self.node_id, profiles)
        self.state = s
        self.setWindowTitle(s.title)
        self.heading.setText(endpoint_heading(s))
        self.family.setCurrentIndex(max(self.family.findData(s.family), 0))
        self.missing.setText(s.missing)
        self.lines.setText("\n".join(s.lines))
        self.set_note(s.note)
        sample = result.sample if result is not None else None
        draw_distribution(self.figure, distribution_picture(s, project, profiles, frame, sample))
        self.canvas.draw_idle()
