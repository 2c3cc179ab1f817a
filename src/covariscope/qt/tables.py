"""Filling a QTableWidget quickly, and copying its selected cells.

A header in ResizeToContents mode measures every row again after each
``setItem``, which makes a refill quadratic (a 20-row panel cost a fifth of a
second per edit).  :func:`filling` holds the sections still while the cells
are set and sizes them once at the end.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QHeaderView, QTableWidget

#: Qt.CheckStateRole: a cell that carries a check state
_CHECK = Qt.ItemDataRole.CheckStateRole

__all__ = ["filling", "selected_text"]


@contextmanager
def filling(table: QTableWidget) -> Iterator[QTableWidget]:
    """Set many cells of ``table`` inside this block; the columns keep their
    resize modes and are fitted to their contents once, afterwards."""
    header = table.horizontalHeader()
    modes = [header.sectionResizeMode(c) for c in range(table.columnCount())]
    sorting = table.isSortingEnabled()
    table.setSortingEnabled(False)
    table.setUpdatesEnabled(False)
    for c in range(table.columnCount()):
        if modes[c] == QHeaderView.ResizeMode.ResizeToContents:
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.Interactive)
    try:
        yield table
    finally:
        for c, mode in enumerate(modes):
            header.setSectionResizeMode(c, mode)
        table.setSortingEnabled(sorting)
        table.setUpdatesEnabled(True)


def _cell_text(table: QTableWidget, row: int, column: int) -> str:
    item = table.item(row, column)
    if item is None:
        return ""
    if item.data(_CHECK) is not None and not item.text():
        return "yes" if item.checkState() == Qt.CheckState.Checked else "no"
    # tabs and line breaks inside a cell would break the rows apart on paste
    return " ".join(item.text().split())


def selected_text(table: QTableWidget) -> str:
    """The selected cells as tab-separated text with a header row, the way a
    spreadsheet pastes them (whole rows when rows are selected); empty when
    nothing is selected.  A checkbox cell reads ``yes`` or ``no``."""
    indexes = table.selectionModel().selectedIndexes() if table.selectionModel() else []
    rows = sorted({i.row() for i in indexes})
    columns = sorted({i.column() for i in indexes})
    if not rows:
        return ""
    header = [
        (item.text() if (item := table.horizontalHeaderItem(c)) is not None else str(c + 1))
        for c in columns
    ]
    lines = ["\t".join(header)]
    lines += ["\t".join(_cell_text(table, r, c) for c in columns) for r in rows]
    return "\n".join(lines) + "\n"
