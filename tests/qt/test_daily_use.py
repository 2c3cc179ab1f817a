"""The window as a daily tool: Redo keys, a detail line that follows edits,
saved files that keep their mode, an empty CSV cell for a missing number,
dialogs that start in the project's folder."""

from __future__ import annotations

import csv
import io
import os
import stat

from PySide6.QtCore import QPointF, Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication


def _edit_count(w) -> int:
    return w.undo_stack.index()


def test_redo_by_both_shortcuts(qtbot, window):
    w = window
    w.activateWindow()
    qtbot.waitUntil(lambda: QApplication.activeWindow() is w)
    w.view.setFocus()
    w.scene.add_node_at(QPointF(0, 0))
    w.scene.add_node_at(QPointF(100, 0))
    assert _edit_count(w) == 2
    for keys in (
        (Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.ShiftModifier),
        (Qt.Key.Key_Y, Qt.KeyboardModifier.ControlModifier),
    ):
        QTest.keyClick(w.view.viewport(), Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)
        assert _edit_count(w) == 1
        QTest.keyClick(w.view.viewport(), *keys)
        assert _edit_count(w) == 2, keys
    redo = [k.toString() for k in w.actions_.redo.shortcuts()]
    assert len(redo) == len(set(redo))


def test_redo_keys_are_each_bound_once_whatever_the_platform_binds():
    from PySide6.QtGui import QKeySequence

    from covariscope.qt.actions import redo_keys

    # GNOME and KDE bind Redo to Ctrl+Shift+Z: bound twice, Qt calls the key
    # ambiguous and neither binding fires
    for platform in ([QKeySequence("Ctrl+Shift+Z")], [QKeySequence("Ctrl+Y")], []):
        keys = [k.toString() for k in redo_keys(platform)]
        assert keys == ["Ctrl+Shift+Z", "Ctrl+Y"]


def test_detail_line_follows_an_edit_on_the_selected_row(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.review.select_node("age")
    assert "Age" in w.review.detail.text()
    w.scene.rename_node("age", "Age at entry")
    wait_for_analysis(qtbot, w)
    assert w.review.selected_node() == "age"
    assert w.review.detail.text().startswith("Age at entry")


def test_saved_project_keeps_its_mode(qtbot, window, demo):
    w = window
    path = demo / "demo_project.json"
    os.chmod(path, 0o644)
    assert w.io.open(str(path))
    w.scene.rename_node("age", "Age at entry")
    assert w.io.save()
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o644
    os.chmod(path, 0o664)
    w.scene.rename_node("age", "Age")
    assert w.io.save()
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o664


def test_new_project_file_follows_the_umask(qtbot, window, demo):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    target = demo / "copy.json"
    w.prompts.answers["save_path"] = str(target)
    old = os.umask(0o022)
    try:
        assert w.io.save_as()
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o644


def test_review_csv_writes_empty_cells_for_missing(
    qtbot, window, demo, tmp_path, wait_for_analysis
):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    target = tmp_path / "review.csv"
    assert w.export_review_csv(str(target))
    text = target.read_text(encoding="utf-8")
    rows = {r["node"]: r for r in csv.DictReader(io.StringIO(text))}
    assert rows["early_life"]["VIF"] == ""  # unmeasured: no number
    float(rows["age"]["VIF"])
    for row in rows.values():
        assert "—" not in [row[k] for k in ("Added: change %", "Dropped: change %", "VIF")]


def test_export_of_an_unsaved_project_starts_in_documents(qtbot, window):
    from PySide6.QtCore import QStandardPaths

    w = window
    starts = []
    w.prompts.save_path = lambda title, filter_, start="": starts.append(start)
    w.scene.add_node_at(QPointF(0, 0))
    w.export_diagram("png")
    docs = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.DocumentsLocation)
    assert os.path.dirname(starts[0]) == docs


def test_dialogs_start_in_the_project_folder(qtbot, window, demo, fake_prompts):
    w = window
    starts = []
    w.prompts.save_path = lambda title, filter_, start="": starts.append(start)
    w.prompts.open_path = lambda title, filter_, start="": starts.append(start)
    assert w.io.open(str(demo / "demo_project.json"))
    w.export_diagram("png")
    w.data.choose_and_load()
    w.export_review_csv()
    assert len(starts) == 3
    for start in starts:
        assert str(start).startswith(str(demo)), start
