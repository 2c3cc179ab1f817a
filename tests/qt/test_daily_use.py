"""The window as a daily tool: Redo keys, a detail line that follows edits,
saved files that keep their mode, an empty CSV cell for a missing number,
dialogs that start in the project's folder."""

from __future__ import annotations

import csv
import io
import os
import stat

import pytest
from PySide6.QtCore import QEvent, QObject, QPointF, Qt
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


class _Counter(QObject):
    """Counts paint, resize and layout events on the widgets it watches."""

    def __init__(self) -> None:
        super().__init__()
        self.counts: dict[str, int] = {}

    def eventFilter(self, watched, event):
        kinds = (QEvent.Type.Paint, QEvent.Type.Resize, QEvent.Type.LayoutRequest)
        if event.type() in kinds:
            name = event.type().name
            self.counts[name] = self.counts.get(name, 0) + 1
        return False


@pytest.mark.parametrize("size", [(1100, 700), (1000, 650), (1250, 720), (1366, 768), (1280, 720)])
def test_no_redraw_while_idle_after_an_edit(qtbot, demo, wait_for_analysis, fake_prompts, size):
    from covariscope.qt.main_window import MainWindow

    w = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(w)
    w.resize(*size)  # sized before it is shown, as a window opens on a small screen
    w.show()
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.review.set_checked("smoke", False)  # an ordinary edit
    wait_for_analysis(qtbot, w)
    qtbot.wait(200)  # let the edit's own repaint finish
    counter = _Counter()
    for widget in (w.view, w.view.viewport()):
        widget.installEventFilter(counter)
    qtbot.wait(2000)  # two idle seconds, counted (not timed)
    for widget in (w.view, w.view.viewport()):
        widget.removeEventFilter(counter)
    w.undo_stack.setClean()
    w.close()
    assert counter.counts.get("Resize", 0) <= 2, counter.counts
    assert counter.counts.get("Paint", 0) <= 5, counter.counts


def test_canvas_stays_put_while_drawing(qtbot, window, demo, wait_for_analysis):
    w = window
    w.resize(1366, 768)
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    QApplication.processEvents()
    age = w.scene.nodes["age"]
    before = w.view.mapFromScene(age.scenePos())
    seen = w.view.mapToScene(w.view.viewport().rect()).boundingRect()
    for where in (seen.topLeft() - QPointF(150, 150), seen.bottomRight() + QPointF(150, 150)):
        w.scene.add_node_at(where)
        QApplication.processEvents()
        assert w.view.mapFromScene(age.scenePos()) == before


class _ResizeGuard(QObject):
    """Counts the viewport's resize events; past ``limit`` it swallows them,
    which breaks a resize loop so that the test can report it."""

    def __init__(self, limit: int = 100) -> None:
        super().__init__()
        self.count = 0
        self.limit = limit

    def eventFilter(self, watched, event):
        if event.type() == QEvent.Type.Resize:
            self.count += 1
            return self.count > self.limit
        return False


def test_scroll_bars_and_scene_area_do_not_chase_each_other(qtbot, demo):
    """A fitted diagram made a little too wide for its view: the scroll bar
    that appears must not remeasure the area that makes it disappear again."""
    from PySide6.QtGui import QUndoStack

    from covariscope.model.project import load_project
    from covariscope.qt.canvas import DiagramScene, DiagramView

    project = load_project(demo / "demo_project.json")
    scene = DiagramScene(project, QUndoStack())
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(700, 382)
    view.show()
    view.fit_to_window()
    guard = _ResizeGuard()
    view.viewport().installEventFilter(guard)
    view.resize(600, 382)
    for _ in range(20):
        QApplication.processEvents()
    view.viewport().removeEventFilter(guard)
    assert guard.count <= 3


@pytest.mark.parametrize(
    ("family", "chosen"),
    [
        ("logistic", {"outcome": "low_lung"}),
        ("risk_ratio", {"outcome": "low_lung", "offset": None}),
        ("cox", {"time": "years_to_dx", "event": "dx"}),
    ],
)
def test_outcome_columns_chosen_in_the_window_and_saved(
    qtbot, window, demo, wait_for_analysis, family, chosen
):
    from covariscope.model.project import load_project

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.set_family(family)
    # clear what the demo file set, as a new study starts
    w.apply_outcome_columns(dict.fromkeys(chosen))
    wait_for_analysis(qtbot, w)
    if family != "risk_ratio":  # a log-link Poisson fit of a measured outcome still runs
        assert w.result.sample is None
    problems = [m for m in w.messages_bar.messages if m.severity == "problem"]
    assert problems
    assert problems[0].fix == "outcome_columns"
    assert w.messages_bar.headline.text() == problems[0].text
    assert w.messages_bar.fix_button.isVisible()
    assert "problem" in w.messages_bar.counts.text()

    dialog = w.outcome_columns_dialog()
    assert set(dialog.combos) == set(chosen)
    for key, column in chosen.items():
        dialog.choose(key, column)
    w.apply_outcome_columns(dialog.values())
    dialog.deleteLater()
    wait_for_analysis(qtbot, w)
    assert w.result.sample is not None
    assert not [m for m in w.messages_bar.messages if m.severity == "problem"]
    assert not w.messages_bar.fix_button.isVisible()
    assert w.io.save()
    saved = load_project(demo / "demo_project.json")
    assert saved.analysis.family_columns[family] == {k: v for k, v in chosen.items() if v}
    outcome = w.open_diagnostics("lungfn")
    assert outcome.state.column == (chosen.get("outcome") or chosen.get("event"))
    outcome.close()


