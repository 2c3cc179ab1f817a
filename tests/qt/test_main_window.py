"""The main window: the demo built from an empty window with the GUI's own
actions and signals gives the verdicts of ``covariscope check``; a
screenshot of the window with the demo loaded."""

from __future__ import annotations

import shutil

import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import QDragEnterEvent, QDropEvent
from PySide6.QtWidgets import QApplication


def drop_column(w, column: str, scene_pos: QPointF) -> None:
    """Drop a column dragged from the data panel onto the canvas."""
    row = w.data_panel.row_of(column)
    assert row >= 0, f"{column} not in the data panel"
    mime = w.data_panel.table.mimeData([w.data_panel.table.item(row, 0)])
    viewport = w.view.viewport()
    point = w.view.mapFromScene(scene_pos)
    actions = Qt.DropAction.CopyAction
    enter = QDragEnterEvent(
        point, actions, mime, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier
    )
    QApplication.sendEvent(viewport, enter)
    drop = QDropEvent(
        QPointF(point), actions, mime, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier
    )
    QApplication.sendEvent(viewport, drop)


def test_build_the_demo_from_an_empty_window(qtbot, window, demo, wait_for_analysis):
    from covariscope.model.project import load_project
    from covariscope.study import run_study
    from covariscope.views.check_json import study_to_json

    w = window
    expected_project = load_project(demo / "demo_project.json")
    expected = study_to_json(run_study(expected_project))
    d = expected_project.diagram
    a = expected_project.analysis

    # load the data through the data panel's own path
    w.prompts.answers["open_path"] = str(demo / "demo_cohort.csv")
    w.data_panel.load_button.click()
    qtbot.waitUntil(lambda: w.data.table is not None, timeout=60_000)

    w.view.centerOn(QPointF(400, 250))
    for node in d.nodes:
        before = set(w.project.diagram.node_ids)
        if node.column:
            drop_column(w, node.column, QPointF(node.x, node.y))
        else:
            w.scene.add_node_at(QPointF(node.x, node.y), label=node.id)
        (new,) = set(w.project.diagram.node_ids) - before
        assert new == node.id
        assert w.project.diagram.node(new).column == node.column
        if node.label != node.id:
            w.scene.rename_node(new, node.label)
        w.scene.select_ids([new])
        assert w.selected_ids == [new]
        if node.kind == "exposure":
            w.actions_.make_exposure.trigger()
        elif node.kind == "outcome":
            w.actions_.make_outcome.trigger()
        if not node.measured:
            w.actions_.toggle_measured.trigger()
        if node.note:
            dialog = w.open_diagnostics(new)
            dialog.note.setPlainText(node.note)
            dialog.save_note_button.click()
            dialog.close()
    for cause, effect in d.arrows:
        assert w.scene.connect_nodes(cause, effect)
    for x, y in d.proxies:
        assert w.scene.connect_nodes(x, y, "proxy")
    for column, kind in a.column_types.items():
        w.data_panel.type_requested.emit(column, kind)
    for column, level in a.reference_levels.items():
        w.data_panel.reference_requested.emit(column, level)
    if a.family != w.project.analysis.family:
        w.actions_.family[a.family].trigger()
    w.actions_.rerun.trigger()  # F5: the edits above were debounced into few runs
    wait_for_analysis(qtbot, w)
    for node_id in a.proposed:
        w.review.set_checked(node_id, True)
    wait_for_analysis(qtbot, w)

    assert w.project.diagram.to_dict() == d.to_dict()
    assert w.project.proposed == a.proposed
    shown = w.review.verdicts()
    assert shown == {k: v["label"] for k, v in expected["covariates"].items()}
    assert w.paths.paths == [tuple(p) for p in expected["open_paths"]]
    # the canvas and the table hold the same proposed set
    w.review.set_checked(a.proposed[0], False)
    assert a.proposed[0] not in w.project.proposed
    w.undo_stack.undo()
    assert w.project.proposed == a.proposed


