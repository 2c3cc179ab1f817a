"""The covariate review table and the list of open backdoor paths."""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QPoint, Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QMenu,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from covariscope.model.project import Project
from covariscope.qt.keep_menu import add_keep_actions
from covariscope.qt.tables import filling
from covariscope.study.result import StudyResult
from covariscope.views.format import ratio_family
from covariscope.views.keep_choice import KeepChoice, keep_choice, kept_words
from covariscope.views.review import (
    MODIFICATION_CAUTION,
    REVIEW_COLUMNS,
    ReviewRow,
    open_paths,
    paths_summary,
    review_rows,
    rows_to_csv,
)
from covariscope.vocabulary import ReviewColumn, column_tooltip

__all__ = ["PathsPanel", "ReviewTable"]

_CHECK = len(REVIEW_COLUMNS) - 1
_VERDICT = _CHECK - 1


class ReviewTable(QWidget):
    """One row per covariate; the last column's checkbox is the proposed set."""

    proposed_toggled = Signal(str, bool)
    node_activated = Signal(str)
    node_selected = Signal(str)
    #: keep a member of a collinear group: (group key, member id, or None to
    #: go back to the suggestion)
    keep_chosen = Signal(str, object)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("reviewTable")
        self.table = QTableWidget(0, len(REVIEW_COLUMNS))
        self.table.setHorizontalHeaderLabels(list(REVIEW_COLUMNS))
        self.table.verticalHeader().hide()
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(False)
        header = self.table.horizontalHeader()
        for i in range(len(REVIEW_COLUMNS)):
            header.setSectionResizeMode(i, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(_VERDICT, QHeaderView.ResizeMode.Stretch)
        self.set_header_tips(ratio=False)
        self.detail = QLabel("Select a covariate to read its verdict in full.")
        self.detail.setObjectName("reviewDetail")
        self.detail.setWordWrap(True)
        self.detail.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.detail)
        self._rows: list[ReviewRow] = []
        self._keep: dict[str, KeepChoice] = {}
        #: what the table shows now (a refresh that would change nothing does nothing)
        self._shown: tuple[Any, ...] | None = None
        self._filling = False
        self.table.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        self.table.customContextMenuRequested.connect(self._context_menu)
        self.table.itemChanged.connect(self._item_changed)
        self.table.itemSelectionChanged.connect(self._selection_changed)
        self.table.cellDoubleClicked.connect(
            lambda r, _c: (
                self.node_activated.emit(self._rows[r].node) if r < len(self._rows) else None
            )
        )

    def set_header_tips(self, *, ratio: bool) -> None:
        """Every header's definition and formula, from the vocabulary (the
        change columns read the ratio scale for ratio measures)."""
        for i, column in enumerate(ReviewColumn):
            if (item := self.table.horizontalHeaderItem(i)) is not None:
                item.setToolTip(column_tooltip(column, ratio=ratio))

    @property
    def rows(self) -> list[ReviewRow]:
        return list(self._rows)

    def refresh(self, project: Project, result: StudyResult | None) -> None:
        selected = self.selected_node()
        self._rows = review_rows(project, result)
        family = (result.family if result is not None else "") or project.analysis.family
        self.set_header_tips(ratio=ratio_family(family))
        self._keep = {
            row.node: choice
            for row in self._rows
            if (choice := keep_choice(project, result, row.node)) is not None
        }
        shown = (self._rows, {n: kept_words(k) for n, k in self._keep.items()})
        if shown == self._shown:
            return  # nothing this table shows changed (a move, a note)
        self._shown = shown
        self._filling = True
        try:
            with filling(self.table):
                self.table.setRowCount(len(self._rows))
                for r, row in enumerate(self._rows):
                    for c, text in enumerate(row.cells()):
                        if c == _VERDICT and row.node in self._keep:
                            kept = kept_words(self._keep[row.node])
                            text = f"{text}: {kept}" if kept else text
                        self._cell(r, c, row, text)
        finally:
            self._filling = False
        if selected:
            self.select_node(selected)
        # the same row may stay selected, which emits no selection change, so
        # the full-reason line is refreshed here in any case
        self._show_detail()

    def _cell(self, r: int, c: int, row: ReviewRow, text: str) -> None:
        """Show ``text`` in cell (r, c), changing the item there in place."""
        item = self.table.item(r, c)
        if item is None:
            item = QTableWidgetItem()
            if 2 <= c <= 5:
                item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            if c == _VERDICT - 1:
                item.setToolTip(MODIFICATION_CAUTION)
            self.table.setItem(r, c, item)
        if item.data(Qt.ItemDataRole.UserRole) != row.node:
            item.setData(Qt.ItemDataRole.UserRole, row.node)
        shown = "" if c == _CHECK else text
        if item.text() != shown:
            item.setText(shown)
        tip = {_VERDICT: row.reason or row.verdict, 0: row.detail}.get(c)
        if c == _CHECK:
            tip = (
                "Tick to put it in the proposed adjustment set"
                if row.measured
                else "Unmeasured: cannot be adjusted for"
            )
            flags = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
            if row.measured:
                flags |= Qt.ItemFlag.ItemIsUserCheckable
            if item.flags() != flags:
                item.setFlags(flags)
            state = Qt.CheckState.Checked if row.proposed else Qt.CheckState.Unchecked
            if item.data(Qt.ItemDataRole.CheckStateRole) is None or item.checkState() != state:
                item.setCheckState(state)
        if tip is not None and item.toolTip() != tip:
            item.setToolTip(tip)

    def selected_node(self) -> str | None:
        rows = {i.row() for i in self.table.selectedItems()}
        return self._rows[min(rows)].node if rows and min(rows) < len(self._rows) else None

    def select_node(self, node_id: str) -> None:
        for r, row in enumerate(self._rows):
            if row.node == node_id:
                self.table.selectRow(r)
                return

    def row_of(self, node_id: str) -> int:
        return next((r for r, row in enumerate(self._rows) if row.node == node_id), -1)

    def set_checked(self, node_id: str, checked: bool) -> None:
        """Tick or untick as a user would (emits :attr:`proposed_toggled`)."""
        r = self.row_of(node_id)
        if r < 0:
            raise KeyError(node_id)
        item = self.table.item(r, _CHECK)
        if item is None:
            raise KeyError(node_id)
        item.setCheckState(Qt.CheckState.Checked if checked else Qt.CheckState.Unchecked)

    def keep_choice_of(self, node_id: str) -> KeepChoice | None:
        """The collinear group the row's verdict asks to keep one of."""
        return self._keep.get(node_id)

    def menu_for(self, node_id: str) -> QMenu:
        """The row's context menu (built, not shown: tests trigger its actions)."""
        menu = QMenu(self)
        add_keep_actions(menu, self._keep.get(node_id), node_id, self.keep_chosen.emit)
        details = menu.addAction("Diagnostics…")
        details.triggered.connect(lambda: self.node_activated.emit(node_id))
        return menu

    def _context_menu(self, pos: QPoint) -> None:
        r = self.table.rowAt(pos.y())
        if not 0 <= r < len(self._rows):
            return
        self.table.selectRow(r)
        menu = self.menu_for(self._rows[r].node)
        menu.exec(self.table.viewport().mapToGlobal(pos))
        menu.deleteLater()

    def verdicts(self) -> dict[str, str]:
        return {row.node: row.verdict for row in self._rows}

    def to_csv(self) -> str:
        return rows_to_csv(self._rows)

    def _item_changed(self, item: QTableWidgetItem) -> None:
        if self._filling or item.column() != _CHECK or item.row() >= len(self._rows):
            return
        row = self._rows[item.row()]
        checked = item.checkState() == Qt.CheckState.Checked
        if checked != row.proposed:
            self._shown = None  # the box shows the click, the project may refuse it: redo
            self.proposed_toggled.emit(row.node, checked)

    def _show_detail(self) -> str | None:
        node = self.selected_node()
        if node is None:
            self.detail.setText("Select a covariate to read its verdict in full.")
            return None
        self.detail.setText(self._rows[self.row_of(node)].detail)
        return node

    def _selection_changed(self) -> None:
        node = self._show_detail()
        if node is not None:
            self.node_selected.emit(node)


