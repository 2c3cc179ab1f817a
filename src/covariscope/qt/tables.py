"""Filling a QTableWidget quickly.

A header in ResizeToContents mode measures every row again after each
``setItem``, which makes a refill quadratic (a 20-row panel cost a fifth of a
second per edit).  :func:`filling` holds the sections still while the cells
are set and sizes them once at the end.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from PySide6.QtWidgets import QHeaderView, QTableWidget

__all__ = ["filling"]


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
