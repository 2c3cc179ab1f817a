"""The data panel: columns of the loaded data set, drag a column onto the
diagram to make a bound node, bind/unbind/retype from a context menu."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from PySide6.QtCore import QMimeData, QPoint, Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QMenu,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from covariscope.data.profile import ColumnProfile
from covariscope.data.sources.batched import BatchSource
from covariscope.model.project import Project
from covariscope.qt.tables import filling
from covariscope.views.data_panel import (
    COLUMN_MIME,
    COLUMN_TYPES,
    DATA_COLUMN_TIPS,
    DATA_COLUMNS,
    ColumnRow,
    column_rows,
    file_summary,
    unbound_summary,
)

__all__ = ["ColumnTable", "DataPanel", "column_mime"]

#: widest a column may start (pixels): longer names and node ids are elided
_CAPPED = {0: 120, 3: 110}


def column_mime(name: str) -> QMimeData:
    """The drag payload for one column: its UTF-8 name under our MIME type."""
    mime = QMimeData()
    mime.setData(COLUMN_MIME, name.encode("utf-8"))
    mime.setText(name)
    return mime


class ColumnTable(QTableWidget):
    """The column list; dragging a row carries the column's name."""

    def mimeTypes(self) -> list[str]:
        return [COLUMN_MIME, "text/plain"]

    def mimeData(self, items: Any) -> QMimeData:
        rows = sorted({i.row() for i in items})
        first = self.item(rows[0], 0) if rows else None
        name = first.text() if first is not None else ""
        return column_mime(name)