def test_screenshot_with_the_demo(qtbot, window, demo, tmp_path, wait_for_analysis, shots):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.paths.choose(0) if w.paths.paths else None
    w.resize(1500, 950)
    w.view.fit_to_window()
    QApplication.processEvents()
    qtbot.waitUntil(lambda: w.strip.cells["crude"].value.text() != "—")
    shot = tmp_path / "main_window.png"
    assert w.grab().save(str(shot))
    shutil.copyfile(shot, shots / "main_window.png")
    assert "Analysis up to date" in w.state_label.text()
    sample = w.result.sample
    assert w.rows_label.text() == f"{sample.used:,} of {sample.rows:,} rows used"


def test_window_title_marks_unsaved_changes(qtbot, window, demo):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    assert not w.isWindowModified()
    assert w.windowTitle().startswith("demo_project.json")
    w.scene.select_ids(["age"])
    w.actions_.toggle_measured.trigger()
    assert w.isWindowModified()
    w.actions_.undo.trigger()
    assert not w.isWindowModified()


def test_cautions_in_help(window):
    window.actions_.cautions.trigger()
    title, text = window.prompts.said[-1]
    assert title == "Cautions"
    for words in ("cannot fully test", "guides", "does not replace"):
        assert words in text


def test_shortcuts(window):
    a = window.actions_
    expect = {
        a.new: "Ctrl+N",
        a.open: "Ctrl+O",
        a.save: "Ctrl+S",
        a.save_as: "Ctrl+Shift+S",
        a.undo: "Ctrl+Z",
        a.copy: "Ctrl+C",
        a.paste: "Ctrl+V",
        a.delete: "Del",
        a.print: "Ctrl+P",
        a.fit: "Ctrl+0",
    }
    for action, key in expect.items():
        assert action.shortcut().toString() == key, action.text()
    assert "Ctrl+Shift+Z" in [k.toString() for k in a.redo.shortcuts()]


def test_review_csv_export(qtbot, window, demo, tmp_path, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    target = tmp_path / "review.csv"
    assert w.export_review_csv(str(target))
    text = target.read_text(encoding="utf-8")
    assert text.splitlines()[0].startswith("node,Covariate,Role")
    assert len(text.splitlines()) == 1 + len(w.project.diagram.covariates)


def test_copy_paste_goes_through_the_system_clipboard(qtbot, window, demo, fake_prompts):
    from covariscope.qt.clipboard import SELECTION_MIME
    from covariscope.qt.main_window import MainWindow

    w = window
    w.io.open(str(demo / "demo_project.json"))
    w.scene.select_ids(["age", "school_yrs"])
    w.actions_.copy.trigger()
    mime = QApplication.clipboard().mimeData()
    assert mime.hasFormat(SELECTION_MIME)
    assert mime.text().splitlines() == ["Age", "Years since school"]
    other = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(other)
    try:
        other.actions_.paste.trigger()
        d = other.project.diagram
        assert sorted(n.label for n in d.nodes) == ["Age", "Years since school"]
        assert len(d.arrows) == 1  # the arrow between the two came along
        assert other.undo_stack.count() == 1
        other.actions_.undo.trigger()
        assert len(d) == 0
    finally:
        other.undo_stack.setClean()
        other.close()
    # plain text on the clipboard is not pasted as nodes
    QApplication.clipboard().setText("age")
    before = len(w.project.diagram)
    w.actions_.paste.trigger()
    assert len(w.project.diagram) == before


def test_print_goes_through_the_prompts_printer(qtbot, window, demo, tmp_path, wait_for_analysis):
    from PySide6.QtPrintSupport import QPrinter

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    assert not w.print_rationale()  # the user cancelled the print dialog
    assert ("printer", "") in w.prompts.said
    printer = QPrinter(QPrinter.PrinterMode.ScreenResolution)
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    target = tmp_path / "printed.pdf"
    printer.setOutputFileName(str(target))
    w.prompts.answers["printer"] = printer
    w.actions_.print.trigger()
    assert target.read_bytes().startswith(b"%PDF")
    assert target.stat().st_size > 5000


def test_toolbar_has_drawn_icons_and_short_words(window):
    from covariscope.qt.icons import ICON_NAMES, icon

    a = window.actions_
    for action in (a.new, a.open, a.save, a.add_node, a.mode_arrow, a.fit, a.print):
        assert not action.icon().isNull(), action.text()
        assert 0 < len(action.iconText()) <= 10
    assert "(Ctrl+P)" in a.print.toolTip()
    for name in ICON_NAMES:
        image = icon(name).pixmap(24, 24).toImage()
        inked = sum(image.pixelColor(x, y).alpha() > 0 for x in range(24) for y in range(24))
        assert 20 < inked < 24 * 24, name


def test_escape_belongs_to_the_canvas(qtbot, window):
    from PySide6.QtTest import QTest

    w = window
    w.activateWindow()
    node_id = w.scene.add_node_at(QPointF(0, 0))
    editor = w.scene.start_rename(node_id)
    w.view.setFocus()
    QTest.keyClicks(w.view.viewport(), "Sax")  # letters reach the editor, not the S/A/X modes
    assert editor.toPlainText() == "Sax"
    assert w.scene.mode.name == "select"
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_Escape)
    assert w.scene.label_editor is None
    assert w.project.diagram.node(node_id).label == "node"  # Esc dropped the rename
    w.actions_.mode_arrow.trigger()
    assert w.scene.mode.name == "arrow"
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_Escape)
    assert w.scene.mode.name == "select"
    assert w.actions_.mode_select.isChecked()  # the toolbar follows the canvas