def test_logistic_on_a_continuous_outcome_says_what_is_missing(
    qtbot, window, demo, wait_for_analysis
):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    w.set_family("logistic")
    w.apply_outcome_columns({"outcome": None})
    wait_for_analysis(qtbot, w)
    (problem,) = [m for m in w.messages_bar.messages if m.severity == "problem"]
    assert "lungfn is continuous" in problem.text
    assert "binary" in problem.text
    assert "Diagram only" in w.rows_label.text()
    # the caution that odds ratios are non-collapsible and the rows lost are visible
    w.apply_outcome_columns({"outcome": "low_lung"})
    wait_for_analysis(qtbot, w)
    cautions = [m.text for m in w.messages_bar.messages if m.severity == "caution"]
    assert any("rows used" in t or "dropped" in t for t in cautions)
    w.messages_bar.toggle.click()
    assert w.messages_bar.list.isVisible()
    assert w.messages_bar.list.count() == len(w.messages_bar.messages)


def test_window_fits_a_laptop_screen():
    from PySide6.QtCore import QSize

    from covariscope.qt.geometry import window_size

    for screen in (QSize(1366, 768 - 32), QSize(1280, 800 - 32), QSize(1920, 1080 - 32)):
        size = window_size(screen)
        assert size.width() <= screen.width()
        assert size.height() <= screen.height()
    assert window_size(QSize(1920, 1048)) == QSize(1400, 900)


def test_window_opens_within_the_screen_and_remembers_its_layout(qtbot, fake_prompts):
    from covariscope.qt.main_window import MainWindow

    w = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(w)
    available = w.screen().availableGeometry()
    assert w.width() <= available.width()
    assert w.height() <= available.height()
    w.show()
    w.resize(w.width() - 40, w.height() - 30)
    wanted = w.size()
    w.docks["paths"].hide()
    w.close()
    again = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(again)
    again.show()
    try:
        assert again.size() == wanted
        assert not again.docks["paths"].isVisible()
    finally:
        again.close()
        # Qt keeps one settings file per process: later tests start afresh
        from PySide6.QtCore import QSettings

        QSettings().remove("window")


def test_zoom_from_the_menu_and_the_keyboard(qtbot, window, demo, wait_for_analysis):
    from covariscope.qt.canvas.drawing import TAG_PX
    from covariscope.qt.canvas.view import READABLE_ZOOM

    w = window
    w.resize(1366, 768)
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    QApplication.processEvents()
    # the default zoom keeps the small words readable (about 8 px or more)
    assert w.view.zoom() >= READABLE_ZOOM - 1e-9
    assert TAG_PX * w.view.zoom() >= 8
    menu = [a.text() for a in w.actions_.view_menu.actions()]
    assert {"Zoom &in", "Zoom &out", "&Actual size"} <= set(menu)
    start = w.view.zoom()
    w.actions_.zoom_in.trigger()
    assert w.view.zoom() > start
    w.activateWindow()
    qtbot.waitUntil(lambda: QApplication.activeWindow() is w)
    w.view.setFocus()
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_Minus, Qt.KeyboardModifier.ControlModifier)
    assert abs(w.view.zoom() - start) < 1e-9
    QTest.keyClick(w.view.viewport(), Qt.Key.Key_1, Qt.KeyboardModifier.ControlModifier)
    assert abs(w.view.zoom() - 1.0) < 1e-9


def test_review_table_shows_most_rows_at_1366x768(
    qtbot, demo, wait_for_analysis, fake_prompts, shots
):
    from covariscope.qt.main_window import MainWindow

    w = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(w)
    w.resize(1366, 768)
    w.show()
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    QApplication.processEvents()
    table = w.review.table
    shown = sum(
        1
        for r in range(table.rowCount())
        if table.visualRect(table.model().index(r, 0)).bottom() <= table.viewport().height()
    )
    w.grab().save(str(shots / "window_1366x768.png"))
    w.undo_stack.setClean()
    w.close()
    assert shown >= 9, shown


def _rows_shown(table) -> int:
    return sum(
        1
        for r in range(table.rowCount())
        if table.visualRect(table.model().index(r, 0)).bottom() <= table.viewport().height()
    )


def _settle_layout(qtbot):
    for _ in range(5):  # the docks take their share after the resize, in turns of the loop
        QApplication.processEvents()
        qtbot.wait(10)


@pytest.mark.parametrize("opening", ["large", "maximised"])
def test_review_table_keeps_its_share_when_the_window_is_resized(
    qtbot, demo, wait_for_analysis, fake_prompts, shots, opening
):
    from covariscope.qt.main_window import REVIEW_SHARE, MainWindow

    w = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(w)
    if opening == "large":
        w.resize(1920, 1080)
        w.show()
    else:
        w.showMaximized()
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    _settle_layout(qtbot)
    if opening == "maximised":
        w.showNormal()
        _settle_layout(qtbot)
    w.resize(1366, 768)
    _settle_layout(qtbot)
    review = w.docks["review"]
    share = review.height() / w.height()
    w.grab().save(str(shots / f"window_{opening}_then_1366x768.png"))
    try:
        assert _rows_shown(w.review.table) >= 9
        assert abs(share - REVIEW_SHARE) < 0.03, share
        assert w.view.height() >= 200  # and the diagram keeps a workable height
        # a separator the user drags sets the share that later resizes keep
        w.resizeDocks([review], [round(0.3 * w.height())], Qt.Orientation.Vertical)
        _settle_layout(qtbot)
        QTest.mouseRelease(w, Qt.MouseButton.LeftButton, pos=w.rect().center())
        _settle_layout(qtbot)
        w.resize(1600, 1000)
        _settle_layout(qtbot)
        assert abs(review.height() / w.height() - 0.3) < 0.03
    finally:
        w.undo_stack.setClean()
        w.close()