class DataPanel(QWidget):
    """Shows :func:`covariscope.views.data_panel.column_rows`; asks the
    window (through signals) to load data or change bindings and types."""

    load_requested = Signal()
    bind_requested = Signal(str, str)  # node id, column
    unbind_requested = Signal(str)  # column
    type_requested = Signal(str, str)  # column, type ("" = as inferred)
    reference_requested = Signal(str, object)  # column, level

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("dataPanel")
        self.file_label = QLabel("No data loaded.")
        self.file_label.setObjectName("dataFileLabel")
        self.file_label.setWordWrap(True)
        self.load_button = QPushButton("Load data…")
        self.load_button.clicked.connect(self.load_requested)
        top = QHBoxLayout()
        top.addWidget(self.file_label, 1)
        top.addWidget(self.load_button)

        self.table = ColumnTable(0, len(DATA_COLUMNS))
        self.table.setHorizontalHeaderLabels(list(DATA_COLUMNS))
        for c, tip in enumerate(DATA_COLUMN_TIPS):
            if (item := self.table.horizontalHeaderItem(c)) is not None:
                item.setToolTip(tip)
        self.table.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        self.table.setWordWrap(False)
        self.table.verticalHeader().hide()
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setDragEnabled(True)
        self.table.setDragDropMode(QAbstractItemView.DragDropMode.DragOnly)
        self.table.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        self.table.customContextMenuRequested.connect(self._context_menu)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        # long names are elided (full name in the tooltip) so the Ref. column
        # stays in view in a narrow dock
        for c in (0, 3):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.Interactive)
        header.setStretchLastSection(True)
        self.table.verticalHeader().setDefaultSectionSize(24)
        self.table.setMinimumWidth(340)
        self.table.setToolTip("Drag a column onto the diagram to add a node bound to it.")

        self.unbound_label = QLabel()
        self.unbound_label.setObjectName("unboundLabel")
        self.unbound_label.setWordWrap(True)

        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addLayout(top)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.unbound_label)
        self._rows: list[ColumnRow] = []
        self._node_ids: list[str] = []
        #: what the panel shows now (refresh does nothing when it would not change)
        self._shown: tuple[Any, ...] | None = None

    @property
    def rows(self) -> list[ColumnRow]:
        return list(self._rows)

    def refresh(
        self, project: Project, table: Any, profiles: Mapping[str, ColumnProfile] | None
    ) -> None:
        """``table``: the loaded table, a source that reads the file where it lies, or None."""
        where = table.engine if isinstance(table, BatchSource) else None
        if table is None:
            columns = []
        elif where is not None:
            columns = list(table.columns)
        else:
            columns = list(table.frame.columns)
        rows = column_rows(project, columns, profiles)
        node_ids = [n.id for n in project.diagram.nodes]
        unbound = unbound_summary(project, table is not None)
        held = None if table is None else (id(table), str(table.path), table.rows, where)
        shown = (rows, node_ids, held, repr(project.data), unbound)
        if shown == self._shown:
            return  # an edit this panel does not show (a tick, an arrow): nothing to redo
        self._shown = shown
        self._rows, self._node_ids = rows, node_ids
        if table is not None:
            self.file_label.setText(file_summary(table.path.name, table.rows, len(columns), where))
            self.file_label.setToolTip(str(table.path))
        elif project.data is not None:
            self.file_label.setText(f"{project.data.path} (not loaded)")
        else:
            self.file_label.setText("No data loaded.")
        with filling(self.table):
            self.table.setRowCount(len(self._rows))
            for r, row in enumerate(self._rows):
                for c, text in enumerate(row.cells()):
                    item = QTableWidgetItem(text)
                    if c == 0:
                        item.setFlags(item.flags() | Qt.ItemFlag.ItemIsDragEnabled)
                        item.setToolTip(f"{text} — drag onto the diagram to add a node bound to it")
                    if c == 1 and row.type_overridden:
                        item.setToolTip(f"Set by you to {row.type}; Type ▸ As inferred undoes it")
                    if c == 3 and text:
                        item.setToolTip(f"Bound to the node {text}")
                    if c == 3 and not text:
                        item.setText("—")
                        item.setToolTip("Not bound to any node")
                    self.table.setItem(r, c, item)
        self.unbound_label.setText(unbound)
        self._cap_columns()
        self._fit_width()

    def _cap_columns(self) -> None:
        header = self.table.horizontalHeader()
        for c, most in _CAPPED.items():
            wanted = max(header.sectionSizeHint(c), self.table.sizeHintForColumn(c))
            header.resizeSection(c, min(wanted, most))

    def needed_width(self) -> int:
        """The width that shows every column without a horizontal scroll bar."""
        header = self.table.horizontalHeader()
        columns = sum(
            min(
                max(header.sectionSizeHint(c), self.table.sizeHintForColumn(c)),
                _CAPPED.get(c, 10_000),
            )
            for c in range(self.table.columnCount())
        )
        scroll = self.table.verticalScrollBar().sizeHint().width()
        return columns + scroll + 2 * self.table.frameWidth() + 12

    def _fit_width(self) -> None:
        # grow (within reason) so the last column is not cut off; the user
        # can still narrow the dock, which then scrolls
        self.table.setMinimumWidth(min(max(340, self.needed_width()), 520))

    def row_of(self, column: str) -> int:
        for r, row in enumerate(self._rows):
            if row.name == column:
                return r
        return -1

    def _context_menu(self, pos: QPoint) -> None:
        index = self.table.indexAt(pos)
        if not index.isValid():
            return
        menu = self.build_menu(self._rows[index.row()])
        menu.exec(self.table.viewport().mapToGlobal(pos))

    def build_menu(self, row: ColumnRow) -> QMenu:
        """The context menu of one column (built apart so tests can read it)."""
        menu = QMenu(self)
        bind = menu.addMenu("Bind to node")
        for node_id in self._node_ids:
            act = bind.addAction(node_id)
            act.triggered.connect(lambda _=False, n=node_id: self.bind_requested.emit(n, row.name))
        bind.setEnabled(bool(self._node_ids))
        unbind = menu.addAction("Unbind")
        unbind.setEnabled(bool(row.bound_to))
        unbind.triggered.connect(lambda: self.unbind_requested.emit(row.name))
        types = menu.addMenu("Type")
        inferred = types.addAction("As inferred")
        inferred.triggered.connect(lambda: self.type_requested.emit(row.name, ""))
        for kind in COLUMN_TYPES:
            act = types.addAction(kind)
            act.setCheckable(True)
            act.setChecked(row.type == kind)
            act.triggered.connect(lambda _=False, k=kind: self.type_requested.emit(row.name, k))
        ref = menu.addMenu("Reference level")
        texts = row.level_texts or tuple(str(v) for v in row.levels)
        for level, text in list(zip(row.levels, texts, strict=True))[:50]:
            act = ref.addAction(text)
            act.setCheckable(True)
            act.setChecked(str(level) == row.reference)
            act.triggered.connect(
                lambda _=False, v=level: self.reference_requested.emit(row.name, v)
            )
        ref.setEnabled(bool(row.levels))
        return menu