class PathsPanel(QWidget):
    """Open backdoor paths under the proposed set; choosing one highlights it."""

    path_chosen = Signal(object)  # tuple of node ids, or None

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("pathsPanel")
        self.summary = QLabel("No analysis yet.")
        self.summary.setWordWrap(True)
        self.list = QListWidget()
        self.list.setWordWrap(True)
        self.list.setTextElideMode(Qt.TextElideMode.ElideNone)
        self.list.setMinimumHeight(36)
        self.list.currentItemChanged.connect(self._chosen)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.summary)
        layout.addWidget(self.list, 1)
        self._paths: list[tuple[str, ...]] = []
        #: the result and labels shown now
        self._shown: tuple[Any, dict[str, str]] | None = None

    @property
    def paths(self) -> list[tuple[str, ...]]:
        return list(self._paths)

    def refresh(self, result: StudyResult | None, labels: dict[str, str] | None = None) -> None:
        """Show the open paths, each variable named by ``labels`` (id → label).

        The same result with the same labels changes nothing, so a chosen
        path stays highlighted while the diagram is only rearranged."""
        labels = labels or {}
        if self._shown is not None and self._shown[0] is result and self._shown[1] == labels:
            return
        self._shown = (result, dict(labels))
        self.list.blockSignals(True)
        self.list.clear()
        self._paths = open_paths(result)
        for path in self._paths:
            parts = [" | ".join(labels.get(m, m) for m in n.split("|")) for n in path]
            item = QListWidgetItem(" — ".join(parts))
            item.setToolTip(" — ".join(n.replace("|", " | ") for n in path))
            item.setData(Qt.ItemDataRole.UserRole, path)
            self.list.addItem(item)
        self.list.blockSignals(False)
        self.summary.setText(paths_summary(result, labels))
        self._fit_summary()
        self.path_chosen.emit(None)

    def _fit_summary(self) -> None:
        """Give the summary the height its wrapped words need, so a small dock
        grows (or scrolls the list) instead of cutting the sentence."""
        width = max(1, self.summary.width())
        self.summary.setMinimumHeight(self.summary.heightForWidth(width))

    def resizeEvent(self, event: Any) -> None:
        super().resizeEvent(event)
        self._fit_summary()

    def choose(self, index: int) -> None:
        self.list.setCurrentRow(index)

    def _chosen(self, current: QListWidgetItem | None, _previous: Any = None) -> None:
        self.path_chosen.emit(tuple(current.data(Qt.ItemDataRole.UserRole)) if current else None)
