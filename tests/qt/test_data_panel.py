"""The data panel's drag: the payload Qt's drag machinery gets from the
column table carries the column under our MIME type."""

from __future__ import annotations

from PySide6.QtWidgets import QAbstractItemView

from covariscope.model.diagram import Node
from covariscope.model.project import Project
from covariscope.qt.canvas.scene import column_from_mime
from covariscope.views.data_panel import COLUMN_MIME


class _Table:
    def __init__(self, columns):
        from pathlib import Path

        import pandas as pd

        self.frame = pd.DataFrame({c: [1.0, 2.0] for c in columns})
        self.path = Path("cohort.csv")
        self.rows = 2


def test_dragging_a_row_carries_the_column(qtbot):
    from covariscope.qt.data_panel import DataPanel

    panel = DataPanel()
    qtbot.addWidget(panel)
    project = Project()
    project.diagram.add_node(Node("age", column="age"))
    panel.refresh(project, _Table(["age", "sleep hours"]), {})
    table = panel.table
    assert table.dragEnabled()
    assert table.dragDropMode() == QAbstractItemView.DragDropMode.DragOnly
    assert COLUMN_MIME in table.model().mimeTypes()
    row = panel.row_of("sleep hours")
    # QAbstractItemView.startDrag asks the model for the selected indexes' data
    indexes = [table.model().index(row, c) for c in range(table.columnCount())]
    mime = table.model().mimeData(indexes)
    assert mime.hasFormat(COLUMN_MIME)
    assert column_from_mime(mime) == "sleep hours"
    assert mime.text() == "sleep hours"
    # the whole row drags from any cell; the panel is wide enough for its columns
    mime = table.model().mimeData([table.model().index(row, 3)])
    assert column_from_mime(mime) == "sleep hours"
    assert panel.needed_width() > 0
    assert table.minimumWidth() >= min(panel.needed_width(), 520)