def test_single_letter_keys_belong_to_the_canvas(qtbot, window, demo, wait_for_analysis):
    from PySide6.QtTest import QTest

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.activateWindow()
    qtbot.waitUntil(lambda: QApplication.activeWindow() is w)
    before = len(w.project.diagram)
    for widget in (w.review.table, w.data_panel.table):
        widget.setFocus()
        qtbot.waitUntil(widget.hasFocus)
        for letter in "saxn":
            QTest.keyClicks(widget, letter)
            assert w.scene.mode.name == "select", (widget.objectName(), letter)
            assert w.actions_.mode_select.isChecked()
    # Delete in a panel does not delete the canvas's selection
    w.scene.select_ids(["smoke"])
    w.review.table.setFocus()
    QTest.keyClick(w.review.table, Qt.Key.Key_Delete)
    assert len(w.project.diagram) == before
    # the note box of a diagnostics dialog takes the letters as text
    dialog = w.open_diagnostics("age")
    dialog.activateWindow()
    dialog.note.setFocus()
    qtbot.waitUntil(dialog.note.hasFocus)
    QTest.keyClicks(dialog.note, "a sax")
    assert dialog.note.toPlainText() == "a sax"
    assert w.scene.mode.name == "select"
    dialog.close()
    # on the canvas the same letters still switch the mode
    w.activateWindow()
    w.view.setFocus()
    qtbot.waitUntil(w.view.hasFocus)
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_A)
    assert w.scene.mode.name == "arrow"
    assert w.actions_.mode_arrow.isChecked()
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_X)
    assert w.scene.mode.name == "proxy"
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_S)
    assert w.scene.mode.name == "select"


def _focus(qtbot, w, widget) -> None:
    w.show()
    w.activateWindow()
    widget.setFocus()
    qtbot.waitUntil(lambda: QApplication.focusWidget() is widget)


