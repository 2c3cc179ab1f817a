"""The canvas scene follows the model, and every edit is one undo step."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from PySide6.QtCore import QMimeData, QPointF, Qt
from PySide6.QtGui import QUndoStack

from covariscope.model.diagram import Node
from covariscope.model.layout import layered_layout
from covariscope.model.project import Project, project_to_dict
from covariscope.qt.canvas import COLUMN_MIME, DiagramScene, DiagramView, Pointer
from covariscope.qt.canvas.menus import action_by_key
from covariscope.qt.canvas.scene import column_from_mime

# -- a small invented diagram (no real study data) ------------------------------------------


def small_project() -> Project:
    project = Project()
    d = project.diagram
    for node in [
        Node("activity", "Physical activity", kind="exposure", column="activity"),
        Node("bp", "Blood pressure", kind="outcome", column="bp"),
        Node("age", "Age", column="age"),
        Node("bmi", "BMI", column="bmi"),
        Node("waist", "Waist"),
        Node("diet", "Diet quality", measured=False),
        Node("salt", "Salt intake", column="salt"),
        Node("statin", "Statin use", column="statin"),
    ]:
        d.add_node(node)
    for a, b in [
        ("age", "activity"),
        ("age", "bp"),
        ("activity", "bmi"),
        ("bmi", "bp"),
        ("diet", "activity"),
        ("diet", "bp"),
        ("salt", "bp"),
        ("activity", "statin"),
        ("bp", "statin"),
    ]:
        d.add_arrow(a, b)
    d.add_proxy("bmi", "waist")
    project.set_proposed(["age", "bmi"])
    for node_id, (x, y) in layered_layout(d, origin=(0.0, 0.0)).items():
        d.update_node(node_id, x=x, y=y)
    return project


ROLES = {
    "age": "confounder",
    "bmi": "mediator",
    "waist": "mediator",
    "diet": "confounder",
    "salt": "precision",
    "statin": "collider",
}
VERDICTS = {
    "age": ("adjust", "adjust"),
    "bmi": ("exclude_pathway", "exclude — on the pathway"),
    "salt": ("optional", "optional — precision"),
    "statin": ("exclude_collider", "exclude — collider"),
}


@pytest.fixture
def canvas(qapp):
    project = small_project()
    stack = QUndoStack()
    scene = DiagramScene(project, stack)
    yield project, stack, scene
    scene.detach()
    stack.clear()
    scene.clear()


def in_sync(project: Project, scene: DiagramScene) -> None:
    d = project.diagram
    assert set(scene.nodes) == set(d.node_ids)
    assert set(scene.arrows) == set(d.arrows)
    assert set(scene.proxies) == set(d.proxies)
    for node in d.nodes:
        item = scene.nodes[node.id]
        assert item.node == node
        assert (item.pos().x(), item.pos().y()) == (node.x, node.y)
        assert item.proposed == (node.id in project.proposed)


def centre(scene: DiagramScene, node_id: str) -> QPointF:
    return scene.nodes[node_id].pos()


# -- projection ------------------------------------------------------------------------------


def test_scene_starts_in_sync(canvas):
    project, _, scene = canvas
    in_sync(project, scene)


def test_arrow_refused_for_a_cycle_names_it_and_changes_nothing(canvas, qtbot):
    project, stack, scene = canvas
    before = project_to_dict(project)
    with qtbot.waitSignal(scene.message) as blocker:
        assert not scene.connect_nodes("bp", "age")
    text = blocker.args[0]
    assert "would close the cycle bp → age →" in text
    assert "cycle" in text
    assert project_to_dict(project) == before
    assert stack.count() == 0
    in_sync(project, scene)


@pytest.mark.parametrize(
    ("source", "target", "words"),
    [("age", "age", "itself"), ("age", "bp", "already")],
)
def test_self_loop_and_duplicate_are_refused(canvas, qtbot, source, target, words):
    _project, stack, scene = canvas
    with qtbot.waitSignal(scene.message) as blocker:
        scene.connect_nodes(source, target)
    assert words in blocker.args[0]
    assert stack.count() == 0


# -- undo round trips: every edit kind ---------------------------------------------------------


def _select(scene, ids=(), arrows=(), proxies=()):
    scene.clearSelection()
    for i in ids:
        scene.nodes[i].setSelected(True)
    for p in arrows:
        scene.arrows[p].setSelected(True)
    for p in proxies:
        scene.proxies[p].setSelected(True)


def _add(scene):
    scene.add_node_at(QPointF(300, 300), label="Sleep")


def _add_exposure(scene):
    scene.add_node_at(QPointF(300, 300), kind="exposure", label="Shift work")


def _remove(scene):
    _select(scene, ["bmi"])
    scene.delete_selection()


def _remove_many(scene):
    _select(scene, ["age", "salt"], arrows=[("diet", "bp")], proxies=[("bmi", "waist")])
    scene.delete_selection()


def _move(scene):
    for node_id, shift in (("age", 40), ("diet", -25)):
        item = scene.nodes[node_id]
        item.setPos(item.pos() + QPointF(shift, 10))
    scene.commit_moves()


def _rename(scene):
    editor = scene.start_rename("salt")
    editor.setPlainText("Sodium intake")
    editor.finish(True)


def menu_action(scene, pos, key):
    menu = scene.menu_at(pos)
    scene._kept_menu = menu  # the menu owns its actions: keep it while triggering
    return action_by_key(menu, key)


def _kind(scene):
    menu_action(scene, centre(scene, "bmi"), "kind:outcome").trigger()


def _measured(scene):
    menu_action(scene, centre(scene, "salt"), "measured").trigger()


def _proposed(scene):
    menu_action(scene, centre(scene, "salt"), "proposed").trigger()


def _unpropose(scene):
    menu_action(scene, centre(scene, "bmi"), "proposed").trigger()


def _add_arrow(scene):
    assert scene.connect_nodes("salt", "statin")


def _remove_arrow(scene):
    _select(scene, arrows=[("salt", "bp")])
    scene.delete_selection()


def _reverse(scene):
    _select(scene, arrows=[("salt", "bp")])
    scene.reverse_selected_arrows()
    assert scene.selected_arrows() == [("bp", "salt")]


def _add_proxy(scene):
    assert scene.connect_nodes("age", "salt", "proxy")


def _remove_proxy(scene):
    link = scene.proxies[("bmi", "waist")]
    menu_action(scene, (link.p1 + link.p2) / 2, "unlink").trigger()


def _paste(scene):
    _select(scene, ["activity", "bmi", "waist", "bp"])
    clip = scene.copy_selection()
    assert scene.paste(clip)


def _layout(scene):
    scene.auto_layout()


EDITS = [
    _add,
    _add_exposure,
    _remove,
    _remove_many,
    _move,
    _rename,
    _kind,
    _measured,
    _proposed,
    _unpropose,
    _add_arrow,
    _remove_arrow,
    _reverse,
    _add_proxy,
    _remove_proxy,
    _paste,
    _layout,
]


@pytest.mark.parametrize("edit", EDITS, ids=[e.__name__.strip("_") for e in EDITS])
def test_undo_then_redo_returns_the_saved_form(canvas, edit):
    """Undo round trips compare the saved form before and after (STYLE.md)."""
    project, stack, scene = canvas
    if edit is _layout:
        project.diagram.update_node("age", x=900.0, y=-300.0)  # out of place first
    before = project_to_dict(project)
    edit(scene)
    assert stack.count() == 1, "one edit is one undo step"
    after = project_to_dict(project)
    assert after != before
    in_sync(project, scene)
    stack.undo()
    assert project_to_dict(project) == before
    in_sync(project, scene)
    stack.redo()
    assert project_to_dict(project) == after
    in_sync(project, scene)


def test_proposed_toggle_emits_and_boxes(canvas, qtbot):
    _project, _, scene = canvas
    with qtbot.waitSignal(scene.proposed_toggled) as blocker:
        _proposed(scene)
    assert blocker.args == ["salt", True]
    assert scene.nodes["salt"].proposed
    assert scene.nodes["salt"].geometry.frame is not None
    assert scene.nodes["age"].geometry.frame is not None
    assert scene.nodes["diet"].geometry.frame is None


def test_kind_menu_refuses_proposed_for_exposure(canvas):
    _, _, scene = canvas
    menu = scene.menu_at(centre(scene, "activity"))
    assert menu is not None
    assert not action_by_key(menu, "proposed").isEnabled()
    assert action_by_key(menu, "kind:exposure").isChecked()


def test_rename_escape_cancels(canvas):
    project, stack, scene = canvas
    editor = scene.start_rename("age")
    editor.setPlainText("Something else")
    editor.finish(False)
    assert project.diagram.node("age").label == "Age"
    assert stack.count() == 0
    assert scene.label_editor is None


# -- mouse modes driven by fake pointers --------------------------------------------------------


def _drag(mode, start: QPointF, end: QPointF, modifiers=Qt.KeyboardModifier.NoModifier):
    assert mode.press(Pointer(start, modifiers=modifiers))
    mid = (start + end) / 2
    mode.move(Pointer(mid, modifiers=modifiers))
    mode.move(Pointer(end, modifiers=modifiers))
    assert mode.release(Pointer(end, modifiers=modifiers))


def test_arrow_mode_draws_an_arrow(canvas):
    project, stack, scene = canvas
    scene.set_mode("arrow")
    _drag(scene.mode, centre(scene, "salt"), centre(scene, "statin"))
    assert project.diagram.has_arrow("salt", "statin")
    assert ("salt", "statin") in scene.arrows
    assert stack.count() == 1
    assert scene.mode.gesture.line is None  # the rubber line is gone


def test_shift_drag_in_select_mode_draws_an_arrow(canvas):
    project, _, scene = canvas
    _drag(
        scene.mode, centre(scene, "waist"), centre(scene, "bp"), Qt.KeyboardModifier.ShiftModifier
    )
    assert project.diagram.has_arrow("waist", "bp")


def test_proxy_mode_links_measures(canvas):
    project, _, scene = canvas
    scene.set_mode("proxy")
    _drag(scene.mode, centre(scene, "age"), centre(scene, "salt"))
    assert project.diagram.has_proxy("age", "salt")
    assert ("age", "salt") in scene.proxies


def test_arrow_mode_cycle_is_refused_with_message(canvas, qtbot):
    project, stack, scene = canvas
    scene.set_mode("arrow")
    with qtbot.waitSignal(scene.message) as blocker:
        _drag(scene.mode, centre(scene, "statin"), centre(scene, "age"))
    assert "statin → age" in blocker.args[0]
    assert not project.diagram.has_arrow("statin", "age")
    assert stack.count() == 0


def test_arrow_mode_drop_on_empty_canvas_does_nothing(canvas):
    _project, stack, scene = canvas
    scene.set_mode("arrow")
    _drag(scene.mode, centre(scene, "salt"), QPointF(1500, 1200))
    assert stack.count() == 0


def test_menu_armed_proxy_link_completes_on_next_click(canvas):
    project, _, scene = canvas
    menu_action(scene, centre(scene, "age"), "proxy").trigger()
    assert scene.mode.name == "proxy"
    scene.mode.press(Pointer(centre(scene, "diet")))
    assert project.diagram.has_proxy("age", "diet")
    assert scene.mode.name == "select"


def test_arrow_drawn_with_real_mouse_events_on_the_view(canvas, qtbot):
    from PySide6.QtCore import QEvent
    from PySide6.QtGui import QMouseEvent
    from PySide6.QtWidgets import QApplication

    project, _, scene = canvas
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(900, 600)
    view.show()
    view.fit_to_window()
    scene.set_mode("arrow")
    a = view.mapFromScene(centre(scene, "salt"))
    b = view.mapFromScene(centre(scene, "statin"))
    vp = view.viewport()
    left = Qt.MouseButton.LeftButton
    for kind, at, buttons in (
        (QEvent.Type.MouseButtonPress, a, left),
        (QEvent.Type.MouseMove, (a + b) / 2, left),
        (QEvent.Type.MouseMove, b, left),
        (QEvent.Type.MouseButtonRelease, b, Qt.MouseButton.NoButton),
    ):
        event = QMouseEvent(
            kind,
            QPointF(at),
            QPointF(vp.mapToGlobal(at)),
            left,
            buttons,
            Qt.KeyboardModifier.NoModifier,
        )
        QApplication.sendEvent(vp, event)
    assert project.diagram.has_arrow("salt", "statin")
    view.close()


def test_drag_of_a_multi_selection_is_one_move(canvas, qtbot):
    from PySide6.QtCore import QPoint
    from PySide6.QtTest import QTest

    project, stack, scene = canvas
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(900, 600)
    view.show()
    view.fit_to_window()
    _select(scene, ["age", "salt"])
    start = view.mapFromScene(centre(scene, "age"))
    QTest.mousePress(
        view.viewport(), Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, start
    )
    for step in range(1, 4):
        QTest.mouseMove(view.viewport(), start + QPoint(15 * step, 10 * step))
    QTest.mouseRelease(
        view.viewport(),
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.NoModifier,
        start + QPoint(45, 30),
    )
    assert stack.count() == 1
    assert set(stack.command(0).command.moves) == {"age", "salt"}
    in_sync(project, scene)
    view.close()


# -- keyboard, drop, overlays ---------------------------------------------------------------------


def test_keyboard_delete_and_rename(canvas, qtbot):
    from PySide6.QtTest import QTest

    project, stack, scene = canvas
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.show()
    _select(scene, ["salt"])
    QTest.keyClick(view, Qt.Key.Key_F2)
    assert scene.label_editor is not None
    scene.label_editor.setPlainText("Sodium")
    QTest.keyClick(view, Qt.Key.Key_Return)
    assert project.diagram.node("salt").label == "Sodium"
    _select(scene, ["salt"])
    QTest.keyClick(view, Qt.Key.Key_Delete)
    assert "salt" not in project.diagram
    assert stack.count() == 2
    view.close()


def test_dropping_a_column_adds_a_bound_node(canvas):
    project, stack, scene = canvas
    mime = QMimeData()
    mime.setData(COLUMN_MIME, b"sleep hours")
    assert column_from_mime(mime) == "sleep hours"
    assert column_from_mime(QMimeData()) is None
    scene.drop_column(column_from_mime(mime), QPointF(120, 340))
    node = project.diagram.node("sleep_hours")
    assert (node.column, node.label, node.x, node.y) == ("sleep hours", "sleep hours", 120.0, 340.0)
    assert stack.count() == 1


def _drag_onto(view, mime: QMimeData, scene_pos: QPointF) -> tuple[bool, bool]:
    """Drag ``mime`` onto the view at ``scene_pos`` and drop it, as Qt's drag
    machinery does (enter, move, drop on the viewport); the view hands the
    scene a QGraphicsSceneDragDropEvent.  Returns (move accepted, drop accepted)."""
    from PySide6.QtGui import QDragEnterEvent, QDragMoveEvent, QDropEvent
    from PySide6.QtWidgets import QApplication

    point = view.mapFromScene(scene_pos)
    copy, left, none = (
        Qt.DropAction.CopyAction,
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.NoModifier,
    )
    viewport = view.viewport()
    QApplication.sendEvent(viewport, QDragEnterEvent(point, copy, mime, left, none))
    move = QDragMoveEvent(point, copy, mime, left, none)
    QApplication.sendEvent(viewport, move)
    drop = QDropEvent(QPointF(point), copy, mime, left, none)
    QApplication.sendEvent(viewport, drop)
    return move.isAccepted(), drop.isAccepted()


def test_scene_takes_a_column_drop_event_and_ignores_other_drags(canvas):
    project, stack, scene = canvas
    view = DiagramView(scene)
    view.resize(600, 400)
    view.centerOn(QPointF(300, 300))
    mime = QMimeData()
    mime.setData(COLUMN_MIME, b"bmi")
    where = view.mapToScene(view.mapFromScene(QPointF(300, 300)))
    assert _drag_onto(view, mime, QPointF(300, 300)) == (True, True)
    added = [n for n in project.diagram.nodes if n.id not in small_project().diagram.node_ids]
    assert [(n.column, n.x, n.y) for n in added] == [("bmi", where.x(), where.y())]
    # one column binds one node: the old holder let go, in the same undo step
    assert project.diagram.node("bmi").column is None
    assert stack.count() == 1
    stack.undo()
    assert project.diagram.node("bmi").column == "bmi"
    assert len(project.diagram) == len(small_project().diagram)

    text_only = QMimeData()
    text_only.setText("not a column")
    assert _drag_onto(view, text_only, QPointF(300, 300)) == (False, False)
    assert stack.count() == 1
    assert stack.index() == 0
    view.close()


def test_proxy_link_beside_an_arrow_is_drawn_apart(canvas):
    _project, stack, scene = canvas
    assert scene.proxies[("bmi", "waist")].shift == 0.0
    assert scene.connect_nodes("bmi", "waist")  # now an arrow joins the same pair
    proxy, arrow = scene.proxies[("bmi", "waist")], scene.arrows[("bmi", "waist")]
    assert proxy.shift > 0
    gap = QPointF(proxy.p1 - arrow.p1)
    assert (gap.x() ** 2 + gap.y() ** 2) ** 0.5 > 5.0
    stack.undo()
    assert scene.proxies[("bmi", "waist")].shift == 0.0


def test_annotations_show_and_clear(canvas):
    _, _, scene = canvas
    scene.set_annotations(ROLES, VERDICTS)
    assert scene.nodes["age"].look().tag == "confounder"
    assert scene.nodes["age"].geometry.badge is not None
    assert scene.nodes["activity"].look().role is None  # the exposure keeps its kind tag
    scene.set_annotations({}, {})
    assert scene.nodes["age"].look().tag == "covariate"
    assert scene.nodes["age"].geometry.badge is None


def test_tags_say_kind_and_missing_data(canvas):
    _, _, scene = canvas
    assert scene.nodes["activity"].look().tag == "EXPOSURE"
    assert scene.nodes["bp"].look().tag == "OUTCOME"
    assert scene.nodes["diet"].look().tag == "covariate · no data"
    assert scene.nodes["waist"].look().tag == "covariate · no column"


def test_highlight_path_lights_nodes_and_arrows(canvas):
    _, _, scene = canvas
    scene.highlight_path(["activity", "bmi|waist", "bp"])
    assert scene.nodes["waist"].highlighted
    assert scene.nodes["activity"].highlighted
    assert scene.arrows[("activity", "bmi")].highlighted
    assert scene.arrows[("bmi", "bp")].highlighted
    assert scene.proxies[("bmi", "waist")].highlighted
    assert not scene.arrows[("age", "bp")].highlighted
    scene.highlight_path(None)
    assert not any(i.highlighted for i in scene.nodes.values())
    assert not any(i.highlighted for i in scene.arrows.values())


def test_double_click_reports_the_node(canvas, qtbot):
    from PySide6.QtTest import QTest

    _, _, scene = canvas
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(900, 600)
    view.show()
    view.fit_to_window()
    at = view.mapFromScene(centre(scene, "bmi"))
    with qtbot.waitSignal(scene.node_double_clicked) as blocker:
        QTest.mouseDClick(
            view.viewport(), Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, at
        )
    assert blocker.args == ["bmi"]
    view.close()


def test_zoom_and_fit(canvas, qtbot):
    _, _, scene = canvas
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(500, 400)
    view.show()
    view.fit_to_window()
    fitted = view.zoom()
    view.zoom_in()
    assert view.zoom() > fitted
    view.zoom_out()
    view.zoom_out()
    assert view.zoom() < fitted
    view.close()


def test_canvas_screenshot(canvas, qtbot, tmp_path):
    """Written for a person to look at (not a golden image)."""
    _project, _, scene = canvas
    scene.auto_layout()
    scene.set_annotations(ROLES, VERDICTS)
    scene.highlight_path(["activity", "diet", "bp"])
    view = DiagramView(scene)
    qtbot.addWidget(view)
    view.resize(1100, 560)
    view.show()
    view.fit_to_window()
    shot = tmp_path / "canvas.png"
    assert view.grab().save(str(shot))
    assert shot.stat().st_size > 10_000
    shots = Path("/tmp/shots")
    if shots.is_dir():
        shutil.copy(shot, shots / "canvas.png")
    view.close()