def test_copy_follows_the_focus(qtbot, window, demo, wait_for_analysis):
    """Ctrl+C in a table copies its selected rows as tab-separated text with
    a header row; on the canvas it copies the diagram selection."""
    from PySide6.QtGui import QKeySequence

    from covariscope.qt.clipboard import SELECTION_MIME

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.scene.select_ids(["age"])
    board = QApplication.clipboard()

    review = w.review.table
    w.review.select_node("income")
    _focus(qtbot, w, review)
    qtbot.keySequence(review, QKeySequence.StandardKey.Copy)
    lines = board.text().splitlines()
    assert not board.mimeData().hasFormat(SELECTION_MIME)
    assert lines[0].split("\t")[:2] == ["Covariate", "Role"]
    assert lines[0].split("\t")[-1] == "In proposed set"
    assert lines[1].split("\t")[0] == "Income (income)"
    assert lines[1].split("\t")[-1] == "yes"  # the checkbox reads as a word
    assert len(lines) == 2
    count = len(w.project.diagram)
    w.actions_.paste.trigger()  # the table is read-only: nothing pasted on the diagram
    assert len(w.project.diagram) == count

    data = w.data_panel.table
    data.selectRow(w.data_panel.row_of("smoke"))
    _focus(qtbot, w, data)
    w.actions_.copy.trigger()
    rows = [line.split("\t") for line in board.text().splitlines()]
    assert rows[0] == ["Column", "Type", "Missing", "Node", "Ref."]
    assert rows[1][0] == "smoke"
    assert rows[1][-1] == "never"

    _focus(qtbot, w, w.view)
    qtbot.keySequence(w.view, QKeySequence.StandardKey.Copy)
    assert board.mimeData().hasFormat(SELECTION_MIME)
    assert board.text().splitlines() == ["Age"]


def test_canvas_menu_keeps_one_of_a_group(qtbot, window, demo, wait_for_analysis):
    """The node menu of a keep-one-of covariate offers the review table's
    choice; it is one undo step."""
    from covariscope.qt.canvas.menus import action_by_key
    from covariscope.vocabulary import group_key

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    key = group_key(["income", "area"])
    assert key not in w.project.analysis.keep_choices
    menu = w.scene.menu_at(w.scene.nodes["area"].scenePos())
    keep = action_by_key(menu, "keep")
    assert keep.text() == w.review.menu_for("area").findChild(type(keep), "keepThisOne").text()
    assert keep.isEnabled()
    with pytest.raises(KeyError):
        action_by_key(w.scene.menu_at(w.scene.nodes["age"].scenePos()), "keep")
    steps = w.undo_stack.count()
    keep.trigger()
    assert w.project.analysis.keep_choices[key] == "area"
    assert w.undo_stack.count() == steps + 1
    wait_for_analysis(qtbot, w)
    menu = w.scene.menu_at(w.scene.nodes["area"].scenePos())
    assert not action_by_key(menu, "keep").isEnabled()  # already the kept one
    action_by_key(menu, "keep:suggested").trigger()
    assert key not in w.project.analysis.keep_choices
    w.actions_.undo.trigger()
    assert w.project.analysis.keep_choices[key] == "area"


@pytest.mark.parametrize("size", [(1280, 800), (1600, 1000)])
def test_demo_fits_without_scroll_bars(qtbot, window, demo, wait_for_analysis, shots, size):
    """At common laptop sizes the fitted diagram needs no scroll bars and the
    data panel shows every column (screenshots for a person to look at)."""
    w = window
    w.resize(*size)
    w.show()
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    QApplication.processEvents()
    w.view.fit_to_window()
    QApplication.processEvents()
    assert w.view.horizontalScrollBar().maximum() <= 0
    assert w.view.verticalScrollBar().maximum() <= 0
    assert w.data_panel.table.horizontalScrollBar().maximum() <= 0
    w.grab().save(str(shots / f"p_main_{size[0]}.png"))


def test_progress_by_model_and_pass_is_shown_whole_beside_the_bar(qtbot, window):
    # The pipeline's words ("Fitting model m of N, pass k over the rows") are
    # too long for the bar: they sit in a label of their own, and go with it.
    text = "Fitting model 12 of 42, pass 2 over the rows"
    window.show_progress(text, 0.4)
    assert window.progress_label.isVisible()
    assert window.progress_label.text() == text
    assert window.progress.value() == 400
    assert text not in window.progress.format()
    assert window.progress_label.sizeHint().width() <= window.progress_label.width()
    window.hide_progress()
    assert not window.progress_label.isVisible()
    assert not window.progress.isVisible()
